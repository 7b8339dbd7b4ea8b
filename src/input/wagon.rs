//! The published wagon case's inputs (`calibrate::wagon`): the bundled wagon container and the bundled TMY3 year
//! (`weather-samples/723170TYA.CSV`) placed in 2026. The one set-up of `examples/calibrate_wagon.rs`,
//! `examples/wagon_study.rs` and `tests/deep_bed_trade_facts.rs`.

use std::path::Path;
use std::sync::Arc;

use crate::calibrate::wagon::WagonCase;
use crate::error::InputError;
use crate::input::scenario::read_container;
use crate::weather::series::ReadOptions;

/// The published wagon (`wagon-4m`) on the bundled TMY3 year placed in 2026.
pub fn published_wagon_case() -> Result<WagonCase, InputError> {
    let opts = ReadOptions {
        year: Some(2026),
        ..ReadOptions::default()
    };
    let path = Path::new(env!("CARGO_MANIFEST_DIR")).join("weather-samples/723170TYA.CSV");
    let (weather, _) = crate::weather::read(&path, None, &opts)?;
    let (container, _) = read_container(None, "wagon-4m", "container")?;
    Ok(WagonCase::published(container, Arc::new(weather)))
}
