//! A sweep run as shards and merged gives byte for byte the single-machine sweep (its `sweep.csv` and its summary);
//! the example shard script does the same; bad `--shard` values and shards that do not belong together are refused
//! in one line with exit code 2. The rate-rule drier keeps the runs short; the deep-bed drier goes through the same
//! code path (a shard only picks which runs it does).

use std::path::{Path, PathBuf};
use std::process::{Command, Output};

fn bin() -> Command {
    Command::new(env!("CARGO_BIN_EXE_dryfront"))
}

fn root() -> &'static str {
    env!("CARGO_MANIFEST_DIR")
}

/// The sweep's options (everything but --shard and --out).
fn options(seed: &str) -> Vec<String> {
    [
        "--scenario",
        &format!("{}/models/buying-points/bramble-fork.json", root()),
        "--dryers",
        "4..7",
        "--seasons",
        "5",
        "--loads",
        "120",
        "--heaters",
        "scenario;none",
        "--drier",
        "rate-rule",
        "--seed",
        seed,
    ]
    .iter()
    .map(|s| s.to_string())
    .collect()
}

fn sweep(seed: &str, shard: Option<&str>, out: &Path) -> Output {
    let mut c = bin();
    c.args(["season", "sweep"])
        .args(options(seed))
        .arg("--out")
        .arg(out);
    if let Some(s) = shard {
        c.args(["--shard", s]);
    }
    c.output().unwrap()
}

fn merge(files: &[PathBuf], out: &Path) -> Output {
    bin()
        .args(["season", "merge", "--out"])
        .arg(out)
        .args(files)
        .output()
        .unwrap()
}

fn ok(o: &Output) -> String {
    assert!(o.status.success(), "{}", String::from_utf8_lossy(&o.stderr));
    String::from_utf8_lossy(&o.stdout).into_owned()
}

/// The summary without its last line (which names the output folder).
fn summary(stdout: &str, out: &Path) -> String {
    stdout.replace(&out.display().to_string(), "OUT")
}

fn shard_files(dir: &Path, n: usize) -> Vec<PathBuf> {
    (1..=n)
        .map(|k| {
            let out = dir.join(format!("shard-{k}"));
            let o = sweep("3", Some(&format!("{k}/{n}")), &out);
            let s = ok(&o);
            assert!(s.contains(&format!("shard {k}/{n}")), "{s}");
            out.join(format!("sweep-shard-{k}-of-{n}.json"))
        })
        .collect()
}

fn refused(o: &Output, needle: &str) {
    let err = String::from_utf8_lossy(&o.stderr);
    assert_eq!(o.status.code(), Some(2), "{err}");
    assert_eq!(err.lines().count(), 1, "{err}");
    assert!(err.starts_with("dryfront: error: "), "{err}");
    assert!(err.contains(needle), "{needle:?} not in {err}");
}

#[test]
fn four_shards_merged_equal_the_unsharded_sweep() {
    let dir = tempfile::tempdir().unwrap();
    let whole = dir.path().join("whole");
    let whole_out = ok(&sweep("3", None, &whole));
    let files = shard_files(dir.path(), 4);
    let mut any_order = files.clone();
    any_order.swap(0, 3);
    let merged = dir.path().join("merged");
    let merged_out = ok(&merge(&any_order, &merged));
    let a = std::fs::read(whole.join("sweep.csv")).unwrap();
    let b = std::fs::read(merged.join("sweep.csv")).unwrap();
    assert!(a.len() > 1000);
    assert!(a == b, "merged sweep.csv differs from the unsharded one");
    assert_eq!(summary(&whole_out, &whole), summary(&merged_out, &merged));

    // A missing shard, a shard given twice, and a shard of another sweep are refused, naming the file.
    refused(
        &merge(&files[..3], &dir.path().join("m2")),
        "shard 4/4 missing",
    );
    let twice = [files.clone(), vec![files[0].clone()]].concat();
    refused(&merge(&twice, &dir.path().join("m3")), "is also given as");
    let other = dir.path().join("other");
    ok(&sweep("4", Some("2/4"), &other));
    let mixed = [
        files[..3].to_vec(),
        vec![other.join("sweep-shard-2-of-4.json")],
    ]
    .concat();
    let o = merge(&mixed, &dir.path().join("m4"));
    refused(&o, "belongs to another sweep");
    refused(&o, "setup.args");
    // A file that is no shard names its line and field.
    let bad = dir.path().join("bad.json");
    let text = std::fs::read_to_string(&files[0]).unwrap();
    std::fs::write(&bad, text.replacen("\"shard\": \"", "\"shard\": \"9", 1)).unwrap();
    let o = merge(std::slice::from_ref(&bad), &dir.path().join("m5"));
    refused(&o, "bad.json:3: field \"shard\"");
    assert!(!dir.path().join("m5").exists());
}

#[test]
fn bad_shard_values_are_refused_before_any_work() {
    let dir = tempfile::tempdir().unwrap();
    for bad in ["0/4", "5/4", "1/0", "a/b", "3", "1/2/3", ""] {
        let out = dir.path().join("out");
        let o = sweep("3", Some(bad), &out);
        refused(&o, "--shard");
        assert!(!out.exists(), "{bad}");
    }
}

/// The example script, in its plain-loop fallback (GNU parallel is not needed; when it is installed the same
/// script runs the shards through it).
#[test]
fn the_example_script_merges_to_the_unsharded_sweep() {
    let dir = tempfile::tempdir().unwrap();
    let whole = dir.path().join("whole");
    ok(&sweep("3", None, &whole));
    let out = dir.path().join("script");
    let o = Command::new("sh")
        .arg(format!("{}/scripts/sweep-shards.sh", root()))
        .arg("3")
        .arg(&out)
        .arg("--")
        .args(options("3"))
        .env("DRYFRONT", env!("CARGO_BIN_EXE_dryfront"))
        .env("SHARD_PLAIN", "1")
        .output()
        .unwrap();
    ok(&o);
    let a = std::fs::read(whole.join("sweep.csv")).unwrap();
    let b = std::fs::read(out.join("merged/sweep.csv")).unwrap();
    assert!(
        a == b,
        "the script's merged sweep.csv differs from the unsharded one"
    );
}
