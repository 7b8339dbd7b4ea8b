//! `dryfront design`: the scenario's load and weather on several containers, fans, plenum models or fill depths,
//! each run through the deep-bed model in parallel, side by side (see `input::design` for the variant language and
//! `report::design` for the files).
use anyhow::Context;
use rayon::prelude::*;

use super::dry::{check_out, commit, setup, warn, LoadOptions};
use crate::input::design::{apply, parse_variants};
use crate::input::scenario::Scenario;
use crate::load::{run_load, LoadResult, LoadSpec};
use crate::report::design::{design_csv, design_outputs, design_page, design_table};
use crate::report::load::{strategy_folder, CompareRow, CAUTIONS};
use crate::report::output::OutputSet;

/// Arguments of `dryfront design`.
#[derive(Debug, clap::Args)]
pub struct DesignArgs {
    /// Scenario and outputs.
    #[command(flatten)]
    pub load: LoadOptions,
    /// Variants to compare, separated by `;`, each `key=value` pairs joined by `,`: `container=NAME|PATH`,
    /// `fan=NAME|PATH`, `plenum=duct|uniform|2d`, `depth=D` (a level fill D m deep, ft with `--units us`), or the
    /// word `scenario` for the scenario as it is. Example: "scenario; plenum=2d; depth=1.0; fan=vane-3kw".
    #[arg(long)]
    pub variants: String,
}

/// `dryfront design`.
pub fn run(args: DesignArgs) -> anyhow::Result<()> {
    let (sc, set) = design(&args)?;
    commit(&args.load, &sc, &set, |dir| {
        format!(
            "  wrote report.html, design.txt, design.csv and one folder per variant to {}",
            dir.display()
        )
    })?;
    println!("{CAUTIONS}");
    Ok(())
}

/// The scenario's load as every variant changes it; the files the variants read join the scenario's inputs.
fn variant_loads(
    sc: &mut Scenario,
    text: &str,
    units: crate::units::UnitSystem,
) -> anyhow::Result<(Vec<String>, Vec<LoadSpec>)> {
    let variants = parse_variants(text, units)?;
    let mut specs = Vec::new();
    for v in &variants {
        let (spec, files) = apply(&sc.spec, v)?;
        for f in files {
            if !sc.inputs.contains(&f) {
                sc.inputs.push(f);
            }
        }
        specs.push(spec);
    }
    Ok((variants.into_iter().map(|v| v.label).collect(), specs))
}

/// Run `design` and print its table; its files as a set.
pub fn design(args: &DesignArgs) -> anyhow::Result<(Scenario, OutputSet)> {
    let (mut sc, warning) = setup(&args.load)?;
    let units = args.load.units;
    let (labels, specs) = variant_loads(&mut sc, &args.variants, units)?;
    check_out(&args.load, &sc)?;
    warn(&warning);
    eprintln!(
        "comparing {} designs for {} (in parallel)…",
        specs.len(),
        sc.spec.name
    );
    let progress = super::progress::Progress::new("design", specs.len());
    let results: Vec<LoadResult> = specs
        .par_iter()
        .map(|l| {
            let r = run_load(l, &mut ()).with_context(|| format!("running {}", l.name));
            progress.tick();
            r
        })
        .collect::<anyhow::Result<_>>()?;
    let rows: Vec<CompareRow> = labels
        .iter()
        .zip(&results)
        .enumerate()
        .map(|(k, (label, r))| CompareRow {
            label: label.clone(),
            folder: format!("{:02}-{}", k + 1, strategy_folder(label)),
            result: r,
        })
        .collect();
    let table = design_table(&sc.spec, &rows, units);
    let heading = format!(
        "{} — same load and weather; designs side by side (run to: {})",
        sc.spec.name, sc.spec.run.stop
    );
    println!("{heading}");
    print!("{table}");
    let mut set = design_outputs(&specs, &rows, units);
    set.add("design.txt", format!("{heading}\n{table}\n{CAUTIONS}\n"));
    set.add("design.csv", design_csv(&sc.spec, &rows));
    let page = design_page(
        &sc.spec,
        &rows,
        units,
        &set,
        format!("{heading}\n{table}"),
        super::inputs_as_run(&sc.inputs)?,
    );
    set.add("report.html", page.render());
    Ok((sc, set))
}
