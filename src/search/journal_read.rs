//! Parsing and checking a journal's bytes.

use super::journal::JournalContents;
use super::records::{BaselineRecord, EvaluationRecord, RunHeader, JOURNAL_FORMAT, TOOL_VERSION};
use crate::{Error, Result};
use serde::de::DeserializeOwned;
use serde_json::Value;
use std::path::Path;

/// One line of the file: its bytes (without `\n`), whether it was
/// terminated, and the offset just past it.
struct Line<'a> {
    text: &'a [u8],
    terminated: bool,
    end: usize,
}

fn split_lines(bytes: &[u8]) -> Vec<Line<'_>> {
    let mut lines = Vec::new();
    let mut start = 0;
    while start < bytes.len() {
        match bytes[start..].iter().position(|&b| b == b'\n') {
            Some(offset) => {
                lines.push(Line {
                    text: &bytes[start..start + offset],
                    terminated: true,
                    end: start + offset + 1,
                });
                start += offset + 1;
            }
            None => {
                lines.push(Line {
                    text: &bytes[start..],
                    terminated: false,
                    end: bytes.len(),
                });
                start = bytes.len();
            }
        }
    }
    lines
}

fn parse_value(line: &Line<'_>) -> std::result::Result<Value, String> {
    if !line.terminated {
        return Err("the line is incomplete".to_string());
    }
    let text = std::str::from_utf8(line.text).map_err(|e| format!("not UTF-8 ({e})"))?;
    serde_json::from_str(text).map_err(|e| format!("not valid JSON ({e})"))
}

/// Accumulates records while lines are read.
struct Reader<'p, G> {
    path: &'p Path,
    header: Option<RunHeader>,
    evaluations: Vec<EvaluationRecord<G>>,
    openings: Vec<Value>,
    baselines: Vec<BaselineRecord>,
}

impl<G: DeserializeOwned> Reader<'_, G> {
    fn damaged(&self, line: usize, what: impl std::fmt::Display) -> Error {
        Error::input(format!(
            "{}: line {line}: {what}; the journal is damaged (only an incomplete last line is repaired automatically)",
            self.path.display()
        ))
    }

    fn take(&mut self, number: usize, mut value: Value) -> Result<()> {
        let kind = match value.get("kind").and_then(Value::as_str) {
            Some(kind) => kind.to_string(),
            None => return Err(self.damaged(number, "no \"kind\" field")),
        };
        if let Value::Object(map) = &mut value {
            map.remove("kind");
        }
        match (kind.as_str(), &self.header) {
            ("header", None) if number == 1 => self.take_header(value),
            (_, None) => Err(Error::input(format!(
                "{}: line 1 is not a run header; is this a gemmule journal?",
                self.path.display()
            ))),
            ("header", Some(_)) => Err(self.damaged(number, "a second header")),
            ("evaluation", Some(_)) => {
                let record: EvaluationRecord<G> = serde_json::from_value(value)
                    .map_err(|e| self.damaged(number, format!("bad evaluation record ({e})")))?;
                let expected = self.evaluations.len() as u64;
                if record.index != expected {
                    let what = format!("evaluation index {}, expected {expected}", record.index);
                    return Err(self.damaged(number, what));
                }
                self.evaluations.push(record);
                Ok(())
            }
            ("baseline", Some(_)) => {
                let record: BaselineRecord = serde_json::from_value(value)
                    .map_err(|e| self.damaged(number, format!("bad baseline record ({e})")))?;
                self.baselines.push(record);
                Ok(())
            }
            ("test_opening", Some(_)) => {
                let body = value.get("body").cloned().unwrap_or(Value::Null);
                self.openings.push(body);
                Ok(())
            }
            (other, Some(_)) => Err(self.damaged(number, format!("unknown record kind {other:?}"))),
        }
    }

    fn take_header(&mut self, value: Value) -> Result<()> {
        let format = value.get("format").and_then(Value::as_u64);
        let written_by = value
            .get("tool_version")
            .and_then(Value::as_str)
            .unwrap_or("of unknown version");
        match format {
            Some(format) if format > u64::from(JOURNAL_FORMAT) => {
                return Err(Error::input(format!(
                    "{}: written by a newer gemmule {written_by} (journal format {format}); \
                     this gemmule {TOOL_VERSION} reads formats up to {JOURNAL_FORMAT}: upgrade gemmule",
                    self.path.display()
                )))
            }
            Some(format) if format >= 1 => {}
            _ => return Err(self.damaged(1, "the header has no valid \"format\"")),
        }
        let header = serde_json::from_value(value)
            .map_err(|e| self.damaged(1, format!("bad header ({e})")))?;
        self.header = Some(header);
        Ok(())
    }
}

/// Parses a journal file's bytes (see `Journal::read`).
pub(crate) fn parse_journal<G: DeserializeOwned>(
    path: &Path,
    bytes: &[u8],
) -> Result<JournalContents<G>> {
    let lines = split_lines(bytes);
    let mut reader = Reader {
        path,
        header: None,
        evaluations: Vec::new(),
        openings: Vec::new(),
        baselines: Vec::new(),
    };
    let mut warnings = Vec::new();
    let mut intact_len = 0;
    for (position, line) in lines.iter().enumerate() {
        let number = position + 1;
        match parse_value(line) {
            Ok(value) => {
                reader.take(number, value)?;
                intact_len = line.end;
            }
            Err(problem) if number == lines.len() && reader.header.is_some() => {
                warnings.push(format!(
                    "{}: line {number} is torn ({problem}), probably cut off by an interruption; \
                     it is ignored and a resume removes it",
                    path.display()
                ));
            }
            Err(problem) => return Err(reader.damaged(number, problem)),
        }
    }
    let Some(header) = reader.header else {
        return Err(Error::input(format!(
            "{}: the journal is empty (no header line)",
            path.display()
        )));
    };
    Ok(JournalContents {
        header,
        evaluations: reader.evaluations,
        openings: reader.openings,
        baselines: reader.baselines,
        warnings,
        intact_len: intact_len as u64,
    })
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn lines_split_with_and_without_final_newline() {
        let lines = split_lines(b"a\nbc\nd");
        assert_eq!(lines.len(), 3);
        assert!(lines[1].terminated && !lines[2].terminated);
        assert_eq!(lines[1].end, 5);
        assert_eq!(split_lines(b"a\n").len(), 1);
        assert!(split_lines(b"").is_empty());
    }

    #[test]
    fn a_file_without_a_header_is_refused() {
        let path = Path::new("j.jsonl");
        let result = parse_journal::<Value>(path, b"{\"kind\":\"evaluation\"}\n");
        let message = result.err().map(|e| e.to_string()).unwrap_or_default();
        assert!(message.contains("not a run header"), "{message}");
        assert!(parse_journal::<Value>(path, b"").is_err());
    }
}
