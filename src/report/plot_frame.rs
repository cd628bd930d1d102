//! What the report's plots share: size, colours per group, axis ranges,
//! step lines and the drawing error type.

use crate::Error;
use plotters::style::RGBColor;

/// Plot width in pixels (the page scales it down on narrow screens).
pub const PLOT_WIDTH: u32 = 760;
/// Plot height in pixels.
pub const PLOT_HEIGHT: u32 = 400;
/// Font family of every label (the viewer's own sans-serif font: no fonts are embedded).
pub const FONT: &str = "sans-serif";

/// Colours of the groups (strategies), in order of first appearance; chosen
/// to stay apart for the common forms of colour blindness.
const GROUP_COLOURS: [RGBColor; 6] = [
    RGBColor(0, 114, 178),
    RGBColor(213, 94, 0),
    RGBColor(0, 158, 115),
    RGBColor(204, 121, 167),
    RGBColor(86, 180, 233),
    RGBColor(230, 159, 0),
];

/// Dark grey of axes' text and of single-series lines.
pub const INK: RGBColor = RGBColor(40, 44, 52);

/// The colour of group number `position` (0-based), cycling after six.
pub fn group_colour(position: usize) -> RGBColor {
    GROUP_COLOURS[position % GROUP_COLOURS.len()]
}

/// The distinct names in `names`, in order of first appearance.
pub fn group_order<'a>(names: impl IntoIterator<Item = &'a str>) -> Vec<String> {
    let mut order: Vec<String> = Vec::new();
    for name in names {
        if !order.iter().any(|known| known == name) {
            order.push(name.to_string());
        }
    }
    order
}

/// The position of `name` in `order` (0 when absent).
pub fn group_position(order: &[String], name: &str) -> usize {
    order.iter().position(|known| known == name).unwrap_or(0)
}

/// A drawing failure (a bug: the SVG backend writes to memory).
pub fn drawing_failed(error: impl std::fmt::Display) -> Error {
    Error::internal(format!("drawing a plot failed: {error}"))
}

/// An axis range covering `values` with 5% room on each side; a single value
/// (or none) gets a range of ±0.05 around it (around 0.5 when there is none).
pub fn padded_range(values: impl IntoIterator<Item = f64>) -> (f64, f64) {
    let (mut low, mut high) = (f64::INFINITY, f64::NEG_INFINITY);
    for value in values.into_iter().filter(|v| v.is_finite()) {
        low = low.min(value);
        high = high.max(value);
    }
    if low > high {
        return (0.45, 0.55);
    }
    let span = high - low;
    if span <= f64::EPSILON * high.abs().max(1.0) {
        return (low - 0.05, high + 0.05);
    }
    (low - 0.05 * span, high + 0.05 * span)
}

/// A staircase through `points` (sorted by x): each value holds until the next x.
/// `until`, when given, extends the last value to that x.
pub fn staircase(points: &[(f64, f64)], until: Option<f64>) -> Vec<(f64, f64)> {
    let mut out = Vec::with_capacity(points.len() * 2 + 1);
    for (position, &(x, y)) in points.iter().enumerate() {
        if position > 0 {
            let previous = out.last().map_or(y, |&(_, last_y)| last_y);
            out.push((x, previous));
        }
        out.push((x, y));
    }
    if let (Some(end), Some(&(last_x, last_y))) = (until, out.last()) {
        if end > last_x {
            out.push((end, last_y));
        }
    }
    out
}

/// The axis label of the objective: log loss is stored negated.
pub fn objective_label(objective: &str) -> String {
    match objective {
        "log_loss" => "validation log loss, negated (higher is better)".to_string(),
        other => format!("validation {}", other.replace('_', " ")),
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn staircase_holds_each_value_until_the_next_point() {
        let steps = staircase(&[(1.0, 0.2), (3.0, 0.5)], Some(4.0));
        assert_eq!(steps, vec![(1.0, 0.2), (3.0, 0.2), (3.0, 0.5), (4.0, 0.5)]);
        assert!(staircase(&[], Some(2.0)).is_empty());
    }

    #[test]
    fn ranges_are_padded_and_never_empty() {
        assert_eq!(padded_range([0.0, 1.0]), (-0.05, 1.05));
        assert_eq!(padded_range([0.5]), (0.45, 0.55));
        assert_eq!(padded_range(Vec::new()), (0.45, 0.55));
        assert_eq!(group_order(["b", "a", "b"]), vec!["b", "a"]);
    }
}
