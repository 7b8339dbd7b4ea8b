//! Every command line shown in the README runs as written, and a reader that stops reading our output ends the
//! program quietly with success.
//!
//! The README's command lines are its fenced `sh` blocks (`cargo run --release -- ARGS` runs the binary with ARGS)
//! and every inline code span that starts with `dryfront `. Each runs in a fresh folder holding `models/` (a link)
//! and a copy of `weather-samples/`, so relative paths work as in a checkout and outputs land in the folder. Where a
//! command as written would take minutes, or names a placeholder, the table `EDITS` changes it, and each edit must
//! still match its command (so the table cannot go stale silently).
use std::io::Read;
use std::path::Path;
use std::process::{Command, Stdio};

/// Edits to README commands: (command starts with, text as written, text run, why).
const EDITS: &[(&str, &str, &str, &str)] = &[
    (
        "season sweep",
        "--dryers 4..10",
        "--dryers 4..5",
        "7 dryer counts × 10 seasons × 3 heaters × 2 policies take minutes on a 2-core machine; 2 counts keep every \
         heater and policy",
    ),
    (
        "season sweep",
        "--seasons 10",
        "--seasons 1",
        "one seeded season per cell exercises the same path as ten",
    ),
    (
        "season run",
        "--loads 250",
        "--loads 40",
        "40 loads exercise the same path; 250 take several seconds",
    ),
    (
        "starts",
        "--count 10",
        "--count 2",
        "two start times exercise the same path as ten",
    ),
    (
        "weather summary",
        "FILE",
        "weather-samples/723170TYA.CSV",
        "FILE is a placeholder; the bundled TMY3 year stands in",
    ),
    (
        "weather summary",
        "[--from 2026-09-01 --days 30] [--out cleaned.csv]",
        "--from 2026-09-01 --days 30 --out cleaned.csv",
        "square brackets mark optional parts; both are run",
    ),
    (
        "calibrate",
        "--load SCENARIO SAMPLES.csv",
        "--load examples/calibration/bf-load-23.json examples/calibration/bf-load-23-samples.csv",
        "SCENARIO and SAMPLES.csv are placeholders; the README's own calibration example stands in",
    ),
];

/// README commands not run here, with the reason.
const NOT_RUN: &[(&str, &str)] = &[
    (
        "cargo test --release",
        "runs the test suite this test belongs to",
    ),
    (
        "dryfront season merge --out sweep/ shards/shard-*/sweep-shard-*-of-4.json",
        "needs the four shard files of the README's sharded sweep and a shell to expand the pattern; \
         tests/season_shard.rs runs shards and their merge end to end",
    ),
];

fn root() -> &'static Path {
    Path::new(env!("CARGO_MANIFEST_DIR"))
}

/// Split a shell line into words: double and single quotes group, nothing else is special.
fn words(line: &str) -> Vec<String> {
    let (mut out, mut cur, mut quote, mut any) = (Vec::new(), String::new(), None, false);
    for c in line.chars() {
        match (quote, c) {
            (None, '"' | '\'') => {
                quote = Some(c);
                any = true;
            }
            (Some(q), _) if c == q => quote = None,
            (None, ' ' | '\t') => {
                if any {
                    out.push(std::mem::take(&mut cur));
                }
                any = false;
            }
            _ => {
                cur.push(c);
                any = true;
            }
        }
    }
    assert!(quote.is_none(), "unclosed quote in README command: {line}");
    if any {
        out.push(cur);
    }
    out
}

/// The README's command lines, as written: fenced `sh` blocks (continuations joined, comments dropped) and inline
/// code spans starting `dryfront `.
fn readme_commands(text: &str) -> Vec<String> {
    let mut cmds = Vec::new();
    let mut in_sh = false;
    let mut pending = String::new();
    for line in text.lines() {
        let t = line.trim();
        if t.starts_with("```") {
            in_sh = !in_sh && t == "```sh";
            continue;
        }
        if in_sh {
            let code = t.split(" #").next().unwrap_or("").trim();
            if let Some(head) = code.strip_suffix('\\') {
                pending.push_str(head);
                continue;
            }
            pending.push_str(code);
            if !pending.trim().is_empty() {
                cmds.push(std::mem::take(&mut pending).trim().to_string());
            }
            pending.clear();
            continue;
        }
        for (i, span) in line.split('`').enumerate() {
            if i % 2 == 1 && span.starts_with("dryfront ") {
                cmds.push(span.to_string());
            }
        }
    }
    cmds
}

/// The arguments to run for one README command (`None` when it is in `NOT_RUN`), with the edits that applied.
fn arguments(cmd: &str, used: &mut [bool]) -> Option<Vec<String>> {
    if NOT_RUN.iter().any(|(c, _)| *c == cmd) {
        return None;
    }
    let args = cmd
        .strip_prefix("cargo run --release -- ")
        .or_else(|| cmd.strip_prefix("dryfront "))
        .unwrap_or_else(|| {
            panic!("README command neither `dryfront …` nor `cargo run --release -- …`: {cmd}")
        });
    let mut args = args.to_string();
    for (i, (prefix, from, to, _why)) in EDITS.iter().enumerate() {
        if args.starts_with(prefix) && args.contains(from) {
            args = args.replace(from, to);
            used[i] = true;
        }
    }
    Some(words(&args))
}

/// A fresh folder that looks like a checkout for reading: `models/`, `examples/` and `survey-samples/` linked,
/// `weather-samples/` copied (a README command regenerates a file inside it).
fn workdir() -> tempfile::TempDir {
    let dir = tempfile::tempdir().unwrap();
    for linked in ["models", "examples", "survey-samples"] {
        std::os::unix::fs::symlink(root().join(linked), dir.path().join(linked)).unwrap();
    }
    copy_dir(
        &root().join("weather-samples"),
        &dir.path().join("weather-samples"),
    );
    dir
}

fn copy_dir(from: &Path, to: &Path) {
    std::fs::create_dir_all(to).unwrap();
    for e in std::fs::read_dir(from).unwrap() {
        let e = e.unwrap();
        if e.file_type().unwrap().is_dir() {
            copy_dir(&e.path(), &to.join(e.file_name()));
        } else {
            std::fs::copy(e.path(), to.join(e.file_name())).unwrap();
        }
    }
}

#[test]
fn every_readme_command_runs_as_written() {
    let mut cmds = Vec::new();
    for doc in ["README.md", "weather-samples/README.md"] {
        cmds.extend(readme_commands(
            &std::fs::read_to_string(root().join(doc)).unwrap(),
        ));
    }
    // The README shows at least its two commands and the command table (9 rows at the time of writing).
    assert!(cmds.len() >= 11, "found only {cmds:?}");
    let mut used = vec![false; EDITS.len()];
    let mut failures = Vec::new();
    for cmd in &cmds {
        let Some(args) = arguments(cmd, &mut used) else {
            continue;
        };
        let dir = workdir();
        let o = Command::new(env!("CARGO_BIN_EXE_dryfront"))
            .args(&args)
            .current_dir(dir.path())
            .output()
            .unwrap();
        if !o.status.success() {
            failures.push(format!(
                "{cmd}\n  ran: {args:?}\n  exit {:?}: {}",
                o.status.code(),
                String::from_utf8_lossy(&o.stderr).trim()
            ));
        }
    }
    for (i, (prefix, from, ..)) in EDITS.iter().enumerate() {
        assert!(
            used[i],
            "edit `{from}` on `{prefix}` matches no README command: update EDITS"
        );
    }
    assert!(failures.is_empty(), "{}", failures.join("\n"));
}

#[test]
fn command_lines_are_read_from_the_markdown() {
    let md = "text `dryfront props emc --temp 30` and `--flag`\n```sh\ncargo run --release -- demo   # a \
              comment\ncargo run --release -- weather synth \\\n    --seasons 1\n```\n```json\n{}\n```\n";
    assert_eq!(
        readme_commands(md),
        [
            "dryfront props emc --temp 30",
            "cargo run --release -- demo",
            "cargo run --release -- weather synth --seasons 1"
        ]
    );
    assert_eq!(
        words(r#"compare --strategies "none;rise=5" --x 'a b'"#),
        ["compare", "--strategies", "none;rise=5", "--x", "a b"]
    );
}

/// Run with standard output a pipe whose reader has already gone: the first line printed meets a broken pipe.
fn with_closed_stdout(args: &[&str]) -> std::process::Output {
    let mut child = Command::new(env!("CARGO_BIN_EXE_dryfront"))
        .args(args)
        .current_dir(root())
        .stdout(Stdio::piped())
        .stderr(Stdio::piped())
        .spawn()
        .unwrap();
    drop(child.stdout.take());
    let mut err = String::new();
    child
        .stderr
        .take()
        .unwrap()
        .read_to_string(&mut err)
        .unwrap();
    let status = child.wait().unwrap();
    std::process::Output {
        status,
        stdout: Vec::new(),
        stderr: err.into_bytes(),
    }
}

#[test]
fn a_broken_pipe_ends_quietly_with_success() {
    // `dryfront weather summary FILE --daily | head -1` exited 101 with a panic message before the fix.
    for args in [
        &[
            "weather",
            "summary",
            "weather-samples/723170TYA.CSV",
            "--daily",
        ][..],
        &["props", "emc", "--temp", "30", "--rh", "60"][..],
    ] {
        let o = with_closed_stdout(args);
        assert_eq!(o.status.code(), Some(0), "{args:?}");
        let err = String::from_utf8_lossy(&o.stderr);
        assert!(!err.contains("panicked"), "{args:?}: {err}");
    }
}
