//! Outputs are written whole or not at all: each file goes to a temporary name in its target directory and is
//! renamed into place only when complete. Inputs are never overwritten.
use std::io::Write;
use std::path::{Path, PathBuf};

/// Errors from writing an output file.
#[derive(Debug, thiserror::Error)]
pub enum OutputError {
    /// The target names one of the run's input files.
    #[error("refusing to overwrite input file {}", .0.display())]
    WouldOverwriteInput(PathBuf),
    /// The operating system refused.
    #[error("cannot write {}: {source}", .path.display())]
    Io {
        /// The target file.
        path: PathBuf,
        /// The operating system's error.
        #[source]
        source: std::io::Error,
    },
}

/// Write `bytes` to `path` atomically (temporary file + rename), refusing to replace any path in `inputs`.
pub fn write_atomic(path: &Path, bytes: &[u8], inputs: &[&Path]) -> Result<(), OutputError> {
    let io_err = |source| OutputError::Io {
        path: path.to_path_buf(),
        source,
    };
    for input in inputs {
        if same_file(path, input) {
            return Err(OutputError::WouldOverwriteInput(path.to_path_buf()));
        }
    }
    let dir = match path.parent() {
        Some(d) if !d.as_os_str().is_empty() => d.to_path_buf(),
        _ => PathBuf::from("."),
    };
    std::fs::create_dir_all(&dir).map_err(io_err)?;
    let name = path
        .file_name()
        .map(|n| n.to_string_lossy().into_owned())
        .unwrap_or_else(|| "out".into());
    let tmp = dir.join(format!(".{name}.tmp-{}", std::process::id()));
    let result = (|| {
        let mut f = std::fs::File::create(&tmp)?;
        f.write_all(bytes)?;
        f.sync_all()?;
        std::fs::rename(&tmp, path)
    })();
    if result.is_err() {
        let _ = std::fs::remove_file(&tmp);
    }
    result.map_err(io_err)
}

fn same_file(a: &Path, b: &Path) -> bool {
    match (std::fs::canonicalize(a), std::fs::canonicalize(b)) {
        (Ok(x), Ok(y)) => x == y,
        _ => a == b,
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn refuses_to_overwrite_an_input() {
        let dir = tempfile::tempdir().unwrap();
        let input = dir.path().join("weather.csv");
        std::fs::write(&input, "keep me").unwrap();
        let err = write_atomic(&input, b"new", &[&input]).unwrap_err();
        assert!(matches!(err, OutputError::WouldOverwriteInput(_)));
        assert_eq!(std::fs::read_to_string(&input).unwrap(), "keep me");
    }

    #[test]
    fn writes_whole_file_and_leaves_no_temporary() {
        let dir = tempfile::tempdir().unwrap();
        let out = dir.path().join("sub/out.csv");
        write_atomic(&out, b"a,b\n1,2\n", &[]).unwrap();
        assert_eq!(std::fs::read_to_string(&out).unwrap(), "a,b\n1,2\n");
        let names: Vec<_> = std::fs::read_dir(out.parent().unwrap()).unwrap().collect();
        assert_eq!(names.len(), 1);
    }
}
