//! `dryfront board`: the buying point's board — loads on the dryers forecast from their readings, the yard
//! dispatched by the buying point's policy over the next hours, with ranges, waits and fuel, and a Gantt picture.
use std::path::PathBuf;

use crate::board::{current_loads, plan, ranges};
use crate::input::board::read_board;
use crate::report::board::{board_outputs, board_page, board_text, BoardView};
use crate::report::output::check_target;
use crate::season::dispatch::{DispatchPolicy, MoistureRatePredictor};
use crate::season::drier::DeepBedDrier;
use crate::units::UnitSystem;

/// Arguments of `dryfront board`.
#[derive(Debug, clap::Args)]
pub struct BoardArgs {
    /// The board file (JSON: buying point, now, observed and forecast weather, loads on dryers with their
    /// readings, loads in the yard; see README "At the dryer, today").
    pub file: PathBuf,
    /// Hours to plan ahead from now.
    #[arg(long, default_value_t = 72.0)]
    pub horizon_h: f64,
    /// Dispatch policy, overriding the board file's: fcfs, wettest, shortest or wait-limit.
    #[arg(long)]
    pub policy: Option<String>,
    /// Weather members around the forecast for each load's finish range (0: none).
    #[arg(long, default_value_t = 10)]
    pub members: usize,
    /// The forecast's dry-bulb and dew-point error one day ahead (standard deviation), K (as `status`).
    #[arg(long, default_value_t = 1.5)]
    pub forecast_error_k: f64,
    /// Seed of the members.
    #[arg(long, default_value_t = 1)]
    pub seed: u64,
    /// Units for the printed board and `report.html`.
    #[arg(long, value_enum, default_value_t = UnitSystem::Si)]
    pub units: UnitSystem,
    /// Folder for `report.html`, `plan.csv` and `plan.svg` (written whole or not at all).
    #[arg(long)]
    pub out: Option<PathBuf>,
    /// Write into the --out folder even though it holds files dryfront did not write.
    #[arg(long)]
    pub replace: bool,
}

/// `dryfront board`.
pub fn run(a: BoardArgs) -> anyhow::Result<()> {
    let b = read_board(&a.file)?;
    if let Some(dir) = &a.out {
        check_target(dir, &b.inputs, a.replace)?;
    }
    let horizon = crate::error::check_range("--horizon-h", a.horizon_h, 1.0, 240.0, "h")?;
    crate::error::check_range("--members", a.members as f64, 0.0, 200.0, "")?;
    let spread = super::status::forecast_spread(a.forecast_error_k, None, a.seed)?;
    let policy = match &a.policy {
        Some(s) => DispatchPolicy::from_name(s).ok_or_else(|| {
            anyhow::anyhow!(
                "--policy: {s:?} is not a policy (expected fcfs, wettest, shortest or wait-limit)"
            )
        })?,
        None => b.policy,
    };
    let current = current_loads(&b.bp, &b.on_dryers, &spread, a.members)?;
    let drier = DeepBedDrier::new(b.template.clone());
    let predictor = MoistureRatePredictor {
        target_pct: b.bp.rules.target_kernel_pct,
        rate_pct_per_h: 0.5,
    };
    let run = plan(
        &b.bp, &b.yard, &current, b.now, horizon, &drier, policy, &predictor,
    )?;
    let r = ranges(&b.bp, &b.template, &b.yard, &run, b.now, &spread, a.members)?;
    let view = BoardView {
        name: &b.name,
        now: b.now,
        current: &current,
        plan: &run,
        ranges: &r,
        members: a.members,
    };
    let printed = board_text(&view, a.units);
    print!("{printed}");
    if let Some(dir) = &a.out {
        let mut set = board_outputs(&view);
        let page = board_page(
            &view,
            a.units,
            &set,
            printed,
            super::inputs_as_run(&b.inputs)?,
        );
        set.add("report.html", page.render());
        set.commit(dir, &b.inputs, a.replace)?;
        println!(
            "  wrote report.html, plan.csv and plan.svg to {}",
            dir.display()
        );
    }
    Ok(())
}
