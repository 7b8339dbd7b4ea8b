//! Bounded reading of input files. Every reader (weather, arrivals, model files) goes through [`read_bytes`], so a
//! wrong path (`/dev/zero`, a FIFO, a log or an image) is refused with a one-line error naming the file before it
//! can take the machine's memory: the size the file system reports is checked first, then the read itself is
//! bounded (`take`) and stops at the first over-long line.
use std::io::Read;
use std::path::Path;

use crate::error::InputError;

/// Largest input file read, bytes (64 MiB). The largest real input is an hourly weather record: a year of EPW is
/// about 1.6 MB and of TMY3 about 1.2 MB, so the limit admits some 40 years of hourly data while a wrong path
/// (a device, a log, a disk image) is refused before it can exhaust memory.
pub const MAX_FILE_BYTES: u64 = 64 * 1024 * 1024;

/// Longest line, bytes (1 MiB). EPW rows are about 200 bytes and CSV rows under 100; a whole model file minified
/// onto one line is a few kB. A longer "line" is not text of any format read here (`/dev/zero` is one endless
/// line), so reading stops there instead of at [`MAX_FILE_BYTES`].
pub const MAX_LINE_BYTES: usize = 1024 * 1024;

/// What every comma-separated reader says about a semicolon-separated file: reading `;` as a separator would
/// need decimal commas understood too, so such files are refused rather than half read.
pub const SEMICOLON_HINT: &str =
    "this reader expects comma-separated values (semicolon-separated files are not read; replace ';' with ',')";

/// What every comma-separated reader says about a tab-separated file.
pub const TAB_HINT: &str = "this reader expects comma-separated values (replace each tab with ',')";

/// What every comma-separated reader says about a field that holds a line end: a quote opened and never closed
/// swallows the following lines into one field.
pub const UNCLOSED_QUOTE: &str =
    "a quoted field starting on this line runs past its line end: is a '\"' left unclosed?";

/// Read at most [`MAX_FILE_BYTES`] of a file, refusing a larger file or a line longer than [`MAX_LINE_BYTES`]
/// (reading stops at the first such line).
pub fn read_bytes(path: &Path) -> Result<Vec<u8>, InputError> {
    let io = |source| InputError::Io {
        path: path.to_path_buf(),
        source,
    };
    let perr = |line: Option<u64>, message: String| InputError::Parse {
        path: path.to_path_buf(),
        line,
        message,
    };
    let meta = std::fs::metadata(path).map_err(io)?;
    if meta.is_dir() {
        return Err(perr(None, "is a folder, not a file".into()));
    }
    if meta.len() > MAX_FILE_BYTES {
        return Err(perr(None, too_big(Some(meta.len()))));
    }
    let file = std::fs::File::open(path).map_err(io)?;
    // One byte over the limit tells "exactly at the limit" from "more" for files whose size is not known
    // beforehand (devices, pipes, /proc).
    let mut reader = file.take(MAX_FILE_BYTES + 1);
    let mut buf = Vec::with_capacity(meta.len() as usize);
    let mut chunk = vec![0u8; 64 * 1024];
    let (mut line, mut line_len) = (1u64, 0usize);
    loop {
        let n = match reader.read(&mut chunk) {
            Ok(0) => break,
            Ok(n) => n,
            Err(e) if e.kind() == std::io::ErrorKind::Interrupted => continue,
            Err(e) => return Err(io(e)),
        };
        for piece in chunk[..n].split_inclusive(|&b| b == b'\n') {
            line_len += piece.len();
            let ends_line = piece.last() == Some(&b'\n');
            if line_len - usize::from(ends_line) > MAX_LINE_BYTES {
                return Err(perr(
                    Some(line),
                    format!(
                        "line is longer than {} KiB, the limit for one line of an input file (not a text file \
                         of a format read here?)",
                        MAX_LINE_BYTES / 1024
                    ),
                ));
            }
            if ends_line {
                line += 1;
                line_len = 0;
            }
        }
        buf.extend_from_slice(&chunk[..n]);
        if buf.len() as u64 > MAX_FILE_BYTES {
            return Err(perr(None, too_big(None)));
        }
    }
    Ok(buf)
}

fn too_big(len: Option<u64>) -> String {
    let mib = MAX_FILE_BYTES / (1024 * 1024);
    match len {
        Some(n) => format!("is {n} bytes, more than the {mib} MiB limit for an input file"),
        None => {
            format!("holds more than the {mib} MiB limit for an input file (reading stopped there)")
        }
    }
}

/// Read a text file within the limits of [`read_bytes`], as UTF-8 (a byte-order mark is dropped).
pub fn read_text(path: &Path) -> Result<String, InputError> {
    let bytes = read_bytes(path)?;
    text_from_bytes(path, &bytes)
}

/// Decode bytes as UTF-8 (dropping a byte-order mark), naming the file and line of the first bad byte.
pub fn text_from_bytes(path: &Path, bytes: &[u8]) -> Result<String, InputError> {
    let bytes = bytes.strip_prefix(b"\xEF\xBB\xBF").unwrap_or(bytes);
    match std::str::from_utf8(bytes) {
        Ok(s) => Ok(s.to_string()),
        Err(e) => {
            let line = 1 + bytes[..e.valid_up_to()]
                .iter()
                .filter(|b| **b == b'\n')
                .count() as u64;
            Err(InputError::Parse {
                path: path.to_path_buf(),
                line: Some(line),
                message: "is not UTF-8 text".into(),
            })
        }
    }
}

/// The one check of a comma-separated file's header row: not empty (the message lists `expected`, the header as
/// written for people), no field running past its line end, no tabs or semicolons for separators; then the index
/// of each of `columns`, a missing one named with the columns found. Errors carry the header's line.
pub fn header_columns(
    path: &Path,
    headers: &csv::StringRecord,
    expected: &str,
    columns: &[&str],
) -> Result<Vec<usize>, InputError> {
    let line = headers.position().map_or(1, |p| p.line());
    let perr = |line: Option<u64>, message: String| InputError::Parse {
        path: path.to_path_buf(),
        line,
        message,
    };
    if headers.iter().all(str::is_empty) {
        return Err(perr(
            None,
            format!("empty file: expected a header row ({expected})"),
        ));
    }
    if headers.iter().any(|h| h.contains(['\n', '\r'])) {
        return Err(perr(Some(line), UNCLOSED_QUOTE.into()));
    }
    for (c, what, hint) in [('\t', "tabs", TAB_HINT), (';', "';'", SEMICOLON_HINT)] {
        if headers.iter().any(|h| h.contains(c)) {
            return Err(perr(
                Some(line),
                format!("header is separated by {what}: {hint}"),
            ));
        }
    }
    columns
        .iter()
        .map(|name| {
            headers.iter().position(|h| h == *name).ok_or_else(|| {
                super::line_err(
                    path,
                    line,
                    name,
                    "",
                    format!(
                        "column is missing from the header (found: {})",
                        headers.iter().collect::<Vec<_>>().join(", ")
                    ),
                )
            })
        })
        .collect()
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn a_line_at_the_limit_is_read_and_one_byte_more_is_refused_with_its_line() {
        let dir = tempfile::tempdir().unwrap();
        let p = dir.path().join("long.csv");
        let mut text = b"a,b\r\n".to_vec();
        text.extend(std::iter::repeat_n(b'x', MAX_LINE_BYTES));
        text.extend_from_slice(b"\n1,2\n");
        std::fs::write(&p, &text).unwrap();
        assert_eq!(read_bytes(&p).unwrap(), text);
        text.insert(6, b'x');
        std::fs::write(&p, &text).unwrap();
        let msg = read_bytes(&p).unwrap_err().to_string();
        assert!(
            msg.contains("long.csv:2: line is longer than 1024 KiB"),
            "{msg}"
        );
    }

    #[test]
    fn a_folder_and_a_missing_file_are_named() {
        let dir = tempfile::tempdir().unwrap();
        let msg = read_bytes(dir.path()).unwrap_err().to_string();
        assert!(msg.ends_with(": is a folder, not a file"), "{msg}");
        let msg = read_bytes(&dir.path().join("nope"))
            .unwrap_err()
            .to_string();
        assert!(
            msg.starts_with("cannot read ") && msg.contains("nope"),
            "{msg}"
        );
    }

    #[cfg(unix)]
    #[test]
    fn dev_zero_stops_at_the_line_limit() {
        let msg = read_bytes(Path::new("/dev/zero")).unwrap_err().to_string();
        assert!(msg.starts_with("/dev/zero:1: line is longer than"), "{msg}");
    }

    #[test]
    fn bad_utf8_names_its_line_and_a_bom_is_dropped() {
        let p = Path::new("x.txt");
        assert_eq!(text_from_bytes(p, b"\xEF\xBB\xBFab").unwrap(), "ab");
        let msg = text_from_bytes(p, b"a\nb\n\xff").unwrap_err().to_string();
        assert_eq!(msg, "x.txt:3: is not UTF-8 text");
    }
}
