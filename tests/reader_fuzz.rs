//! Fuzzing of every line-oriented reader (our weather CSV, EPW, TMY3, arrivals CSV) in the normal test run: on
//! arbitrary bytes and on valid files mutated by byte flips, inserted bytes, truncation and duplicated or deleted
//! lines, each reader must return `Ok` or its typed error — never panic — and an error must be one line naming the
//! file. The normal run takes [`CASES`] cases per reader and input kind; `long_fuzz_run` (ignored) takes
//! `PROPTEST_CASES` (default 20 000) of each:
//! `PROPTEST_CASES=20000 cargo test --release --test reader_fuzz -- --ignored`.
use std::path::Path;

use dryfront::error::InputError;
use dryfront::input::text_from_bytes;
use dryfront::season::arrivals::parse_arrivals_csv;
use dryfront::weather::{self, ReadOptions};
use proptest::prelude::*;
use proptest::test_runner::{Config, TestRunner};

/// Cases per reader and input kind in the normal run: small, so the whole suite stays fast.
const CASES: u32 = 64;

#[derive(Debug, Clone, Copy)]
enum Reader {
    Csv,
    Epw,
    Tmy3,
    Arrivals,
}

const READERS: [Reader; 4] = [Reader::Csv, Reader::Epw, Reader::Tmy3, Reader::Arrivals];

fn root() -> &'static Path {
    Path::new(env!("CARGO_MANIFEST_DIR"))
}

/// A valid file of each kind to mutate.
fn seed(r: Reader) -> Vec<u8> {
    let read = |p: &str| std::fs::read(root().join(p)).unwrap();
    match r {
        Reader::Csv => (String::from(
            "# utc_offset=-05:00\n# elevation_m=15\ntimestamp,temp_c,rh_pct,dew_point_c,pressure_kpa,rain_mm,wind_m_s,filled\n",
        ) + &(0..24)
            .map(|h| format!("2026-09-01T{h:02}:00,{},{},10,101.2,0,2,0\n", 15 + h / 2, 50 + h))
            .collect::<String>())
        .into_bytes(),
        Reader::Epw => read("tests/fixtures/hand_made.epw"),
        Reader::Tmy3 => read("weather-samples/723170TYA.CSV")
            .split_inclusive(|b| *b == b'\n')
            .take(60)
            .flatten()
            .copied()
            .collect(),
        Reader::Arrivals => read("models/buying-points/wrenfield-arrivals.csv"),
    }
}

/// Run one reader the way the program does (decode, then parse); panics only if the reader does something other
/// than `Ok` or a one-line typed error naming the file.
fn check(r: Reader, bytes: &[u8]) -> Result<(), TestCaseError> {
    let path = Path::new("fuzz/input.txt");
    let result: Result<(), InputError> = text_from_bytes(path, bytes).and_then(|text| {
        let opts = ReadOptions {
            year: Some(2025),
            ..ReadOptions::default()
        };
        match r {
            Reader::Csv => weather::parse_csv(path, &text, &opts).map(drop),
            Reader::Epw => weather::parse_epw(path, &text, &ReadOptions::default())
                .map(drop)
                .and(weather::parse_epw(path, &text, &opts).map(drop)),
            Reader::Tmy3 => weather::parse_tmy3(path, &text, &opts).map(drop),
            Reader::Arrivals => parse_arrivals_csv(path, text.as_bytes(), None).map(drop),
        }
    });
    if let Err(e) = result {
        let msg = e.to_string();
        prop_assert!(!msg.contains('\n'), "{r:?}: two lines: {msg}");
        prop_assert!(msg.contains("fuzz/input.txt"), "{r:?}: no file: {msg}");
    }
    Ok(())
}

#[derive(Debug, Clone)]
enum Mutation {
    Flip(usize, u8),
    Insert(usize, u8),
    Truncate(usize),
    DuplicateLine(usize),
    DeleteLine(usize),
}

fn mutation() -> impl Strategy<Value = Mutation> {
    // Bytes the formats give meaning to, and some they do not.
    let byte = prop::sample::select(b",;\n\r\t\"#:.-+0159eE/ Tx\xff\xc3\x00".to_vec());
    prop_oneof![
        (any::<usize>(), any::<u8>()).prop_map(|(p, b)| Mutation::Flip(p, b)),
        (any::<usize>(), byte).prop_map(|(p, b)| Mutation::Insert(p, b)),
        any::<usize>().prop_map(Mutation::Truncate),
        any::<usize>().prop_map(Mutation::DuplicateLine),
        any::<usize>().prop_map(Mutation::DeleteLine),
    ]
}

fn apply(mut bytes: Vec<u8>, ops: &[Mutation]) -> Vec<u8> {
    for op in ops {
        let n = bytes.len().max(1);
        match *op {
            Mutation::Flip(p, x) => {
                if let Some(b) = bytes.get_mut(p % n) {
                    *b ^= x | 1;
                }
            }
            Mutation::Insert(p, b) => bytes.insert(p % (bytes.len() + 1), b),
            Mutation::Truncate(p) => bytes.truncate(p % n),
            Mutation::DuplicateLine(k) | Mutation::DeleteLine(k) => {
                let mut lines: Vec<Vec<u8>> = bytes
                    .split_inclusive(|b| *b == b'\n')
                    .map(<[u8]>::to_vec)
                    .collect();
                if lines.is_empty() {
                    continue;
                }
                let i = k % lines.len();
                if matches!(op, Mutation::DuplicateLine(_)) {
                    let l = lines[i].clone();
                    lines.insert(i, l);
                } else {
                    lines.remove(i);
                }
                bytes = lines.concat();
            }
        }
    }
    bytes
}

fn arbitrary_bytes() -> impl Strategy<Value = Vec<u8>> {
    proptest::collection::vec(any::<u8>(), 0..2000)
}

fn mutations() -> impl Strategy<Value = Vec<Mutation>> {
    proptest::collection::vec(mutation(), 1..8)
}

/// Both properties for every reader, `cases` each.
fn run_all(cases: u32) {
    for r in READERS {
        let s = seed(r);
        let mut runner = TestRunner::new(Config::with_cases(cases));
        runner
            .run(&arbitrary_bytes(), |bytes| check(r, &bytes))
            .unwrap_or_else(|e| panic!("{r:?} on arbitrary bytes: {e}"));
        let mut runner = TestRunner::new(Config::with_cases(cases));
        runner
            .run(&mutations(), |ops| check(r, &apply(s.clone(), &ops)))
            .unwrap_or_else(|e| panic!("{r:?} on a mutated file: {e}"));
    }
}

#[test]
fn the_seeds_are_valid_so_mutations_start_from_a_readable_file() {
    for r in READERS {
        let path = Path::new("seed");
        let text = text_from_bytes(path, &seed(r)).unwrap();
        let opts = ReadOptions {
            year: Some(2025),
            ..ReadOptions::default()
        };
        let ok = match r {
            Reader::Csv => weather::parse_csv(path, &text, &opts).map(drop),
            Reader::Epw => weather::parse_epw(path, &text, &ReadOptions::default()).map(drop),
            Reader::Tmy3 => weather::parse_tmy3(path, &text, &opts).map(drop),
            Reader::Arrivals => parse_arrivals_csv(path, text.as_bytes(), None).map(drop),
        };
        assert!(ok.is_ok(), "{r:?}: {}", ok.unwrap_err());
    }
}

#[test]
fn readers_return_ok_or_a_one_line_error_on_random_and_mutated_input() {
    run_all(CASES);
}

#[test]
#[ignore = "long: PROPTEST_CASES (default 20000) cases per reader and input kind"]
fn long_fuzz_run() {
    let cases = std::env::var("PROPTEST_CASES")
        .ok()
        .and_then(|v| v.parse().ok())
        .unwrap_or(20_000);
    run_all(cases);
}
