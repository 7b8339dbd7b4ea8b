//! The bad-input corpus: every file in `tests/bad-inputs/` (made by `scripts/bad_inputs.py`, each a valid input
//! with one thing broken) is run through the real binary with the command in `tests/bad-inputs/manifest.tsv`, and
//! must exit with the listed code and print exactly the listed message: one line, starting `dryfront: error: `,
//! naming the file, and, for line-oriented formats, the line — never a panic or a usage text.
//!
//! Bless mode: `DRYFRONT_BLESS=1 cargo test --release --test bad_inputs` rewrites the exit codes and messages in the
//! manifest from what the binary prints now (then read the diff: a blessed message must still name file, line and
//! field). The structural checks below still run in bless mode.
use std::path::{Path, PathBuf};
use std::process::Command;

const MANIFEST: &str = "tests/bad-inputs/manifest.tsv";

/// Kinds whose files have lines, so their messages must carry one (`FILE:LINE:`) — except messages about the file
/// as a whole, listed in [`WHOLE_FILE`].
const LINE_KINDS: [&str; 4] = ["weather-csv/", "epw/", "tmy3/", "arrivals/"];

/// Messages about a whole file, which have no line to name.
const WHOLE_FILE: [&str; 6] = [
    "empty file",
    "no data rows",
    "no loads",
    "no header row and no data",
    "limit for an input file",
    "cannot read ",
];

struct Case {
    file: String,
    code: i32,
    command: String,
    message: String,
}

fn root() -> PathBuf {
    PathBuf::from(env!("CARGO_MANIFEST_DIR"))
}

fn read_manifest() -> (Vec<String>, Vec<Case>) {
    let text = std::fs::read_to_string(root().join(MANIFEST)).unwrap();
    let mut comments = Vec::new();
    let mut cases = Vec::new();
    for (i, line) in text.lines().enumerate() {
        if line.starts_with('#') || line.trim().is_empty() {
            comments.push(line.to_string());
            continue;
        }
        let f: Vec<&str> = line.split('\t').collect();
        assert_eq!(
            f.len(),
            4,
            "{MANIFEST}:{}: four tab-separated fields",
            i + 1
        );
        cases.push(Case {
            file: f[0].to_string(),
            code: f[1].parse().unwrap(),
            command: f[2].to_string(),
            message: f[3].to_string(),
        });
    }
    (comments, cases)
}

/// The path as given on the command line (relative to the repository root, where the binary runs).
fn file_arg(file: &str) -> String {
    if Path::new(file).is_absolute() {
        file.to_string()
    } else {
        format!("tests/bad-inputs/{file}")
    }
}

/// Run one case; returns (exit code, stderr, stdout).
fn run(case: &Case, out_dir: &Path) -> (Option<i32>, String, String) {
    let file = file_arg(&case.file);
    let out = out_dir.join("out");
    let args: Vec<String> = case
        .command
        .split(' ')
        .map(|a| {
            a.replace("{file}", &file)
                .replace("{out}", &out.to_string_lossy())
        })
        .collect();
    let o = Command::new(env!("CARGO_BIN_EXE_dryfront"))
        .args(&args)
        .current_dir(root())
        .env_remove("DRYFRONT_MODELS_DIR")
        .output()
        .unwrap();
    (
        o.status.code(),
        String::from_utf8_lossy(&o.stderr).into_owned(),
        String::from_utf8_lossy(&o.stdout).into_owned(),
    )
}

/// What every message must be, whatever its wording: one line, an error, naming the file (and a line where the
/// format has lines and the message is not about the whole file).
fn check_shape(case: &Case, code: Option<i32>, stderr: &str) -> Vec<String> {
    let mut problems = Vec::new();
    let file = file_arg(&case.file);
    if code != Some(2) {
        problems.push(format!("exit code {code:?}, expected 2"));
    }
    if stderr.contains("panicked") || stderr.contains("RUST_BACKTRACE") {
        problems.push("panicked".into());
    }
    if stderr.lines().count() != 1 || !stderr.ends_with('\n') {
        problems.push(format!("{} lines, expected one", stderr.lines().count()));
    }
    if !stderr.starts_with("dryfront: error: ") {
        problems.push("does not start with `dryfront: error: `".into());
    }
    if !stderr.contains(&file) {
        problems.push(format!("does not name the file {file}"));
    }
    let has_line = stderr
        .find(&format!("{file}:"))
        .map(|i| &stderr[i + file.len() + 1..])
        .is_some_and(|rest| rest.starts_with(|c: char| c.is_ascii_digit()));
    let whole_file = WHOLE_FILE.iter().any(|w| stderr.contains(w));
    if LINE_KINDS.iter().any(|k| case.file.starts_with(k)) && !has_line && !whole_file {
        problems.push("names no line".into());
    }
    problems
}

#[test]
fn every_bad_input_gets_its_one_line_message_and_exit_code() {
    let bless = std::env::var_os("DRYFRONT_BLESS").is_some_and(|v| v == "1");
    let (comments, mut cases) = read_manifest();
    let corpus_files = cases
        .iter()
        .filter(|c| !Path::new(&c.file).is_absolute())
        .count();
    assert!(corpus_files >= 150, "only {corpus_files} cases");
    let mut failures = Vec::new();
    for case in &mut cases {
        let dir = tempfile::tempdir().unwrap();
        let t0 = std::time::Instant::now();
        let (code, stderr, _stdout) = run(case, dir.path());
        let took = t0.elapsed();
        let mut problems = check_shape(case, code, &stderr);
        // Every case is refused while reading, before any work: a second is generous.
        if took.as_secs_f64() > 1.0 {
            problems.push(format!("took {took:?}"));
        }
        if dir.path().join("out").exists() {
            problems.push("left an output folder".into());
        }
        let got = stderr.trim_end_matches('\n').replace('\n', "\\n");
        if bless {
            case.code = code.unwrap_or(-1);
            case.message = got;
        } else {
            if code != Some(case.code) {
                problems.push(format!("exit code {code:?}, manifest says {}", case.code));
            }
            if got != case.message {
                problems.push(format!(
                    "message differs:\n    got:  {got}\n    want: {}",
                    case.message
                ));
            }
        }
        if !problems.is_empty() {
            failures.push(format!(
                "{} ({}): {}",
                case.file,
                case.command,
                problems.join("; ")
            ));
        }
    }
    if bless {
        let mut text = comments.join("\n") + "\n";
        for c in &cases {
            text += &format!("{}\t{}\t{}\t{}\n", c.file, c.code, c.command, c.message);
        }
        std::fs::write(root().join(MANIFEST), text).unwrap();
    }
    assert!(
        failures.is_empty(),
        "{} of {} cases failed:\n{}",
        failures.len(),
        cases.len(),
        failures.join("\n")
    );
}

#[test]
fn every_corpus_file_is_in_the_manifest_and_every_entry_exists() {
    let (_, cases) = read_manifest();
    let listed: std::collections::BTreeSet<String> = cases.iter().map(|c| c.file.clone()).collect();
    let dir = root().join("tests/bad-inputs");
    let mut on_disk = std::collections::BTreeSet::new();
    for kind in std::fs::read_dir(&dir).unwrap() {
        let kind = kind.unwrap().path();
        if kind.is_dir() {
            for f in std::fs::read_dir(&kind).unwrap() {
                let f = f.unwrap().path();
                on_disk.insert(f.strip_prefix(&dir).unwrap().to_string_lossy().into_owned());
            }
        }
    }
    let unlisted: Vec<_> = on_disk.difference(&listed).collect();
    assert!(
        unlisted.is_empty(),
        "files not in the manifest: {unlisted:?}"
    );
    for c in &cases {
        let p = Path::new(&c.file);
        assert!(
            p.is_absolute()
                || c.file.starts_with("missing/")
                || c.file == "epw"
                || dir.join(p).exists(),
            "listed but absent: {}",
            c.file
        );
    }
}
