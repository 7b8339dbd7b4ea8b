//! The `weather` subcommands through the real binary: seeded output identical across thread counts and runs, the
//! committed demo season reproducible from its statistics, and summaries of the real TMY3 file with units.
use std::path::Path;
use std::process::Command;

fn dryfront(args: &[&str], threads: &str) -> std::process::Output {
    Command::new(env!("CARGO_BIN_EXE_dryfront"))
        .args(args)
        .env("RAYON_NUM_THREADS", threads)
        .current_dir(env!("CARGO_MANIFEST_DIR"))
        .output()
        .unwrap()
}

#[test]
fn synth_output_is_identical_on_one_and_two_threads() {
    let dir = tempfile::tempdir().unwrap();
    let (a, b) = (dir.path().join("a"), dir.path().join("b"));
    for (out, threads) in [(&a, "1"), (&b, "2")] {
        let o = dryfront(
            &[
                "weather",
                "synth",
                "--stats",
                "weather-samples/cypress-neck-stats.json",
                "--seasons",
                "4",
                "--seed",
                "9",
                "--start",
                "2026-09-01",
                "--days",
                "30",
                "--out",
                out.to_str().unwrap(),
            ],
            threads,
        );
        assert!(o.status.success(), "{}", String::from_utf8_lossy(&o.stderr));
    }
    for i in 0..4 {
        let name = format!("season_{i:03}.csv");
        assert_eq!(
            std::fs::read(a.join(&name)).unwrap(),
            std::fs::read(b.join(&name)).unwrap(),
            "{name}"
        );
    }
}

#[test]
fn committed_demo_season_regenerates_byte_for_byte() {
    // Golden file: catches unintended change in the generator, proves nothing about realism (weather_synth.rs does).
    // Regenerate on purpose with the command in weather-samples/README.md.
    let dir = tempfile::tempdir().unwrap();
    let o = dryfront(
        &[
            "weather",
            "synth",
            "--stats",
            "weather-samples/cypress-neck-stats.json",
            "--seasons",
            "1",
            "--seed",
            "2026",
            "--start",
            "2026-09-01",
            "--days",
            "91",
            "--out",
            dir.path().to_str().unwrap(),
        ],
        "2",
    );
    assert!(o.status.success(), "{}", String::from_utf8_lossy(&o.stderr));
    let root = Path::new(env!("CARGO_MANIFEST_DIR"));
    let committed =
        std::fs::read_to_string(root.join("weather-samples/cypress-neck-2026/season_000.csv"))
            .unwrap();
    let fresh = std::fs::read_to_string(dir.path().join("season_000.csv")).unwrap();
    // The provenance comment names the output folder; compare from the header row on.
    let body = |s: &str| {
        s.lines()
            .skip_while(|l| l.starts_with('#'))
            .collect::<Vec<_>>()
            .join("\n")
    };
    assert_eq!(body(&committed), body(&fresh));
}

#[test]
fn summary_of_the_real_file_prints_units_and_filled_hours() {
    let o = dryfront(
        &[
            "weather",
            "summary",
            "weather-samples/723170TYA.CSV",
            "--from",
            "2026-09-01",
            "--days",
            "91",
        ],
        "1",
    );
    let out = String::from_utf8_lossy(&o.stdout);
    assert!(o.status.success(), "{}", String::from_utf8_lossy(&o.stderr));
    assert!(out.contains("(2184 h, UTC offset -05:00)"), "{out}");
    assert!(out.contains("filled by interpolation: 0 h"), "{out}");
    assert!(
        out.contains("°C") && out.contains(" %") && out.contains("% d.b."),
        "{out}"
    );
    // A leap year cannot hold a typical year: clear error, exit 2.
    let o = dryfront(
        &[
            "weather",
            "summary",
            "weather-samples/723170TYA.CSV",
            "--year",
            "2028",
        ],
        "1",
    );
    assert_eq!(o.status.code(), Some(2));
    assert!(String::from_utf8_lossy(&o.stderr).contains("leap year"));
}

#[test]
fn cleaned_output_reads_back_and_marks_filled_hours() {
    let dir = tempfile::tempdir().unwrap();
    let input = dir.path().join("gappy.csv");
    std::fs::write(
        &input,
        "# utc_offset=-05:00\ntimestamp,temp_c,rh_pct\n2026-09-01T00:00,20,60\n2026-09-01T01:00,,62\n2026-09-01T03:00,23,66\n",
    )
    .unwrap();
    let out = dir.path().join("clean.csv");
    let o = dryfront(
        &[
            "weather",
            "summary",
            input.to_str().unwrap(),
            "--out",
            out.to_str().unwrap(),
        ],
        "1",
    );
    assert!(o.status.success(), "{}", String::from_utf8_lossy(&o.stderr));
    let stdout = String::from_utf8_lossy(&o.stdout);
    assert!(stdout.contains("filled by interpolation: 2 h"), "{stdout}");
    let text = std::fs::read_to_string(&out).unwrap();
    assert!(
        text.contains("2026-09-01T01:00:00-05:00,21.00,62.00,101.325,1"),
        "{text}"
    );
    assert!(
        text.contains("2026-09-01T02:00:00-05:00,22.00,64.00,101.325,1"),
        "{text}"
    );
}
