//! Output sets are whole: a `season run` killed at any moment leaves its folder holding exactly the earlier set or
//! exactly the new one, and the next run leaves no temporary names; a rerun into a used folder leaves no stale
//! files; a folder holding files dryfront did not write is refused unless `--replace` is given.
use std::collections::BTreeMap;
use std::path::{Path, PathBuf};
use std::process::Command;
use std::time::Duration;

fn bin() -> Command {
    Command::new(env!("CARGO_BIN_EXE_dryfront"))
}

fn root() -> PathBuf {
    PathBuf::from(env!("CARGO_MANIFEST_DIR"))
}

/// Every file under `dir` with its bytes (relative names).
fn snapshot(dir: &Path) -> BTreeMap<String, Vec<u8>> {
    fn walk(dir: &Path, rel: &str, out: &mut BTreeMap<String, Vec<u8>>) {
        for e in std::fs::read_dir(dir).unwrap() {
            let e = e.unwrap();
            let name = format!("{rel}{}", e.file_name().to_string_lossy());
            if e.file_type().unwrap().is_dir() {
                walk(&e.path(), &format!("{name}/"), out);
            } else {
                out.insert(name, std::fs::read(e.path()).unwrap());
            }
        }
    }
    let mut out = BTreeMap::new();
    walk(dir, "", &mut out);
    out
}

fn season(seed: &str, out: &Path) -> Command {
    let mut c = bin();
    c.args(["season", "run", "--scenario"])
        .arg(root().join("models/buying-points/bramble-fork.json"))
        .args(["--generate", "--loads", "60", "--seed", seed, "--out"])
        .arg(out);
    c
}

fn names_beside(dir: &Path) -> Vec<String> {
    let mut v: Vec<String> = std::fs::read_dir(dir)
        .unwrap()
        .map(|e| e.unwrap().file_name().to_string_lossy().into_owned())
        .collect();
    v.sort();
    v
}

#[test]
fn a_killed_season_run_leaves_the_old_set_or_the_new_one() {
    let dir = tempfile::tempdir().unwrap();
    let out = dir.path().join("season");
    let reference = dir.path().join("reference");
    assert!(season("2", &reference).output().unwrap().status.success());
    let new = snapshot(&reference);
    std::fs::remove_dir_all(&reference).unwrap();
    for ms in [20, 60, 150, 400, 700] {
        if out.exists() {
            std::fs::remove_dir_all(&out).unwrap();
        }
        assert!(season("1", &out).output().unwrap().status.success());
        let old = snapshot(&out);
        assert_ne!(old, new, "the two seeds give different sets");
        let mut child = season("2", &out)
            .stdout(std::process::Stdio::null())
            .spawn()
            .unwrap();
        std::thread::sleep(Duration::from_millis(ms));
        let _ = child.kill(); // its own PID only
        let _ = child.wait();
        let now = snapshot(&out);
        assert!(
            now == old || now == new,
            "killed after {ms} ms: the folder holds a mix: {:?}",
            now.keys().collect::<Vec<_>>()
        );
    }
    assert!(season("2", &out).output().unwrap().status.success());
    assert_eq!(snapshot(&out), new);
    assert_eq!(
        names_beside(dir.path()),
        ["season"],
        "no temporary names left"
    );
}

fn compare(strategies: &str, out: &Path, extra: &[&str]) -> std::process::Output {
    bin()
        .args([
            "compare",
            "--stop",
            "hours=2",
            "--strategies",
            strategies,
            "--out",
        ])
        .arg(out)
        .args(extra)
        .output()
        .unwrap()
}

#[test]
fn a_rerun_leaves_no_stale_files() {
    let dir = tempfile::tempdir().unwrap();
    let out = dir.path().join("cmp");
    let seven = "none;rise=3;rise=5;rise=8;plenum=35;rh=55,max=35;rise=8@18-9";
    let o = compare(seven, &out, &[]);
    assert!(o.status.success(), "{}", String::from_utf8_lossy(&o.stderr));
    let folders = |d: &Path| {
        std::fs::read_dir(d)
            .unwrap()
            .filter(|e| e.as_ref().unwrap().file_type().unwrap().is_dir())
            .count()
    };
    assert_eq!(folders(&out), 7);
    let o = compare("none;rise=5", &out, &[]);
    assert!(o.status.success(), "{}", String::from_utf8_lossy(&o.stderr));
    assert_eq!(folders(&out), 2, "only the two strategies of the last run");
    assert_eq!(names_beside(dir.path()), ["cmp"]);
}

#[test]
fn a_foreign_file_is_refused_without_replace() {
    let dir = tempfile::tempdir().unwrap();
    let out = dir.path().join("mine");
    std::fs::create_dir_all(&out).unwrap();
    std::fs::write(out.join("notes.txt"), "keep").unwrap();
    let o = season("1", &out).output().unwrap();
    let err = String::from_utf8_lossy(&o.stderr);
    assert_eq!(o.status.code(), Some(2), "{err}");
    assert_eq!(err.lines().count(), 1, "{err}");
    assert!(
        err.contains("notes.txt") && err.contains("--replace"),
        "{err}"
    );
    assert_eq!(
        std::fs::read_to_string(out.join("notes.txt")).unwrap(),
        "keep"
    );
    let o = season("1", &out).arg("--replace").output().unwrap();
    assert!(o.status.success(), "{}", String::from_utf8_lossy(&o.stderr));
    assert!(!out.join("notes.txt").exists());
    assert!(out.join("schedule.csv").is_file());
}
