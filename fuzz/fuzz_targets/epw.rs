//! Fuzz the EPW weather reader: any bytes must give `Ok` or `Err`, never a panic.
#![no_main]
use std::path::Path;

use dryfront::weather::{parse_epw, series::text_from_bytes, ReadOptions};
use libfuzzer_sys::fuzz_target;

fuzz_target!(|data: &[u8]| {
    let path = Path::new("fuzz.epw");
    if let Ok(text) = text_from_bytes(path, data) {
        let _ = parse_epw(path, &text, &ReadOptions::default());
        let typical_year = ReadOptions {
            year: Some(2025),
            max_gap_h: 24,
            ..ReadOptions::default()
        };
        let _ = parse_epw(path, &text, &typical_year);
    }
});
