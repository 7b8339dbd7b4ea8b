//! The input layer: the only place that turns files into the program's validated, unit-converted specifications.
//! `models` resolves names to bundled files (the one resolver); `read` is the one bounded reader every file goes
//! through; this module holds the one set of validation helpers every reader uses; `scenario` builds a [`crate::load::LoadSpec`] from a single-load
//! scenario file; `season` loads what a buying point's dryers name; `survey` reads a top-surface airflow survey;
//! `wagon` reads the published wagon case's inputs.

pub mod board;
pub mod design;
pub mod limits;
pub mod read;
pub mod samples;
pub mod scenario;
pub mod season;
pub mod status;
pub mod survey;
pub mod wagon;

pub use read::*;

use std::path::Path;

use crate::error::InputError;

/// An error in a structured file's field.
pub fn field_err(path: &Path, field: impl Into<String>, message: impl Into<String>) -> InputError {
    InputError::Model {
        line: None,
        path: path.to_path_buf(),
        field: field.into(),
        message: message.into(),
    }
}

/// An error in a line-oriented file's field: file, line, field, the text found and what was expected.
pub fn line_err(
    path: &Path,
    line: u64,
    field: &str,
    value: &str,
    expected: impl Into<String>,
) -> InputError {
    InputError::Field {
        path: path.to_path_buf(),
        line,
        field: field.to_string(),
        value: value.to_string(),
        expected: expected.into(),
    }
}

/// Parse a number from a line-oriented file's field and check it is finite and within `[lo, hi]`.
pub fn check_line_number(
    path: &Path,
    line: u64,
    field: &str,
    text: &str,
    (lo, hi): (f64, f64),
    unit: &str,
) -> Result<f64, InputError> {
    match text.parse::<f64>() {
        Ok(v) if v.is_finite() && v >= lo && v <= hi => Ok(v),
        _ => Err(line_err(
            path,
            line,
            field,
            text,
            format!("must be a number between {lo} and {hi} {unit}"),
        )),
    }
}

/// Check that a field's value is finite and within `[lo, hi]`, naming the file and field.
pub fn check_field(
    path: &Path,
    field: &str,
    v: f64,
    lo: f64,
    hi: f64,
    unit: &str,
) -> Result<f64, InputError> {
    if v.is_finite() && v >= lo && v <= hi {
        Ok(v)
    } else {
        let unit = if unit.is_empty() {
            String::new()
        } else {
            format!(" {unit}")
        };
        Err(field_err(
            path,
            field,
            format!("{v}{unit} must be between {lo} and {hi}{unit}"),
        ))
    }
}

/// Parse JSON text into `T`, naming the file and line on failure.
pub fn parse_json<T: serde::de::DeserializeOwned>(
    path: &Path,
    text: &str,
) -> Result<T, InputError> {
    serde_json::from_str(text).map_err(|e| InputError::Parse {
        path: path.to_path_buf(),
        line: Some(e.line() as u64),
        message: e.to_string(),
    })
}

/// Give a field error from a JSON file the line of its field: for [`InputError::Model`] about `path` without a
/// line, the line of the deepest part of its dotted field path (`dryers[1].capacity_kg`, `heater.strategy`) found
/// in `text`. Every JSON reader passes its post-parse errors through this.
pub fn with_json_line(err: InputError, path: &Path, text: &str) -> InputError {
    match err {
        InputError::Model {
            path: p,
            line: None,
            field,
            message,
        } if p == path => {
            let line = json_field_line(text, &field);
            InputError::Model {
                path: p,
                line,
                field,
                message,
            }
        }
        other => other,
    }
}

#[derive(Debug, PartialEq)]
enum Seg {
    Key(String),
    Index(usize),
}

fn segments(field: &str) -> Vec<Seg> {
    let mut out = Vec::new();
    for part in field.split('.').filter(|p| !p.is_empty()) {
        let mut rest = part;
        if let Some(i) = rest.find('[') {
            if i > 0 {
                out.push(Seg::Key(rest[..i].to_string()));
            }
            rest = &rest[i..];
            while let Some(r) = rest.strip_prefix('[') {
                let Some((n, tail)) = r.split_once(']') else {
                    break;
                };
                match n.parse() {
                    Ok(n) => out.push(Seg::Index(n)),
                    Err(_) => return out,
                }
                rest = tail;
            }
        } else {
            out.push(Seg::Key(rest.to_string()));
        }
    }
    out
}

/// The 1-based line of the deepest part of a dotted field path found in valid JSON text (`None` when not even
/// its first part is there).
pub fn json_field_line(text: &str, field: &str) -> Option<u64> {
    let target = segments(field);
    let mut w = Walker {
        b: text.as_bytes(),
        i: 0,
        line: 1,
        best: (0, None),
    };
    w.value(&target, 0);
    w.best.1
}

/// A walk over JSON text that follows one path and notes the line of each part it reaches.
struct Walker<'a> {
    b: &'a [u8],
    i: usize,
    line: u64,
    best: (usize, Option<u64>),
}

impl Walker<'_> {
    fn ws(&mut self) {
        while let Some(&c) = self.b.get(self.i) {
            match c {
                b'\n' => self.line += 1,
                b' ' | b'\t' | b'\r' => {}
                _ => return,
            }
            self.i += 1;
        }
    }

    fn reached(&mut self, depth: usize) {
        if depth > self.best.0 {
            self.best = (depth, Some(self.line));
        }
    }

    fn string(&mut self) -> String {
        let start = self.i + 1;
        self.i += 1;
        while let Some(&c) = self.b.get(self.i) {
            self.i += 1;
            match c {
                b'\\' => self.i += 1,
                b'"' => break,
                _ => {}
            }
        }
        let raw = &self.b[start..self.i.saturating_sub(1).max(start)];
        String::from_utf8_lossy(raw).into_owned()
    }

    /// Walk one value; `depth` parts of `target` lead here (`on` says whether this value is on the path).
    fn value(&mut self, target: &[Seg], depth: usize) {
        self.ws();
        match self.b.get(self.i) {
            Some(b'{') => {
                self.i += 1;
                loop {
                    self.ws();
                    match self.b.get(self.i) {
                        Some(b'"') => {
                            let key = self.string();
                            let on = matches!(target.get(depth), Some(Seg::Key(k)) if *k == key);
                            if on {
                                self.reached(depth + 1);
                            }
                            self.ws();
                            self.i += 1; // ':'
                            self.child(target, depth, on);
                        }
                        Some(b',') => self.i += 1,
                        Some(b'}') | None => {
                            self.i += 1;
                            return;
                        }
                        Some(_) => self.i += 1,
                    }
                }
            }
            Some(b'[') => {
                self.i += 1;
                let mut n = 0;
                loop {
                    self.ws();
                    match self.b.get(self.i) {
                        Some(b',') => self.i += 1,
                        Some(b']') | None => {
                            self.i += 1;
                            return;
                        }
                        Some(_) => {
                            let on = matches!(target.get(depth), Some(Seg::Index(k)) if *k == n);
                            if on {
                                self.reached(depth + 1);
                            }
                            self.child(target, depth, on);
                            n += 1;
                        }
                    }
                }
            }
            Some(b'"') => {
                self.string();
            }
            Some(_) => {
                while let Some(&c) = self.b.get(self.i) {
                    if matches!(c, b',' | b'}' | b']' | b' ' | b'\n' | b'\t' | b'\r') {
                        break;
                    }
                    self.i += 1;
                }
            }
            None => {}
        }
    }

    /// Walk a member's value: on the path it goes one part deeper, off it no part can match.
    fn child(&mut self, target: &[Seg], depth: usize, on: bool) {
        if on {
            self.value(target, depth + 1);
        } else {
            self.value(&[], 0);
        }
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn finds_the_line_of_a_dotted_field() {
        let text = "{\n  \"name\": \"x\",\n  \"dryers\": [\n    {\"id\": \"a\", \"capacity_kg\": 1},\n    {\n      \"id\": \"b\",\n      \"capacity_kg\": -4\n    }\n  ],\n  \"heater\": {\"strategy\": \"rise=8\"}\n}\n";
        assert_eq!(json_field_line(text, "dryers[1].capacity_kg"), Some(7));
        assert_eq!(json_field_line(text, "dryers[0].capacity_kg"), Some(4));
        assert_eq!(json_field_line(text, "heater.strategy"), Some(10));
        // The deepest part found: dryers[1] starts on line 5.
        assert_eq!(json_field_line(text, "dryers[1].fan"), Some(5));
        assert_eq!(json_field_line(text, "absent"), None);
        // A key of the same name elsewhere is not taken for it.
        assert_eq!(json_field_line(text, "id"), None);
    }
}
