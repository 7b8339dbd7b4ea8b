//! Where the bundled model files live (`models/crops`, `models/containers`, `models/fans`, `models/scenarios`,
//! `models/buying-points`) and how a name or a path is resolved to one of them.

use std::path::{Path, PathBuf};

use crate::error::InputError;

/// Directories searched for bundled files of `kind` (e.g. `"crops"`), in order: `$DRYFRONT_MODELS_DIR/<kind>`,
/// `models/<kind>` beside the executable and up to three levels above it (covers `target/<profile>/`), and the
/// source tree's `models/<kind>` (compile-time `CARGO_MANIFEST_DIR`).
pub fn search_dirs(kind: &str) -> Vec<PathBuf> {
    let mut dirs = Vec::new();
    if let Some(d) = std::env::var_os("DRYFRONT_MODELS_DIR") {
        dirs.push(PathBuf::from(d).join(kind));
    }
    if let Ok(exe) = std::env::current_exe() {
        let mut dir = exe.parent().map(Path::to_path_buf);
        for _ in 0..4 {
            match dir {
                Some(d) => {
                    dirs.push(d.join("models").join(kind));
                    dir = d.parent().map(Path::to_path_buf);
                }
                None => break,
            }
        }
    }
    dirs.push(
        Path::new(env!("CARGO_MANIFEST_DIR"))
            .join("models")
            .join(kind),
    );
    dirs
}

/// Resolve `name` (a bundled model's name, or a path to a `.json` file) to a file of `kind`. `what` names the
/// option or field for the error message.
pub fn resolve(kind: &str, name: &str, what: &str) -> Result<PathBuf, InputError> {
    resolve_in(None, kind, name, what)
}

/// As [`resolve`], for a name written inside the file `referrer`: a path is taken from beside that file first
/// (see [`beside`]), as every file a file names is.
pub fn resolve_named_by(
    referrer: Option<&Path>,
    kind: &str,
    name: &str,
    what: &str,
) -> Result<PathBuf, InputError> {
    match referrer {
        Some(r) if is_path(name) => Ok(beside(r, name)),
        _ => resolve(kind, name, what),
    }
}

/// A name is a path (not a bundled name) when it ends in `.json` or has more than one component.
fn is_path(name: &str) -> bool {
    name.ends_with(".json") || Path::new(name).components().count() > 1
}

/// A file that the file `referrer` names: beside that file, else as given (from the working folder), else in the
/// source tree.
pub fn beside(referrer: &Path, name: &str) -> PathBuf {
    let rel = PathBuf::from(name);
    if rel.is_absolute() {
        return rel;
    }
    if let Some(b) = referrer.parent().map(|d| d.join(&rel)) {
        if b.is_file() {
            return b;
        }
    }
    let in_tree = Path::new(env!("CARGO_MANIFEST_DIR")).join(&rel);
    if !rel.is_file() && in_tree.is_file() {
        in_tree
    } else {
        rel
    }
}

/// As [`resolve`], looking first in `models/<kind>` of the folder `dir` (a command's `--models`) when given.
pub fn resolve_in(
    dir: Option<&Path>,
    kind: &str,
    name: &str,
    what: &str,
) -> Result<PathBuf, InputError> {
    if is_path(name) {
        return Ok(PathBuf::from(name));
    }
    let first = dir.map(|d| d.join(kind));
    for dir in first.into_iter().chain(search_dirs(kind)) {
        let p = dir.join(format!("{name}.json"));
        if p.is_file() {
            return Ok(p);
        }
    }
    let known = bundled_names(kind);
    Err(InputError::argument(
        what,
        name,
        &format!(
            "is not a bundled {kind} entry (known: {}) nor a path to a .json file",
            known.join(", ")
        ),
    ))
}

/// Names of the bundled files of `kind`.
pub fn bundled_names(kind: &str) -> Vec<String> {
    for dir in search_dirs(kind) {
        if let Ok(entries) = std::fs::read_dir(&dir) {
            let mut names: Vec<String> = entries
                .filter_map(|e| e.ok())
                .filter_map(|e| {
                    e.file_name()
                        .to_str()
                        .and_then(|n| n.strip_suffix(".json"))
                        .map(str::to_string)
                })
                .collect();
            if !names.is_empty() {
                names.sort();
                return names;
            }
        }
    }
    Vec::new()
}
