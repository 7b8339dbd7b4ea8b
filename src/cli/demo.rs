//! `dryfront demo`: the bundled demo scenario end to end, at the invented Bramble Fork Peanut Exchange (invented
//! Cypress Neck site, invented weather season): one load through the deep-bed model with its airflow map, zones and
//! pictures (`DIR/load/`), the same load under several heater strategies (`DIR/compare/`), a small season of
//! generated arrivals on the buying point's seven dryers (`DIR/season/`), and a property table of the peanut model
//! at a day's worth of invented air states (`DIR/properties.csv`).
//!
//! References: crop constants and their sources in `models/crops/peanut-inshell.json`; all demo data invented.
use std::path::PathBuf;

use crate::crop::Crop;
use crate::props::psychro::{AirState, P_STD_PA};
use crate::report::output::{check_target, OutputSet};
use crate::report::props::{property_table, PropertyRow};

/// Arguments of `dryfront demo`.
#[derive(Debug, clap::Args)]
pub struct DemoArgs {
    /// Folder to write the demo's outputs into (created if missing; an earlier demo's set there is replaced whole).
    #[arg(long, default_value = "demo-out")]
    pub out: PathBuf,
    /// Write into the --out folder even though it holds files dryfront did not write (they are removed).
    #[arg(long)]
    pub replace: bool,
    /// Units for everything printed and for the summaries written (`us`: °F, cfm, in. of water, lb, gal).
    #[arg(long, value_enum, default_value_t = crate::units::UnitSystem::Si)]
    pub units: crate::units::UnitSystem,
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

/// Run the demo.
pub fn run(args: DemoArgs) -> anyhow::Result<()> {
    use super::dry::{compare, dry, CompareArgs, DryArgs, LoadOptions};
    let started = std::time::Instant::now();
    let load = LoadOptions {
        stop: None,
        scenario: "demo-load".into(),
        start_offset_h: 0.0,
        initial_pct: None,
        force: false,
        units: args.units,
        out: None,
        replace: false,
    };
    let bp = crate::models::resolve("buying-points", "bramble-fork", "demo buying point")?;
    let season_args = super::season::RunArgs::demo(bp, args.out.join("season"), args.units);
    let mut set = OutputSet::new();
    let mut inputs = Vec::new();
    // Refuse a bad folder before an hour of work: every file the demo reads is known once its models resolve.
    check_target(&args.out, &[], args.replace)?;
    println!("== 1. One load (deep-bed model, airflow solved through plenum, floor and bed)");
    let (sc, load_set) = dry(&DryArgs {
        load: load.clone(),
        strategy: None,
    })?;
    check_target(&args.out, &sc.inputs, args.replace)?;
    inputs.extend(sc.inputs);
    set.add_set("load", load_set);
    println!("\n== 2. The same load under four heater strategies");
    let (_, compare_set) = compare(&CompareArgs {
        load,
        strategies: "none;rise=5;rise=8;rh=55,max=35".into(),
    })?;
    set.add_set("compare", compare_set);
    println!("{}", crate::report::load::CAUTIONS);
    println!("\n== 3. A small season at the buying point (120 generated loads, deep-bed drier on a coarse grid)");
    let (season_set, season_inputs) = super::season::season_run(&season_args)?;
    inputs.extend(season_inputs);
    set.add_set("season", season_set);
    println!("\n== 4. Property table");
    let crop = Crop::load_named("peanut-inshell")?;
    inputs.push(crop.path.clone());
    let (table, csv) = property_table(&crop_rows(&crop), args.units);
    print!("{table}");
    set.add("properties.csv", csv);
    set.commit(&args.out, &inputs, args.replace)?;
    println!("wrote {}", args.out.join("properties.csv").display());
    println!(
        "\ndemo finished in {:.1} s; outputs in {}",
        started.elapsed().as_secs_f64(),
        args.out.display()
    );
    Ok(())
}

/// The peanut model at a day's worth of invented air states, ambient and heated.
fn crop_rows(crop: &Crop) -> Vec<PropertyRow> {
    DEMO_AIR
        .iter()
        .map(|&(label, t_c, rh)| {
            let ambient = AirState::from_rh(t_c, rh, P_STD_PA);
            // Heater: full rise unless that passes the plenum cap.
            let t_plenum_c =
                (t_c + crop.safety.max_temp_rise_k).min(crop.safety.max_plenum_temp_c.max(t_c));
            let heated = ambient.heated_by(t_plenum_c - t_c);
            let eq = crop.moisture.equilibrium(heated.t_c, heated.rh());
            PropertyRow {
                label,
                ambient,
                heated,
                kernel_emc_db: eq.m_kernel_db,
                hull_emc_db: eq.m_hull_db,
                pod_emc_db: crop.moisture.pod_moisture_db(&eq),
            }
        })
        .collect()
}
