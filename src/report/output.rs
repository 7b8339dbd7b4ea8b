//! The one writer: every command builds its files in memory as an [`OutputSet`] (relative names → bytes) and hands
//! the set to [`OutputSet::commit`], which
//!
//! - refuses a target that is, holds or lies inside any of the run's inputs (compared as canonical paths, so links
//!   and `..` do not slip through) — [`check_target`] does the same check before a command starts its work;
//! - refuses a target folder holding files dryfront did not write (those not listed in its manifest,
//!   [`MANIFEST`]) unless the caller passes `replace` (the `--replace` option), naming them;
//! - writes the whole set, manifest last, into a fresh folder `.NAME.dryfront-new-PID` beside the target, then
//!   renames the old folder aside (`.NAME.dryfront-old-PID`), renames the new one in and removes the old one.
//!
//! A run that dies therefore leaves the old set or the new one in place, never a mix. The only moment without a
//! folder at the target is between the two renames; the next run of any command writing there puts back the set
//! a dead process left aside (the new one if it was complete, else the old one) and removes every temporary of
//! this naming scheme whose process is gone.
//!
//! [`OutputSet::commit_files`] writes single files (an `--out FILE` option) each whole, by temporary name and
//! rename, with the same input check.
use std::collections::{BTreeMap, BTreeSet};
use std::io::Write;
use std::path::{Component, Path, PathBuf};

/// The manifest a committed folder holds: the relative names of the files dryfront wrote there, one a line.
pub const MANIFEST: &str = ".dryfront-outputs";

/// How many foreign names an error lists before it says "and N more".
const LIST_NAMES: usize = 5;

/// Errors from writing outputs.
#[derive(Debug, thiserror::Error)]
pub enum OutputError {
    /// The target is one of the run's input files.
    #[error("refusing to write {}: it is the input file {}", .target.display(), .input.display())]
    IsInput {
        /// The output as given.
        target: PathBuf,
        /// The input as given.
        input: PathBuf,
    },
    /// The target folder holds one of the run's input files.
    #[error("refusing to write {}: the input file {} is inside it", .target.display(), .input.display())]
    HoldsInput {
        /// The output as given.
        target: PathBuf,
        /// The input as given.
        input: PathBuf,
    },
    /// The target lies inside (below) one of the run's input files.
    #[error("refusing to write {}: it lies inside the input file {}", .target.display(), .input.display())]
    InsideInput {
        /// The output as given.
        target: PathBuf,
        /// The input as given.
        input: PathBuf,
    },
    /// The target folder holds files dryfront did not write.
    #[error(
        "refusing to write into {}: it holds {} file(s) dryfront did not write ({}); move them or give --replace",
        .target.display(), .names.len(), list(.names)
    )]
    Foreign {
        /// The target folder.
        target: PathBuf,
        /// The foreign files, relative to the target.
        names: Vec<String>,
    },
    /// The target exists and is not a folder.
    #[error("refusing to write into {}: it exists and is not a folder", .0.display())]
    NotAFolder(PathBuf),
    /// The operating system refused.
    #[error("cannot write {}", .path.display())]
    Io {
        /// The path being written.
        path: PathBuf,
        /// The operating system's error.
        #[source]
        source: std::io::Error,
    },
}

fn list(names: &[String]) -> String {
    let mut s = names
        .iter()
        .take(LIST_NAMES)
        .cloned()
        .collect::<Vec<_>>()
        .join(", ");
    if names.len() > LIST_NAMES {
        s.push_str(&format!(" and {} more", names.len() - LIST_NAMES));
    }
    s
}

fn io_err(path: &Path) -> impl FnOnce(std::io::Error) -> OutputError + '_ {
    move |source| OutputError::Io {
        path: path.to_path_buf(),
        source,
    }
}

/// A command's output files, built in memory and written together.
#[derive(Debug, Default, Clone, PartialEq, Eq)]
pub struct OutputSet {
    files: BTreeMap<PathBuf, Vec<u8>>,
}

impl OutputSet {
    /// An empty set.
    pub fn new() -> Self {
        Self::default()
    }

    /// Add a file under its relative name (`summary.txt`, `rise_8/series.csv`); a later file of the same name
    /// replaces an earlier one.
    ///
    /// # Panics
    /// If the name is absolute or leaves the folder (`..`): names are chosen by the program, never by the user.
    pub fn add(&mut self, name: impl Into<PathBuf>, bytes: impl Into<Vec<u8>>) {
        let name = name.into();
        assert!(
            name.components().all(|c| matches!(c, Component::Normal(_))),
            "output names are relative and stay inside the folder: {}",
            name.display()
        );
        self.files.insert(name, bytes.into());
    }

    /// Add every file of `other` under the folder `prefix`.
    pub fn add_set(&mut self, prefix: impl AsRef<Path>, other: OutputSet) {
        for (name, bytes) in other.files {
            self.add(prefix.as_ref().join(name), bytes);
        }
    }

    /// The bytes of the file named `name`, if the set holds it.
    pub fn get(&self, name: impl AsRef<Path>) -> Option<&[u8]> {
        self.files.get(name.as_ref()).map(Vec::as_slice)
    }

    /// Whether the set holds a file of this name.
    pub fn has(&self, name: impl AsRef<Path>) -> bool {
        self.get(name).is_some()
    }

    /// The file named `name` as text (empty if the set lacks it or it is not UTF-8): for a report that shows
    /// the set's own pictures.
    pub fn text(&self, name: impl AsRef<Path>) -> &str {
        self.get(name)
            .and_then(|b| std::str::from_utf8(b).ok())
            .unwrap_or("")
    }

    /// The relative names, in order.
    pub fn names(&self) -> impl Iterator<Item = &Path> {
        self.files.keys().map(PathBuf::as_path)
    }

    /// Number of files.
    pub fn len(&self) -> usize {
        self.files.len()
    }

    /// Whether the set is empty.
    pub fn is_empty(&self) -> bool {
        self.files.is_empty()
    }

    /// Write the set as the folder `target`, replacing an earlier set there whole (see the module's description).
    pub fn commit(
        &self,
        target: &Path,
        inputs: &[PathBuf],
        replace: bool,
    ) -> Result<(), OutputError> {
        // Inputs first: nothing is created near an input the set may not touch.
        check_inputs(target, inputs)?;
        let parent = parent_of(target);
        std::fs::create_dir_all(&parent).map_err(io_err(&parent))?;
        let name = folder_name(target);
        recover_and_clean(&parent, &name);
        check_target(target, inputs, replace)?;
        let pid = std::process::id();
        let fresh = parent.join(temp_name(&name, "new", pid));
        let result = self
            .write_into(&fresh)
            .and_then(|()| swap_in(&fresh, target, &parent, &name));
        if result.is_err() {
            let _ = std::fs::remove_dir_all(&fresh);
        }
        result
    }

    /// Write each file of the set under `dir` (names as paths relative to it), each whole by temporary name and
    /// rename, refusing any that is one of `inputs`. For outputs named file by file (`--out FILE`), not folders.
    pub fn commit_files(&self, dir: &Path, inputs: &[PathBuf]) -> Result<(), OutputError> {
        for name in self.names() {
            let target = dir.join(name);
            check_inputs(&target, inputs)?;
        }
        std::fs::create_dir_all(dir).map_err(io_err(dir))?;
        for (name, bytes) in &self.files {
            let target = dir.join(name);
            let parent = parent_of(&target);
            let file = folder_name(&target);
            recover_and_clean(&parent, &file);
            let tmp = parent.join(temp_name(&file, "new", std::process::id()));
            let result = write_file(&tmp, bytes)
                .and_then(|()| std::fs::rename(&tmp, &target).map_err(io_err(&target)));
            if result.is_err() {
                let _ = std::fs::remove_file(&tmp);
            }
            result?;
        }
        Ok(())
    }

    fn write_into(&self, dir: &Path) -> Result<(), OutputError> {
        let _ = std::fs::remove_dir_all(dir);
        std::fs::create_dir_all(dir).map_err(io_err(dir))?;
        let mut manifest = String::new();
        for (name, bytes) in &self.files {
            let path = dir.join(name);
            std::fs::create_dir_all(parent_of(&path)).map_err(io_err(&path))?;
            write_file(&path, bytes)?;
            manifest.push_str(&manifest_line(name));
            manifest.push('\n');
        }
        // Last: a folder with a manifest is complete.
        write_file(&dir.join(MANIFEST), manifest.as_bytes())
    }
}

fn manifest_line(name: &Path) -> String {
    name.components()
        .map(|c| c.as_os_str().to_string_lossy().into_owned())
        .collect::<Vec<_>>()
        .join("/")
}

fn write_file(path: &Path, bytes: &[u8]) -> Result<(), OutputError> {
    (|| {
        let mut f = std::fs::File::create(path)?;
        f.write_all(bytes)?;
        f.sync_all()
    })()
    .map_err(io_err(path))
}

/// Rename `target` aside (if there), `fresh` in, then remove the old folder.
fn swap_in(fresh: &Path, target: &Path, parent: &Path, name: &str) -> Result<(), OutputError> {
    let old = parent.join(temp_name(name, "old", std::process::id()));
    let had_old = match std::fs::symlink_metadata(target) {
        Ok(_) => {
            std::fs::rename(target, &old).map_err(io_err(target))?;
            true
        }
        Err(e) if e.kind() == std::io::ErrorKind::NotFound => false,
        Err(e) => return Err(io_err(target)(e)),
    };
    if let Err(e) = std::fs::rename(fresh, target) {
        if had_old {
            let _ = std::fs::rename(&old, target);
        }
        return Err(io_err(target)(e));
    }
    if had_old {
        remove_any(&old);
    }
    Ok(())
}

fn remove_any(path: &Path) {
    match std::fs::symlink_metadata(path) {
        Ok(m) if m.is_dir() => {
            let _ = std::fs::remove_dir_all(path);
        }
        Ok(_) => {
            let _ = std::fs::remove_file(path);
        }
        Err(_) => {}
    }
}

/// `.NAME.dryfront-KIND-PID`.
fn temp_name(name: &str, kind: &str, pid: u32) -> String {
    format!(".{name}.dryfront-{kind}-{pid}")
}

/// The kind and process of a temporary of ours for `name`, if `entry` is one.
fn parse_temp(entry: &str, name: &str) -> Option<(String, u32)> {
    let rest = entry.strip_prefix(&format!(".{name}.dryfront-"))?;
    let (kind, pid) = rest.split_once('-')?;
    if kind != "new" && kind != "old" {
        return None;
    }
    Some((kind.to_string(), pid.parse().ok()?))
}

/// Whether process `pid` is running (on systems without `/proc`, every process counts as running, so nothing
/// is removed).
fn alive(pid: u32) -> bool {
    if pid == std::process::id() || !Path::new("/proc/self").exists() {
        return true;
    }
    Path::new("/proc").join(pid.to_string()).exists()
}

/// Put back a set a dead run left aside, then remove every temporary of `name` whose process is gone.
fn recover_and_clean(parent: &Path, name: &str) {
    let Ok(entries) = std::fs::read_dir(parent) else {
        return;
    };
    let mut dead: Vec<(String, u32, PathBuf)> = entries
        .filter_map(Result::ok)
        .filter_map(|e| {
            let entry = e.file_name().to_string_lossy().into_owned();
            let (kind, pid) = parse_temp(&entry, name)?;
            (!alive(pid)).then(|| (kind, pid, e.path()))
        })
        .collect();
    let target = parent.join(name);
    if std::fs::symlink_metadata(&target).is_err() {
        // The target is missing: a run died between its two renames. Its new folder is complete when its
        // manifest is there; otherwise its old folder goes back.
        dead.sort_by_key(|(kind, _, _)| kind != "new");
        if let Some((_, _, path)) = dead.iter().find(|(kind, _, path)| {
            (kind == "new" && path.join(MANIFEST).is_file()) || kind == "old"
        }) {
            let _ = std::fs::rename(path, &target);
        }
    }
    for (_, _, path) in dead {
        remove_any(&path);
    }
}

fn parent_of(path: &Path) -> PathBuf {
    match path.parent() {
        Some(p) if !p.as_os_str().is_empty() => p.to_path_buf(),
        _ => PathBuf::from("."),
    }
}

fn folder_name(path: &Path) -> String {
    resolve(path)
        .file_name()
        .map(|n| n.to_string_lossy().into_owned())
        .unwrap_or_else(|| "out".into())
}

/// The path with every existing part resolved (links, `.` and `..`) and the rest appended as written, `..`
/// taken lexically: the same file gets the same answer however it was named.
pub fn resolve(path: &Path) -> PathBuf {
    if let Ok(p) = std::fs::canonicalize(path) {
        return p;
    }
    let abs = if path.is_absolute() {
        path.to_path_buf()
    } else {
        std::env::current_dir()
            .unwrap_or_else(|_| PathBuf::from("/"))
            .join(path)
    };
    let mut existing = abs.clone();
    let mut rest: Vec<Component<'_>> = Vec::new();
    let comps: Vec<Component<'_>> = abs.components().collect();
    let mut n = comps.len();
    while n > 0 {
        existing = comps[..n].iter().collect();
        if let Ok(c) = std::fs::canonicalize(&existing) {
            existing = c;
            rest = comps[n..].to_vec();
            break;
        }
        n -= 1;
    }
    for c in rest {
        match c {
            Component::ParentDir => {
                existing.pop();
            }
            Component::Normal(s) => existing.push(s),
            _ => {}
        }
    }
    existing
}

fn check_inputs(target: &Path, inputs: &[PathBuf]) -> Result<(), OutputError> {
    let t = resolve(target);
    for input in inputs {
        let i = resolve(input);
        let (target, input) = (target.to_path_buf(), input.clone());
        if i == t {
            return Err(OutputError::IsInput { target, input });
        }
        if i.starts_with(&t) {
            return Err(OutputError::HoldsInput { target, input });
        }
        if t.starts_with(&i) {
            return Err(OutputError::InsideInput { target, input });
        }
    }
    Ok(())
}

/// Check that none of `targets` (output files, not folders) is, holds or lies inside any input.
pub fn check_files(targets: &[&Path], inputs: &[PathBuf]) -> Result<(), OutputError> {
    targets.iter().try_for_each(|t| check_inputs(t, inputs))
}

/// Check that `target` may receive an output set: it is not, does not hold and does not lie inside any input, and
/// (unless `replace`) holds no file dryfront did not write. Commands call this before their work starts, so a
/// refusal comes first; [`OutputSet::commit`] checks again.
pub fn check_target(target: &Path, inputs: &[PathBuf], replace: bool) -> Result<(), OutputError> {
    check_inputs(target, inputs)?;
    let meta = match std::fs::metadata(target) {
        Ok(m) => m,
        Err(e) if e.kind() == std::io::ErrorKind::NotFound => return Ok(()),
        Err(e) => return Err(io_err(target)(e)),
    };
    if !meta.is_dir() {
        return Err(OutputError::NotAFolder(target.to_path_buf()));
    }
    if replace {
        return Ok(());
    }
    let ours: BTreeSet<String> = std::fs::read_to_string(target.join(MANIFEST))
        .map(|t| t.lines().map(str::to_string).collect())
        .unwrap_or_default();
    let mut found = Vec::new();
    files_under(target, Path::new(""), &mut found).map_err(io_err(target))?;
    let names: Vec<String> = found
        .into_iter()
        .filter(|n| n != MANIFEST && !ours.contains(n))
        .collect();
    if names.is_empty() {
        Ok(())
    } else {
        Err(OutputError::Foreign {
            target: target.to_path_buf(),
            names,
        })
    }
}

/// Every file, link and empty folder under `dir`, as `/`-separated names relative to it, in sorted order.
fn files_under(dir: &Path, rel: &Path, out: &mut Vec<String>) -> std::io::Result<()> {
    let mut entries: Vec<_> = std::fs::read_dir(dir)?.collect::<Result<_, _>>()?;
    entries.sort_by_key(|e| e.file_name());
    for e in entries {
        let rel = rel.join(e.file_name());
        if e.file_type()?.is_dir() {
            let before = out.len();
            files_under(&e.path(), &rel, out)?;
            if out.len() == before {
                out.push(manifest_line(&rel) + "/");
            }
        } else {
            out.push(manifest_line(&rel));
        }
    }
    Ok(())
}

#[cfg(test)]
mod tests {
    use super::*;

    fn set(names: &[&str]) -> OutputSet {
        let mut s = OutputSet::new();
        for n in names {
            s.add(*n, n.as_bytes().to_vec());
        }
        s
    }

    fn listing(dir: &Path) -> Vec<String> {
        let mut v = Vec::new();
        files_under(dir, Path::new(""), &mut v).unwrap();
        v
    }

    #[test]
    fn a_second_set_replaces_the_first_whole() {
        let dir = tempfile::tempdir().unwrap();
        let out = dir.path().join("out");
        set(&["a.csv", "sub/b.csv", "c.svg"])
            .commit(&out, &[], false)
            .unwrap();
        set(&["a.csv"]).commit(&out, &[], false).unwrap();
        assert_eq!(listing(&out), vec![MANIFEST.to_string(), "a.csv".into()]);
        assert_eq!(
            listing(dir.path()).len(),
            2,
            "no temporaries beside the target"
        );
    }

    #[test]
    fn refuses_inputs_and_foreign_files() {
        let dir = tempfile::tempdir().unwrap();
        let input = dir.path().join("in/weather.csv");
        std::fs::create_dir_all(input.parent().unwrap()).unwrap();
        std::fs::write(&input, "keep me").unwrap();
        let inputs = [input.clone()];
        let s = set(&["a.csv"]);
        let up = dir.path().join("in/x/..");
        for target in [dir.path().join("in"), up, dir.path().to_path_buf()] {
            let err = s.commit(&target, &inputs, true).unwrap_err();
            assert!(matches!(err, OutputError::HoldsInput { .. }), "{err}");
        }
        let below = input.join("out");
        let err = s.commit(&below, &inputs, true).unwrap_err();
        assert!(matches!(err, OutputError::InsideInput { .. }), "{err}");
        assert!(
            err.to_string().contains("lies inside the input file"),
            "{err}"
        );
        let err = s.commit_files(
            dir.path().join("in").as_path(),
            &[dir.path().join("in/a.csv")],
        );
        assert!(matches!(err, Err(OutputError::IsInput { .. })));
        assert_eq!(std::fs::read_to_string(&input).unwrap(), "keep me");
        let other = dir.path().join("other");
        std::fs::create_dir_all(&other).unwrap();
        std::fs::write(other.join("notes.txt"), "mine").unwrap();
        let err = s.commit(&other, &[], false).unwrap_err();
        assert!(err.to_string().contains("notes.txt"), "{err}");
        s.commit(&other, &[], true).unwrap();
        assert_eq!(listing(&other), vec![MANIFEST.to_string(), "a.csv".into()]);
    }

    #[test]
    fn a_dead_runs_temporaries_are_cleaned_and_a_set_left_aside_put_back() {
        let dir = tempfile::tempdir().unwrap();
        let out = dir.path().join("out");
        set(&["old.csv"]).commit(&out, &[], false).unwrap();
        // A run (process id far above any real one) died between its two renames.
        let dead = u32::MAX - 1;
        std::fs::rename(&out, dir.path().join(temp_name("out", "old", dead))).unwrap();
        set(&["half.csv"])
            .write_into(&dir.path().join(temp_name("out", "new", dead)))
            .unwrap();
        std::fs::remove_file(
            dir.path()
                .join(temp_name("out", "new", dead))
                .join(MANIFEST),
        )
        .unwrap();
        recover_and_clean(dir.path(), "out");
        assert_eq!(listing(&out), vec![MANIFEST.to_string(), "old.csv".into()]);
        assert_eq!(listing(dir.path()).len(), 2);
    }
}
