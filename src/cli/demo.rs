//! `dryfront demo`: the bundled demo scenario end to end, at the invented Bramble Fork Peanut Exchange (invented
//! Cypress Neck site, invented weather season): one load through the deep-bed model with its airflow map, zones and
//! pictures (`DIR/load/`), the same load under several heater strategies (`DIR/compare/`), a small season of
//! generated arrivals on the buying point's seven dryers (`DIR/season/`), and a property table of the peanut model
//! at a day's worth of invented air states (`DIR/properties.csv`).
//!
//! References: crop constants and their sources in `models/crops/peanut-inshell.json`; all demo data invented.
use std::path::PathBuf;

use anyhow::Context;

use crate::crop::Crop;
use crate::outfile::write_atomic;
use crate::props::psychro::{AirState, P_STD_PA};
use crate::units::wb_from_db;

/// Arguments of `dryfront demo`.
#[derive(Debug, clap::Args)]
pub struct DemoArgs {
    /// Folder to write the demo's outputs into (created if missing).
    #[arg(long, default_value = "demo-out")]
    pub out: PathBuf,
}

/// Invented hourly air states at the Bramble Fork buying point on a September harvest day (demo data only).
const DEMO_AIR: [(&str, f64, f64); 6] = [
    ("02:00 humid night", 17.0, 0.95),
    ("06:00 dawn fog", 15.5, 0.98),
    ("10:00 morning", 23.0, 0.72),
    ("14:00 afternoon", 31.0, 0.42),
    ("18:00 evening", 26.0, 0.60),
    ("22:00 late evening", 20.0, 0.85),
];

/// One row of the demo table.
struct Row {
    label: &'static str,
    ambient: AirState,
    heated: AirState,
    kernel_emc_db: f64,
    hull_emc_db: f64,
    pod_emc_db: f64,
}

/// Run the demo.
pub fn run(args: DemoArgs) -> anyhow::Result<()> {
    use super::dry::{run_compare, run_dry, CompareArgs, DryArgs, LoadOptions};
    let started = std::time::Instant::now();
    let load = |sub: &str| LoadOptions {
        stop: None,
        scenario: "demo-load".into(),
        start_offset_h: 0.0,
        initial_pct: None,
        force: false,
        units: crate::units::UnitSystem::Si,
        out: Some(args.out.join(sub)),
    };
    println!("== 1. One load (deep-bed model, airflow solved through plenum, floor and bed)");
    run_dry(DryArgs {
        load: load("load"),
        strategy: None,
    })?;
    println!("\n== 2. The same load under four heater strategies");
    run_compare(CompareArgs {
        load: load("compare"),
        strategies: "none;rise=5;rise=8;rh=55,max=35".into(),
    })?;
    println!("\n== 3. A small season at the buying point (120 generated loads, deep-bed drier on a coarse grid)");
    let bp = crate::models::resolve("buying-points", "bramble-fork", "demo buying point")?;
    super::season::run(super::season::SeasonCommand::Run(
        super::season::RunArgs::demo(bp, args.out.join("season")),
    ))?;
    println!("\n== 4. Property table");
    property_table(&args.out)?;
    println!(
        "\ndemo finished in {:.1} s; outputs in {}",
        started.elapsed().as_secs_f64(),
        args.out.display()
    );
    Ok(())
}

/// The peanut model at a day's worth of invented air states, ambient and heated, to `out/properties.csv`.
fn property_table(out: &std::path::Path) -> anyhow::Result<()> {
    let crop = Crop::load_named("peanut-inshell")?;
    let rows: Vec<Row> = DEMO_AIR
        .iter()
        .map(|&(label, t_c, rh)| {
            let ambient = AirState::from_rh(t_c, rh, P_STD_PA);
            // Heater: full rise unless that passes the plenum cap.
            let t_plenum_c =
                (t_c + crop.safety.max_temp_rise_k).min(crop.safety.max_plenum_temp_c.max(t_c));
            let heated = ambient.heated_by(t_plenum_c - t_c);
            let eq = crop.moisture.equilibrium(heated.t_c, heated.rh());
            Row {
                label,
                ambient,
                heated,
                kernel_emc_db: eq.m_kernel_db,
                hull_emc_db: eq.m_hull_db,
                pod_emc_db: crop.moisture.pod_moisture_db(&eq),
            }
        })
        .collect();

    println!("Bramble Fork buying point (invented demo data): peanut-inshell properties");
    println!(
        "{:<20} {:>8} {:>7} {:>9} {:>8} {:>11} {:>11} {:>11} {:>10}",
        "air state",
        "T °C",
        "RH %",
        "plenum °C",
        "RH %",
        "kernel %wb",
        "hull %wb",
        "pod %wb",
        "kJ/kg da"
    );
    let mut w = csv::Writer::from_writer(Vec::new());
    w.write_record([
        "air_state",
        "ambient_t_c",
        "ambient_rh_pct",
        "plenum_t_c",
        "plenum_rh_pct",
        "humidity_ratio_kg_per_kg",
        "kernel_emc_wb_pct",
        "hull_emc_wb_pct",
        "pod_emc_wb_pct",
        "heat_kj_per_kg_dry_air",
    ])?;
    for r in &rows {
        let heat_kj = r.ambient.heat_to_j_per_kg(r.heated.t_c) / 1000.0;
        let cells = [
            r.label.to_string(),
            format!("{:.2}", r.ambient.t_c),
            format!("{:.1}", 100.0 * r.ambient.rh()),
            format!("{:.2}", r.heated.t_c),
            format!("{:.1}", 100.0 * r.heated.rh()),
            format!("{:.6}", r.ambient.w),
            format!("{:.2}", 100.0 * wb_from_db(r.kernel_emc_db)),
            format!("{:.2}", 100.0 * wb_from_db(r.hull_emc_db)),
            format!("{:.2}", 100.0 * wb_from_db(r.pod_emc_db)),
            format!("{heat_kj:.2}"),
        ];
        println!(
            "{:<20} {:>8} {:>7} {:>9} {:>8} {:>11} {:>11} {:>11} {:>10}",
            cells[0],
            cells[1],
            cells[2],
            cells[3],
            cells[4],
            cells[6],
            cells[7],
            cells[8],
            cells[9]
        );
        w.write_record(&cells)?;
    }
    let bytes = w.into_inner().context("finishing the CSV table")?;
    let path = out.join("properties.csv");
    write_atomic(&path, &bytes, &[crop.path.as_path()])?;
    println!("wrote {}", path.display());
    Ok(())
}
