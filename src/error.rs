//! Errors shared by every reader of user input: each names the file, the line (where there is one) and the field,
//! quotes the bad value and says what was expected.
use std::path::PathBuf;

/// A problem with something the user supplied (a file or a command-line value).
#[derive(Debug, thiserror::Error)]
pub enum InputError {
    /// A value in a line-oriented file (CSV, EPW) is malformed or out of range.
    #[error("{}:{line}: field {field:?}: {value:?} {expected}", .path.display())]
    Field {
        /// The file.
        path: PathBuf,
        /// 1-based line number.
        line: u64,
        /// The column or field name.
        field: String,
        /// The offending text as found.
        value: String,
        /// What was expected, as a phrase ("must be between 0 and 100").
        expected: String,
    },
    /// A value in a structured file (JSON) is missing, unknown or out of range.
    #[error("{}{}: field {field:?}: {message}", .path.display(), .line.map(|l| format!(":{l}")).unwrap_or_default())]
    Model {
        /// The file.
        path: PathBuf,
        /// 1-based line of the field in the file, when found (see `input::with_json_line`).
        line: Option<u64>,
        /// Dotted path of the field (`sorption.kernel.a`).
        field: String,
        /// What is wrong.
        message: String,
    },
    /// A file could not be parsed at all.
    #[error("{}{}: {message}", .path.display(), .line.map(|l| format!(":{l}")).unwrap_or_default())]
    Parse {
        /// The file.
        path: PathBuf,
        /// 1-based line, when known.
        line: Option<u64>,
        /// What the parser said.
        message: String,
    },
    /// A file could not be read. The operating system's reason is the error's source (the CLI prints the chain,
    /// so it is not repeated in this message).
    #[error("cannot read {}", .path.display())]
    Io {
        /// The file.
        path: PathBuf,
        /// The operating system's error.
        #[source]
        source: std::io::Error,
    },
    /// A command-line or programmatic argument is out of range.
    #[error("{name}: {value} {expected}")]
    Argument {
        /// The argument's name as the user typed it (`--rh`).
        name: String,
        /// The value given, with its unit.
        value: String,
        /// What was expected.
        expected: String,
    },
}

impl InputError {
    /// An out-of-range argument.
    pub fn argument(name: &str, value: impl ToString, expected: &str) -> Self {
        InputError::Argument {
            name: name.to_string(),
            value: value.to_string(),
            expected: expected.to_string(),
        }
    }
}

/// Check that `value` is finite and within `[lo, hi]`, naming the argument in the error.
pub fn check_range(
    name: &str,
    value: f64,
    lo: f64,
    hi: f64,
    unit: &str,
) -> Result<f64, InputError> {
    if value.is_finite() && value >= lo && value <= hi {
        Ok(value)
    } else {
        Err(InputError::argument(
            name,
            format!("{value} {unit}"),
            &format!("must be between {lo} and {hi} {unit}"),
        ))
    }
}
