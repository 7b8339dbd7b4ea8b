//! `dryfront status`: a load on air from the operator's status file — replay, adjustment to the readings, and the
//! forecast of its finish with an ensemble and heater choices for the remaining time.
use std::path::PathBuf;

use anyhow::Context;

use crate::drying::heater::StrategySpec;
use crate::input::status::read_status;
use crate::load::checked_heater;
use crate::report::output::check_target;
use crate::report::status::{status_outputs, status_page, status_text};
use crate::status::forecast::forecast;
use crate::status::{ForecastSettings, WhatIf};
use crate::units::UnitSystem;
use crate::weather::ensemble::Spread;

/// Arguments of `dryfront status`.
#[derive(Debug, clap::Args)]
pub struct StatusArgs {
    /// The load's status file (JSON: scenario, scale ticket's net mass, on-air time and moisture, observed and
    /// forecast weather, readings; see README "At the dryer, today").
    pub file: PathBuf,
    /// Weather members around the forecast for the P10/P50/P90 finish (0: none; an even number keeps the
    /// antithetic pairs whole).
    #[arg(long, default_value_t = 50)]
    pub members: usize,
    /// The forecast's dry-bulb error one day ahead (standard deviation), K; it grows with the square root of the
    /// lead time. The default is our own reading of public day-one forecasts (from memory, unverified).
    #[arg(long, default_value_t = 1.5)]
    pub forecast_error_k: f64,
    /// The forecast's dew-point error one day ahead, K (default: as the dry bulb's).
    #[arg(long)]
    pub dew_error_k: Option<f64>,
    /// Seed of the ensemble.
    #[arg(long, default_value_t = 1)]
    pub seed: u64,
    /// Heater choices for the remaining time, `;`-separated in the heater language (`none`, `rise=8`,
    /// `plenum=35`, `rh=55,max=35`, with an optional burner window `@6-20`; set-points in °F under `--units us`).
    /// Default: `none` and the load's own strategy with the burner off from 20:00 to 06:00 ("stop the burner
    /// tonight").
    #[arg(long)]
    pub what_if: Option<String>,
    /// Run a heater choice above the crop's safe plenum maximum anyway.
    #[arg(long)]
    pub force: bool,
    /// Units for the printed summary, `report.html` and `finish.svg` (and the `--what-if` set-points).
    #[arg(long, value_enum, default_value_t = UnitSystem::Si)]
    pub units: UnitSystem,
    /// Folder for `report.html`, `status.json`, `members.csv` and `finish.svg` (written whole or not at all).
    #[arg(long)]
    pub out: Option<PathBuf>,
    /// Write into the --out folder even though it holds files dryfront did not write.
    #[arg(long)]
    pub replace: bool,
}

/// The weather members' spread from `--forecast-error-k`, the dew point's error (as the dry bulb's if `None`) and
/// `--seed`, each error checked: `status` and `board` read them alike.
pub(super) fn forecast_spread(
    forecast_error_k: f64,
    dew_error_k: Option<f64>,
    seed: u64,
) -> anyhow::Result<Spread> {
    let t = crate::error::check_range("--forecast-error-k", forecast_error_k, 0.0, 10.0, "K")?;
    let dew = match dew_error_k {
        Some(d) => crate::error::check_range("--dew-error-k", d, 0.0, 10.0, "K")?,
        None => t,
    };
    Ok(Spread {
        t_sigma_24h_k: t,
        dew_sigma_24h_k: dew,
        seed,
    })
}

/// `dryfront status`.
pub fn run(a: StatusArgs) -> anyhow::Result<()> {
    let input = read_status(&a.file)?;
    if let Some(dir) = &a.out {
        check_target(dir, &input.inputs, a.replace)?;
    }
    let spec = &input.status.spec;
    crate::error::check_range("--members", a.members as f64, 0.0, 1000.0, "")?;
    let spread = forecast_spread(a.forecast_error_k, a.dew_error_k, a.seed)?;
    let own = spec.heater.spec;
    let choices = match &a.what_if {
        Some(s) => s
            .split(';')
            .map(str::trim)
            .filter(|s| !s.is_empty())
            .map(String::from)
            .collect(),
        None => vec![
            "none".to_string(),
            StrategySpec {
                window_h: Some((6, 20)),
                ..own
            }
            .to_string(),
        ],
    };
    let mut what_if = vec![WhatIf {
        label: format!("{own} (as now)"),
        heater: spec.heater,
    }];
    // The default choices are written in SI; the user's in the chosen units.
    let written = if a.what_if.is_some() {
        a.units
    } else {
        UnitSystem::Si
    };
    for c in choices {
        let strategy =
            StrategySpec::parse_in(&c, written).with_context(|| format!("--what-if {c:?}"))?;
        let (heater, warning) = checked_heater(
            &spec.crop,
            strategy,
            spec.heater.burner_w,
            spec.heater.fuel,
            a.force,
        )
        .with_context(|| format!("--what-if {c:?}"))?;
        if let Some(w) = warning {
            eprintln!("dryfront: warning: {w} (running because of --force)");
        }
        // Labelled in SI heater language (status.json); reports rewrite it in the chosen units.
        what_if.push(WhatIf {
            label: strategy.to_string(),
            heater,
        });
    }
    let settings = ForecastSettings {
        members: a.members,
        spread,
        what_if,
    };
    let f = forecast(&input.status, &settings)?;
    let printed = status_text(&input.name, &input.status, &f, a.units);
    print!("{printed}");
    if let Some(dir) = &a.out {
        let mut set = status_outputs(&input.name, &input.status, &f);
        let page = status_page(
            (&input.name, a.units),
            &input.status,
            &f,
            &set,
            printed,
            super::inputs_as_run(&input.inputs)?,
        );
        set.add("report.html", page.render());
        set.commit(dir, &input.inputs, a.replace)?;
        println!(
            "  wrote report.html, status.json, members.csv and finish.svg to {}",
            dir.display()
        );
    }
    Ok(())
}
