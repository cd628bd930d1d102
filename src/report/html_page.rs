//! The frame of `report.html`: escaping, tables, figures, the style sheet and
//! the page around the sections. The page is one file: inline CSS and SVG,
//! no scripts, no fonts or images fetched, so it opens offline.

/// Escapes text for HTML element content and quoted attribute values.
pub fn escape(text: &str) -> String {
    let mut out = String::with_capacity(text.len());
    for c in text.chars() {
        match c {
            '&' => out.push_str("&amp;"),
            '<' => out.push_str("&lt;"),
            '>' => out.push_str("&gt;"),
            '"' => out.push_str("&quot;"),
            '\'' => out.push_str("&#39;"),
            c => out.push(c),
        }
    }
    out
}

/// A number with four decimals, or a dash.
pub fn score(value: Option<f64>) -> String {
    value.map_or("–".to_string(), |v| format!("{v:.4}"))
}

/// Any displayable value, or a dash.
pub fn or_dash<T: std::fmt::Display>(value: Option<T>) -> String {
    value.map_or("–".to_string(), |v| v.to_string())
}

/// Seconds in a readable unit.
pub fn duration(seconds: f64) -> String {
    if seconds < 120.0 {
        format!("{seconds:.1} s")
    } else if seconds < 7200.0 {
        format!("{:.1} min", seconds / 60.0)
    } else {
        format!("{:.2} h", seconds / 3600.0)
    }
}

/// True for cells that read as numbers (right-aligned): digits with signs,
/// separators and an optional time unit, but no other letters (so genome ids
/// stay left-aligned).
fn numeric(text: &str) -> bool {
    let body = [" min", " s", " h"]
        .iter()
        .find_map(|unit| text.strip_suffix(unit))
        .unwrap_or(text);
    let allowed = |c: char| c.is_ascii_digit() || " .,-−–±#[]/>%+×".contains(c);
    body.chars().any(|c| c.is_ascii_digit()) && body.chars().all(allowed)
        || text == "–"
        || text == "never"
}

/// Escaped text with each pair of backticks turned into `<code>` (an
/// unpaired backtick stays as it is).
pub fn escape_with_code(text: &str) -> String {
    let parts: Vec<&str> = text.split('`').collect();
    // Paired backticks split the text into an odd number of parts.
    if parts.len().is_multiple_of(2) {
        return escape(text);
    }
    parts
        .iter()
        .enumerate()
        .map(|(position, part)| {
            if position % 2 == 1 {
                format!("<code>{}</code>", escape(part))
            } else {
                escape(part)
            }
        })
        .collect()
}

/// A table of plain-text cells (escaped here); number-like cells are right-aligned.
pub fn table<S: AsRef<str>>(head: &[&str], rows: &[Vec<S>]) -> String {
    let mut out = String::from("<div class=\"scroll\"><table>\n<thead><tr>");
    for name in head {
        out.push_str(&format!("<th>{}</th>", escape(name)));
    }
    out.push_str("</tr></thead>\n<tbody>\n");
    for row in rows {
        out.push_str("<tr>");
        for cell in row {
            let text = cell.as_ref();
            let class = if numeric(text) { " class=\"num\"" } else { "" };
            out.push_str(&format!("<td{class}>{}</td>", escape(text)));
        }
        out.push_str("</tr>\n");
    }
    out.push_str("</tbody></table></div>\n");
    out
}

/// A list of name–value pairs (plain text, escaped here).
pub fn facts<S: AsRef<str>>(pairs: &[(&str, S)]) -> String {
    let mut out = String::from("<dl class=\"facts\">\n");
    for (name, value) in pairs {
        out.push_str(&format!(
            "<dt>{}</dt><dd>{}</dd>\n",
            escape(name),
            escape(value.as_ref())
        ));
    }
    out.push_str("</dl>\n");
    out
}

/// A paragraph of plain text (escaped here; `backticked` parts shown as
/// code), with an optional class.
pub fn paragraph(text: &str, class: Option<&str>) -> String {
    match class {
        Some(class) => format!("<p class=\"{class}\">{}</p>\n", escape_with_code(text)),
        None => format!("<p>{}</p>\n", escape_with_code(text)),
    }
}

/// JSON laid out one object member per line, with lists of plain values
/// kept on one line, in a preformatted block.
pub fn json_block(value: &serde_json::Value) -> String {
    let mut text = String::new();
    layout_json(value, 0, &mut text);
    format!("<pre class=\"code\">{}</pre>\n", escape(&text))
}

fn layout_json(value: &serde_json::Value, depth: usize, out: &mut String) {
    use serde_json::Value;
    let indent = |level: usize| "  ".repeat(level);
    match value {
        Value::Object(map) if !map.is_empty() => {
            out.push_str("{\n");
            for (position, (key, member)) in map.iter().enumerate() {
                out.push_str(&format!(
                    "{}{}: ",
                    indent(depth + 1),
                    Value::from(key.as_str())
                ));
                layout_json(member, depth + 1, out);
                out.push_str(if position + 1 < map.len() {
                    ",\n"
                } else {
                    "\n"
                });
            }
            out.push_str(&format!("{}}}", indent(depth)));
        }
        Value::Array(items) if items.iter().any(|i| i.is_object() || i.is_array()) => {
            out.push_str("[\n");
            for (position, item) in items.iter().enumerate() {
                out.push_str(&indent(depth + 1));
                layout_json(item, depth + 1, out);
                out.push_str(if position + 1 < items.len() {
                    ",\n"
                } else {
                    "\n"
                });
            }
            out.push_str(&format!("{}]", indent(depth)));
        }
        Value::Array(items) => {
            let inner: Vec<String> = items.iter().map(Value::to_string).collect();
            out.push_str(&format!("[{}]", inner.join(", ")));
        }
        other => out.push_str(&other.to_string()),
    }
}

/// An SVG document ready to sit inside HTML: anything before `<svg` (an XML
/// declaration) is dropped.
pub fn inline_svg(svg: &str) -> &str {
    svg.find("<svg").map_or(svg, |start| &svg[start..])
}

/// A figure: an SVG drawn by gemmule with a caption (plain text, escaped here).
pub fn figure(svg: &str, caption: &str, class: &str) -> String {
    format!(
        "<figure class=\"{class}\">\n{}\n<figcaption>{}</figcaption>\n</figure>\n",
        inline_svg(svg).trim_end(),
        escape(caption)
    )
}

/// A section with an anchor id, a heading and its HTML body.
pub fn section(id: &str, heading: &str, body: &str) -> String {
    format!(
        "<section id=\"{id}\">\n<h2>{}</h2>\n{body}</section>\n",
        escape(heading)
    )
}

/// The parts of the page around the sections.
pub struct PageFrame<'a> {
    /// Document title and main heading.
    pub title: &'a str,
    /// The line above the heading (what kind of report).
    pub kicker: &'a str,
    /// One sentence under the heading.
    pub lede: &'a str,
    /// `(anchor, label)` of each section, for the contents list.
    pub contents: &'a [(&'a str, &'a str)],
    /// The sections' HTML.
    pub body: &'a str,
    /// The closing note (plain text).
    pub footer: &'a str,
}

/// The whole HTML document.
pub fn page(frame: &PageFrame<'_>) -> String {
    let mut nav = String::from("<nav aria-label=\"Sections\"><ol>");
    for (anchor, label) in frame.contents {
        nav.push_str(&format!(
            "<li><a href=\"#{anchor}\">{}</a></li>",
            escape(label)
        ));
    }
    nav.push_str("</ol></nav>\n");
    format!(
        "<!DOCTYPE html>\n<html lang=\"en\">\n<head>\n<meta charset=\"utf-8\">\n\
         <meta name=\"viewport\" content=\"width=device-width, initial-scale=1\">\n\
         <title>{title}</title>\n<style>\n{STYLE}</style>\n</head>\n<body>\n\
         <header class=\"masthead\">\n<p class=\"kicker\">{kicker}</p>\n<h1>{title}</h1>\n\
         <p class=\"lede\">{lede}</p>\n{nav}</header>\n<main>\n{body}</main>\n\
         <footer>{footer}</footer>\n</body>\n</html>\n",
        title = escape(frame.title),
        kicker = escape(frame.kicker),
        lede = escape(frame.lede),
        body = frame.body,
        footer = escape(frame.footer),
    )
}

/// The style sheet: readable on screen and in print, no external fonts.
const STYLE: &str = r#":root { --ink: #1f2430; --muted: #5b6372; --line: #dfe3ea; --tint: #f4f6f9; --accent: #0b6e6e; --warn: #8a4b00; }
* { box-sizing: border-box; }
body { margin: 0; color: var(--ink); background: #fbfcfd; font: 15px/1.55 system-ui, -apple-system, "Segoe UI", Roboto, "Helvetica Neue", Arial, sans-serif; }
.masthead { background: #13343b; color: #f3f7f7; padding: 28px max(24px, calc((100% - 1000px) / 2)) 18px; }
.masthead h1 { margin: 0 0 6px; font-size: 26px; font-weight: 650; word-break: break-all; }
.kicker { margin: 0; text-transform: uppercase; letter-spacing: .08em; font-size: 12px; color: #9fc7c4; }
.lede { margin: 0 0 14px; color: #d6e4e3; }
nav ol { list-style: none; display: flex; flex-wrap: wrap; gap: 6px 18px; margin: 0; padding: 0; font-size: 14px; }
nav a { color: #bfe3df; text-decoration: none; border-bottom: 1px solid transparent; }
nav a:hover { border-bottom-color: #bfe3df; }
main { max-width: 1000px; margin: 0 auto; padding: 8px 24px 40px; }
section { margin-top: 30px; padding-top: 4px; border-top: 1px solid var(--line); }
h2 { font-size: 20px; margin: 14px 0 10px; color: #13343b; }
h3 { font-size: 16px; margin: 20px 0 8px; }
p { margin: 8px 0; max-width: 78ch; }
.note { color: var(--muted); font-size: 14px; }
.warning { color: var(--warn); background: #fff6ea; border-left: 3px solid #e3a14a; padding: 6px 10px; }
.reading { background: var(--tint); border-left: 3px solid var(--accent); padding: 8px 12px; }
.scroll { overflow-x: auto; }
table { border-collapse: collapse; margin: 8px 0 12px; font-size: 14px; }
td { white-space: nowrap; }
th, td { padding: 5px 9px; border-bottom: 1px solid var(--line); text-align: left; vertical-align: top; }
th { background: var(--tint); font-weight: 600; vertical-align: bottom; }
td.num { text-align: right; font-variant-numeric: tabular-nums; white-space: nowrap; }
tbody tr:hover { background: #f0f5f5; }
dl.facts { display: grid; grid-template-columns: minmax(150px, max-content) 1fr; gap: 4px 18px; margin: 8px 0 12px; }
dl.facts dt { color: var(--muted); }
dl.facts dd { margin: 0; word-break: break-word; }
figure { margin: 14px 0 22px; }
figure svg { display: block; max-width: 100%; height: auto; border: 1px solid var(--line); background: #fff; }
figure.graph svg { border: none; }
figcaption { color: var(--muted); font-size: 14px; margin-top: 6px; max-width: 78ch; }
code { font: 13px/1.4 ui-monospace, "DejaVu Sans Mono", Menlo, Consolas, monospace; background: var(--tint); padding: 1px 4px; border-radius: 3px; }
pre.code { background: var(--tint); border: 1px solid var(--line); padding: 10px 12px; overflow-x: auto; font-size: 13px; line-height: 1.4; max-height: 420px; }
footer { max-width: 1000px; margin: 0 auto; padding: 18px 24px 36px; color: var(--muted); font-size: 13px; border-top: 1px solid var(--line); }
@media print { .masthead { background: none; color: var(--ink); } .masthead h1, .kicker, .lede, nav a { color: var(--ink); } pre.code { max-height: none; } }
"#;

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn text_is_escaped_everywhere() {
        assert_eq!(
            escape("<a href='x'>&\""),
            "&lt;a href=&#39;x&#39;&gt;&amp;&quot;"
        );
        let html = table(&["<h>"], &[vec!["<b>1</b>"]]);
        assert!(html.contains("&lt;h&gt;") && !html.contains("<b>"));
        assert_eq!(inline_svg("<?xml version=\"1.0\"?>\n<svg/>"), "<svg/>");
        assert_eq!(escape_with_code("run `a<b`"), "run <code>a&lt;b</code>");
        assert_eq!(escape_with_code("odd ` tick"), "odd ` tick");
        assert!(numeric("0.8333") && numeric("#3") && numeric("1.5 min") && numeric("2/3"));
        assert!(!numeric("29dbab74c039") && !numeric("sampled"));
        let block = json_block(&serde_json::json!({"a": [1, 2], "b": {"c": [{"d": null}]}}));
        assert!(block.contains("&quot;a&quot;: [1, 2],\n"), "{block}");
        assert!(
            block.contains("      {\n        &quot;d&quot;: null\n      }"),
            "{block}"
        );
    }
}
