//! `dryfront airflow`: solve a loaded container (plenum, floor, bed and fan together) and write the per-column
//! table, a JSON summary and SVG maps of the top-surface airflow and the plenum pressure.
//!
//! Loading happens here, at the edge: container, fan and crop files are read, checked and converted before the
//! library is called. Names resolve to `<models>/containers/NAME.json`, `<models>/fans/NAME.json` and
//! `<models>/crops/NAME.json`; anything with a `/` or ending in `.json` is taken as a path.
//!
//! The air path is given as the ambient air and a plenum temperature (or rise); the fan is solved at the air its
//! file says it draws, the plenum, floor and bed at the plenum air. A bed moisture sets the D272 wet factor the way
//! a drying run does. Both are printed and written to `summary.json`.
use crate::crop::Crop;
use crate::drying::layer::LayerMaterial;
use crate::drying::material::CropMaterial;
use crate::load::{bed_law, pod_erh, BED_ERH_REFERENCE_C};
use crate::props::resistance::d272_moisture_factor;
use crate::units::db_from_wb;
use std::fmt::Write as _;
use std::path::{Path, PathBuf};

use anyhow::Context;

use crate::airflow::geometry::PLENUM_MODEL_NAMES;
use crate::airflow::{
    solve, AirPath, BedLaw, Container, FanCurve, FanPosition, Fill, FlowSpec, Grid, SolverSettings,
};
use crate::error::{check_range, InputError};
use crate::props::psychro::{pressure_at_elevation_pa, AirState};
use crate::report::airflow::{airflow_outputs, airflow_page, human_summary, AirflowRun};
use crate::report::output::{check_target, OutputSet};
use crate::units::UnitSystem;

/// Fill shape chosen on the command line (overrides the container file's).
#[derive(Debug, Clone, Copy, PartialEq, Eq, clap::ValueEnum)]
pub enum FillShape {
    /// Level at the mean depth.
    Level,
    /// A dome `--crown-m` higher in the middle than at the walls, same mean depth.
    Crowned,
    /// Sloping along the length, `--slope-m` deeper at the rear than the front, same mean depth.
    Sloped,
}

/// Arguments of `dryfront airflow` (boxed, so the subcommand enum stays small): the options of one solve, or
/// `fit` and its own.
#[derive(Debug, clap::Args)]
#[command(args_conflicts_with_subcommands = true, subcommand_negates_reqs = true)]
pub struct AirflowArgs {
    /// `fit` (without it: solve the airflow once).
    #[command(subcommand)]
    pub command: Option<AirflowCommand>,
    /// The options.
    #[command(flatten)]
    pub opts: Box<AirflowOptions>,
}

/// The subcommands of `dryfront airflow`.
#[derive(Debug, clap::Subcommand)]
pub enum AirflowCommand {
    /// Fit a permeability multiplier to each block of a top-surface airflow survey (regularised least squares
    /// within bounds) and write the container with the fitted map, residuals, maps and confidence figures.
    Fit(super::airflow_fit::FitArgs),
}

/// The options of `dryfront airflow`.
#[derive(Debug, clap::Args)]
pub struct AirflowOptions {
    /// Container name (in MODELS/containers) or path to its JSON file.
    #[arg(long, required = true)]
    pub container: Option<String>,
    /// Fan name (in MODELS/fans) or path: the flow is where its curve, at the air the fan draws (its file's
    /// `position`: ambient air ahead of the burner, the default, or heated air after it), meets the load's.
    #[arg(
        long,
        conflicts_with_all = ["flow_m3_min", "flow_cfm"],
        required_unless_present_any = ["flow_m3_min", "flow_cfm"]
    )]
    pub fan: Option<String>,
    /// A fixed total flow into the plenum instead of a fan, m³/min at the plenum air.
    #[arg(long, conflicts_with = "flow_cfm")]
    pub flow_m3_min: Option<f64>,
    /// The same fixed flow in cubic feet per minute (cfm).
    #[arg(long)]
    pub flow_cfm: Option<f64>,
    /// Crop name (in MODELS/crops) or path; its `resistance` section gives Shedd a, b, packing and ratio.
    #[arg(long, default_value = "peanut-inshell")]
    pub crop: String,
    /// Override the fill shape.
    #[arg(long, value_enum)]
    pub fill: Option<FillShape>,
    /// Mean fill depth for `--fill`, m (default: the container file's mean).
    #[arg(long)]
    pub depth_m: Option<f64>,
    /// Crown height (peak minus edge) for `--fill crowned`, m.
    #[arg(long, default_value_t = 0.3)]
    pub crown_m: f64,
    /// Rear-minus-front depth for `--fill sloped`, m.
    #[arg(long, default_value_t = 0.3)]
    pub slope_m: f64,
    /// Override the crop file's packing factor.
    #[arg(long)]
    pub packing: Option<f64>,
    /// Columns along the length.
    #[arg(long, default_value_t = 32)]
    pub nx: usize,
    /// Columns across the width.
    #[arg(long, default_value_t = 12)]
    pub ny: usize,
    /// Layers in each column.
    #[arg(long, default_value_t = 16)]
    pub nz: usize,
    /// Ambient air temperature, °C: the air drawn in ahead of the burner.
    #[arg(long, default_value_t = 25.0, allow_negative_numbers = true)]
    pub air_temp_c: f64,
    /// Ambient air relative humidity, %.
    #[arg(long, default_value_t = 70.0)]
    pub air_rh_pct: f64,
    /// Burner temperature rise of the plenum air over the ambient air, K (0–60; humidity ratio unchanged).
    /// Without this or --plenum-temp-c the air is unheated.
    #[arg(long, conflicts_with = "plenum_temp_c", allow_negative_numbers = true)]
    pub rise_k: Option<f64>,
    /// Plenum air temperature, °C (from the ambient temperature to 60 K above it; humidity ratio unchanged).
    #[arg(long, allow_negative_numbers = true)]
    pub plenum_temp_c: Option<f64>,
    /// Mean kernel moisture of the bed, % wet basis (5–45): a bed whose equilibrium RH is above 85 % gets the
    /// D272 wet factor, as in a drying run. Without it no wet factor is applied.
    #[arg(long)]
    pub bed_kernel_moisture_pct: Option<f64>,
    /// Site elevation, m (sets the barometric pressure).
    #[arg(long, default_value_t = 0.0, allow_negative_numbers = true)]
    pub elevation_m: f64,
    /// Plenum model instead of the one the container file names: `duct` (1-D along the length), `uniform` (one
    /// pressure under the floor, the classical assumption) or `2d` (depth-averaged flow with the inlet jet, its
    /// eddies and the side walls; writes the plenum's own flow map too).
    #[arg(long)]
    pub plenum: Option<String>,
    /// Folder for columns.csv, summary.json and the SVG maps (nothing is written without it; an earlier set there is
    /// replaced whole).
    #[arg(long)]
    pub out: Option<PathBuf>,
    /// Write into the --out folder even though it holds files dryfront did not write (they are removed).
    #[arg(long)]
    pub replace: bool,
    /// Folder holding containers/, fans/ and crops/.
    #[arg(long)]
    pub models: Option<PathBuf>,
    /// Units for the printed summary (options whose name carries a unit always take that unit).
    #[arg(long, value_enum, default_value_t = UnitSystem::Si)]
    pub units: UnitSystem,
}

/// A model file by bundled name or path, looking first in `--models` when given (the one resolver).
fn resolve(
    models: Option<&Path>,
    kind: &str,
    name: &str,
    what: &str,
) -> Result<PathBuf, InputError> {
    crate::models::resolve_in(models, kind, name, what)
}

fn read(path: &Path) -> Result<String, InputError> {
    crate::input::read_text(path)
}

fn mean_depth(c: &Container) -> f64 {
    match &c.fill {
        Fill::Level { depth_m } => *depth_m,
        Fill::Crowned {
            edge_depth_m,
            peak_depth_m,
        } => edge_depth_m + 4.0 / 9.0 * (peak_depth_m - edge_depth_m),
        Fill::Sloped {
            front_depth_m,
            rear_depth_m,
        } => 0.5 * (front_depth_m + rear_depth_m),
        Fill::Grid { depths_m } => {
            let n: usize = depths_m.iter().map(|r| r.len()).sum();
            depths_m.iter().flatten().sum::<f64>() / n as f64
        }
    }
}

/// Everything one solve needs, loaded and checked from the options.
pub(crate) struct Loaded {
    /// The container (fill overridden from the options when asked).
    pub container: Container,
    /// The bed's law, packing and wet factor included.
    pub law: BedLaw,
    /// Fan or fixed flow.
    pub flow: FlowSpec,
    /// Every file read (container, crop, fan): outputs may not touch them.
    pub inputs: Vec<PathBuf>,
    /// Ambient and plenum air.
    pub air: AirPath,
    /// Solver settings from the options.
    pub settings: SolverSettings,
    used: Used,
}

impl Loaded {
    /// The air states and bed moisture, printed.
    pub fn human(&self, u: UnitSystem) -> String {
        self.used.human(u)
    }

    /// What the solve ran with, as written to the JSON records.
    pub fn run_json(&self) -> anyhow::Result<(serde_json::Value, serde_json::Value)> {
        Ok((
            serde_json::to_value(self.used.air)?,
            serde_json::to_value(self.used.bed)?,
        ))
    }
}

/// Read and check the container, crop and fan the options name, and the air, bed moisture and grid.
pub(crate) fn load(args: &AirflowOptions) -> anyhow::Result<Loaded> {
    let models = args.models.as_deref();
    let name = args
        .container
        .as_deref()
        .context("--container is required")?;
    let container_path = resolve(models, "containers", name, "--container")?;
    let mut container = Container::from_json_str(&read(&container_path)?, &container_path)?;
    let crop_path = resolve(models, "crops", &args.crop, "--crop")?;
    let crop = Crop::from_json_str(&read(&crop_path)?, &crop_path)?;
    let mut law = bed_law(&crop);
    if let Some(p) = args.packing {
        law.packing_factor = check_range("--packing", p, 0.1, 10.0, "")?;
    }
    override_fill(args, &mut container, &container_path)?;
    if let Some(name) = &args.plenum {
        container.plenum = container.plenum.switched_to(name).with_context(|| {
            format!("--plenum: {name:?} is not a plenum model; expected {PLENUM_MODEL_NAMES}")
        })?;
        container
            .validate(&container_path)
            .context("the plenum model chosen on the command line does not fit this container")?;
    }
    let flow_m3_min = args.flow_m3_min.or(args
        .flow_cfm
        .map(|q| UnitSystem::Us.flow_to_si_m3_per_min(q)));
    let (flow, fan_path) = match (&args.fan, flow_m3_min) {
        (Some(name), _) => {
            let p = resolve(models, "fans", name, "--fan")?;
            (
                FlowSpec::Fan(FanCurve::from_json_str(&read(&p)?, &p)?),
                Some(p),
            )
        }
        (None, Some(q)) => {
            let name = if args.flow_cfm.is_some() {
                "--flow-cfm"
            } else {
                "--flow-m3-min"
            };
            let q = check_range(name, q, 0.1, 1e5, "m³/min")?;
            (
                FlowSpec::Fixed {
                    total_m3_per_s: q / 60.0,
                },
                None,
            )
        }
        (None, None) => anyhow::bail!("give either --fan NAME or --flow-m3-min VALUE"),
    };
    let mut inputs = vec![container_path.clone(), crop_path.clone()];
    inputs.extend(fan_path.clone());
    if let Some(dir) = &args.out {
        check_target(dir, &inputs, args.replace)?;
    }
    let cells = (args.nx * args.ny * args.nz) as f64;
    crate::input::limits::check_cells(
        "--nx/--ny/--nz",
        cells,
        crate::input::limits::AIRFLOW_BYTES_PER_CELL,
        1.0,
    )?;
    let air = air_path(args)?;
    let bed = BedMoisture::new(&crop, args.bed_kernel_moisture_pct, air.ambient.t_c)?;
    law.packing_factor *= bed.d272_wet_factor;
    let grid = Grid {
        nx: args.nx,
        ny: args.ny,
        nz: args.nz,
    };
    let settings = SolverSettings::for_container(&container, grid);
    let used = Used::new(&air, &flow, bed);
    Ok(Loaded {
        container,
        law,
        flow,
        inputs,
        air,
        settings,
        used,
    })
}

/// Replace the container's fill by the one the options ask for.
fn override_fill(
    args: &AirflowOptions,
    container: &mut Container,
    container_path: &Path,
) -> anyhow::Result<()> {
    if let Some(shape) = args.fill {
        let mean = match args.depth_m {
            Some(d) => check_range("--depth-m", d, 0.01, container.wall_height_m, "m")?,
            None => mean_depth(container),
        };
        container.fill = match shape {
            FillShape::Level => Fill::Level { depth_m: mean },
            FillShape::Crowned => {
                let crown = check_range("--crown-m", args.crown_m, 0.0, 10.0, "m")?;
                let edge = mean - 4.0 / 9.0 * crown;
                Fill::Crowned {
                    edge_depth_m: edge,
                    peak_depth_m: edge + crown,
                }
            }
            FillShape::Sloped => {
                let slope = check_range("--slope-m", args.slope_m, -10.0, 10.0, "m")?;
                Fill::Sloped {
                    front_depth_m: mean - 0.5 * slope,
                    rear_depth_m: mean + 0.5 * slope,
                }
            }
        };
        container
            .validate(container_path)
            .context("the fill chosen on the command line does not fit this container")?;
    } else if args.depth_m.is_some() {
        anyhow::bail!("--depth-m needs --fill level|crowned|sloped");
    }
    Ok(())
}

/// Run the airflow solve, or `fit`.
pub fn run(args: AirflowArgs) -> anyhow::Result<()> {
    if let Some(AirflowCommand::Fit(f)) = args.command {
        return super::airflow_fit::run(f);
    }
    let args = *args.opts;
    let l = load(&args)?;
    let sol = solve(&l.container, &l.flow, &l.law, &l.air, &l.settings)?;
    let printed = l.human(args.units) + &human_summary(&l.container, &l.flow, &sol, args.units);
    print!("{printed}");
    if let Some(dir) = &args.out {
        let (air, bed) = l.run_json()?;
        let run = AirflowRun {
            law: &l.law,
            settings: &l.settings,
            air,
            bed,
        };
        let mut set: OutputSet = airflow_outputs(&l.container, &l.flow, &run, &sol, args.units);
        let page = airflow_page(
            &l.container,
            &sol,
            args.units,
            &set,
            printed,
            super::inputs_as_run(&l.inputs)?,
        );
        set.add("report.html", page.render());
        set.commit(dir, &l.inputs, args.replace)?;
        let names: Vec<String> = set.names().map(|n| n.display().to_string()).collect();
        println!("wrote {} to {}", names.join(", "), dir.display());
    }
    Ok(())
}

/// The ambient and plenum air from the options: ambient air at the site's pressure, the plenum air the same air
/// sensibly heated (humidity ratio unchanged; no combustion water, no fan heat).
fn air_path(args: &AirflowOptions) -> Result<AirPath, InputError> {
    let t = check_range("--air-temp-c", args.air_temp_c, -30.0, 50.0, "°C")?;
    let rh = check_range("--air-rh-pct", args.air_rh_pct, 0.0, 100.0, "%")?;
    let elev = check_range("--elevation-m", args.elevation_m, -500.0, 5000.0, "m")?;
    let ambient = AirState::from_rh(t, rh / 100.0, pressure_at_elevation_pa(elev));
    let rise = match (args.rise_k, args.plenum_temp_c) {
        (Some(r), _) => check_range("--rise-k", r, 0.0, 60.0, "K")?,
        (None, Some(p)) => check_range("--plenum-temp-c", p, t, t + 60.0, "°C")? - t,
        (None, None) => 0.0,
    };
    Ok(AirPath {
        ambient,
        plenum: ambient.heated_by(rise),
    })
}

/// The bed moisture a solve used and the D272 wet factor it gives.
#[derive(Debug, Clone, Copy, serde::Serialize)]
struct BedMoisture {
    /// Mean kernel moisture, % w.b. (`None`: not given).
    kernel_moisture_pct_wb: Option<f64>,
    /// Mean pod moisture with the hull in equilibrium with the kernel, % d.b.
    pod_moisture_pct_db: Option<f64>,
    /// Equilibrium RH of the pods at `BED_ERH_REFERENCE_C`, %.
    bed_erh_pct: Option<f64>,
    /// Temperature of that equilibrium RH, °C.
    bed_erh_temperature_c: Option<f64>,
    /// Factor on the bed's resistance (D272: 0.80 above 85 % ERH, else 1).
    d272_wet_factor: f64,
}

impl BedMoisture {
    /// As a drying run: the hull in equilibrium with the kernel at the ambient temperature `t_c` (a fresh load),
    /// the pods' ERH at `BED_ERH_REFERENCE_C`, the D272 factor from it (DOMAIN.md §1.2).
    fn new(crop: &Crop, kernel_pct: Option<f64>, t_c: f64) -> Result<Self, InputError> {
        let Some(k) = kernel_pct else {
            return Ok(BedMoisture {
                kernel_moisture_pct_wb: None,
                pod_moisture_pct_db: None,
                bed_erh_pct: None,
                bed_erh_temperature_c: None,
                d272_wet_factor: 1.0,
            });
        };
        let k = check_range("--bed-kernel-moisture-pct", k, 5.0, 45.0, "% w.b.")?;
        let material = CropMaterial::new(crop);
        let pod_db = material.pod_db(material.initial_state(db_from_wb(k / 100.0), t_c));
        let erh = pod_erh(&material, pod_db, BED_ERH_REFERENCE_C);
        Ok(BedMoisture {
            kernel_moisture_pct_wb: Some(k),
            pod_moisture_pct_db: Some(100.0 * pod_db),
            bed_erh_pct: Some(100.0 * erh),
            bed_erh_temperature_c: Some(BED_ERH_REFERENCE_C),
            d272_wet_factor: d272_moisture_factor(erh),
        })
    }
}

/// One air state as written to `summary.json`.
#[derive(Debug, Clone, Copy, serde::Serialize)]
struct AirReport {
    temperature_c: f64,
    relative_humidity_pct: f64,
    humidity_ratio_kg_per_kg: f64,
    pressure_pa: f64,
    density_kg_per_m3: f64,
    specific_volume_m3_per_kg_dry_air: f64,
}

impl AirReport {
    fn new(a: &AirState) -> Self {
        AirReport {
            temperature_c: a.t_c,
            relative_humidity_pct: 100.0 * a.rh(),
            humidity_ratio_kg_per_kg: a.w,
            pressure_pa: a.p_pa,
            density_kg_per_m3: a.density_kg_per_m3(),
            specific_volume_m3_per_kg_dry_air: a.specific_volume_m3_per_kg(),
        }
    }
}

/// The air states a solve used and which the fan drew.
#[derive(Debug, Clone, Copy, serde::Serialize)]
struct AirUsed {
    ambient: AirReport,
    plenum: AirReport,
    /// `"ambient"` or `"plenum"`.
    fan_draws: &'static str,
    /// The fan file's position (`None` for a fixed flow).
    fan_position: Option<FanPosition>,
}

/// The air states and bed moisture a solve used.
struct Used {
    air: AirUsed,
    bed: BedMoisture,
}

impl Used {
    fn new(path: &AirPath, flow: &FlowSpec, bed: BedMoisture) -> Self {
        let fan_position = match flow {
            FlowSpec::Fan(f) => Some(f.position),
            FlowSpec::Fixed { .. } => None,
        };
        let draws_plenum = fan_position == Some(FanPosition::AfterBurner);
        Used {
            air: AirUsed {
                ambient: AirReport::new(&path.ambient),
                plenum: AirReport::new(&path.plenum),
                fan_draws: if draws_plenum { "plenum" } else { "ambient" },
                fan_position,
            },
            bed,
        }
    }

    fn human(&self, u: UnitSystem) -> String {
        let (a, p) = (&self.air.ambient, &self.air.plenum);
        let mut o = String::new();
        let rise = p.temperature_c - a.temperature_c;
        let heated = if rise > 0.0 {
            format!("heated {} over ambient", u.temp_delta(rise))
        } else {
            "unheated".to_string()
        };
        let _ = writeln!(
            o,
            "ambient air {}, {:.1} % RH, {}; plenum air {} ({heated}), {:.1} % RH, {}",
            u.temp(a.temperature_c),
            a.relative_humidity_pct,
            u.density(a.density_kg_per_m3),
            u.temp(p.temperature_c),
            p.relative_humidity_pct,
            u.density(p.density_kg_per_m3)
        );
        let who = match self.air.fan_position {
            Some(pos) => format!(
                "the fan ({}) draws the {} air",
                pos.as_str(),
                self.air.fan_draws
            ),
            None => {
                "fixed flow into the plenum at the plenum air (its fan flow at the ambient air)"
                    .into()
            }
        };
        let _ = writeln!(o, "{who}; plenum, floor and bed at the plenum air");
        let b = &self.bed;
        let _ = match (b.kernel_moisture_pct_wb, b.bed_erh_pct) {
            (Some(k), Some(erh)) => writeln!(
                o,
                "bed kernel moisture {k:.1} % w.b. (pods in equilibrium with {erh:.1} % RH at {}): D272 wet factor {:.2}",
                u.temp(BED_ERH_REFERENCE_C), b.d272_wet_factor
            ),
            _ => writeln!(
                o,
                "bed moisture not given (--bed-kernel-moisture-pct): D272 wet factor {:.2}",
                b.d272_wet_factor
            ),
        };
        o
    }
}
