//! `dryfront props …`: quick property look-ups at the dryer — moist-air state, crop EMC and ERH, heated-air state
//! with heater power, and bed pressure drop. Parsing, range checks and printing only; the physics is in
//! `dryfront::props` and the constants in `models/crops/*.json`.
//!
//! Temperatures given with `--temp` / `--rise` are °C / K with `--units si` (default) and °F / °F-difference with
//! `--units us`; options whose name carries a unit (`--depth-m`, `--airflow-m3-min`, `--pressure-kpa`…) always
//! take that unit. Output follows `--units`.
use crate::crop::Crop;
use crate::error::{check_range, InputError};
use crate::props::psychro::{self, AirState};
use crate::props::sorption::DataRange;
use crate::units::{db_from_wb, f_to_c, wb_from_db, UnitSystem, M_PER_FT};

/// Propane lower heating value used for the fuel estimate, J/kg (Menon, Piping Calculations Manual, 19 770 Btu/lb
/// net, via DOMAIN.md §8.2).
const PROPANE_LHV_J_PER_KG: f64 = 46.0e6;
/// Liquid propane density, kg/L (engine manual fuel table, 4.24 lb/gal, via DOMAIN.md §8.2).
const PROPANE_KG_PER_L: f64 = 0.508;
/// J/kg per Btu/lb (exact, IT Btu).
const J_PER_KG_PER_BTU_PER_LB: f64 = 2326.0;
/// J per IT Btu (exact).
const J_PER_BTU: f64 = 1_055.055_852_62;
/// kg/m³ per lb/ft³.
const KG_M3_PER_LB_FT3: f64 = 16.018_463;

/// Options shared by every look-up.
#[derive(Debug, Clone, clap::Args)]
pub struct CommonArgs {
    /// Units for input temperatures (`--temp`, `--rise`) and for the output: si (°C, Pa) or us (°F, in. water).
    #[arg(long, value_enum, default_value_t = UnitSystem::Si)]
    pub units: UnitSystem,
}

/// Barometric pressure options.
#[derive(Debug, Clone, clap::Args)]
pub struct PressureArgs {
    /// Site elevation, m (sets barometric pressure by the standard atmosphere).
    #[arg(long, conflicts_with = "pressure_kpa")]
    pub elevation_m: Option<f64>,
    /// Barometric pressure, kPa [default: 101.325].
    #[arg(long)]
    pub pressure_kpa: Option<f64>,
}

impl PressureArgs {
    fn pressure_pa(&self) -> Result<f64, InputError> {
        match (self.elevation_m, self.pressure_kpa) {
            (Some(z), _) => {
                check_range("--elevation-m", z, -500.0, 5000.0, "m")?;
                Ok(psychro::pressure_at_elevation_pa(z))
            }
            (None, Some(p)) => Ok(check_range("--pressure-kpa", p, 50.0, 110.0, "kPa")? * 1000.0),
            (None, None) => Ok(psychro::P_STD_PA),
        }
    }
}

/// Property look-ups.
#[derive(Debug, clap::Subcommand)]
pub enum PropsCommand {
    /// Moist-air state from dry bulb and RH: humidity ratio, enthalpy, wet bulb, dew point, density, volume.
    Air {
        /// Dry-bulb temperature (°C; °F with --units us).
        #[arg(long, allow_hyphen_values = true)]
        temp: f64,
        /// Relative humidity, % (0–100).
        #[arg(long)]
        rh: f64,
        /// Barometric pressure.
        #[command(flatten)]
        pressure: PressureArgs,
        /// Unit system.
        #[command(flatten)]
        common: CommonArgs,
    },
    /// Equilibrium moisture content of a crop (kernel, hull and pod for peanuts) in air at (temp, RH).
    Emc {
        /// Crop name (peanut-inshell, shelled-corn, soybeans) or path to a crop .json file.
        #[arg(long, default_value = "peanut-inshell")]
        crop: String,
        /// Air temperature (°C; °F with --units us).
        #[arg(long, allow_hyphen_values = true)]
        temp: f64,
        /// Relative humidity, % (0–100).
        #[arg(long)]
        rh: f64,
        /// Unit system.
        #[command(flatten)]
        common: CommonArgs,
    },
    /// Equilibrium RH of air over a crop at a given kernel (or grain) moisture.
    Erh {
        /// Crop name or path to a crop .json file.
        #[arg(long, default_value = "peanut-inshell")]
        crop: String,
        /// Temperature (°C; °F with --units us).
        #[arg(long, allow_hyphen_values = true)]
        temp: f64,
        /// Kernel (or grain) moisture, % wet basis (0–60).
        #[arg(long)]
        moisture_wb: f64,
        /// Unit system.
        #[command(flatten)]
        common: CommonArgs,
    },
    /// Heated-air state: its RH, the EMC it drives the crop toward, heat per kg dry air and heater power.
    Heat {
        /// Crop name or path to a crop .json file.
        #[arg(long, default_value = "peanut-inshell")]
        crop: String,
        /// Ambient dry-bulb temperature (°C; °F with --units us).
        #[arg(long, allow_hyphen_values = true)]
        temp: f64,
        /// Ambient relative humidity, % (0–100).
        #[arg(long)]
        rh: f64,
        /// Temperature rise through the heater (K; °F difference with --units us).
        #[arg(long)]
        rise: f64,
        /// Fan airflow at ambient conditions, m³/min (adds heater kW and propane use).
        #[arg(long, conflicts_with = "airflow_cfm")]
        airflow_m3_min: Option<f64>,
        /// The same fan airflow in cubic feet per minute (cfm).
        #[arg(long)]
        airflow_cfm: Option<f64>,
        /// Barometric pressure.
        #[command(flatten)]
        pressure: PressureArgs,
        /// Unit system.
        #[command(flatten)]
        common: CommonArgs,
    },
    /// Pressure drop through a bed of the crop (Shedd's equation times the crop's packing factor).
    Pressure {
        /// Crop name or path to a crop .json file.
        #[arg(long, default_value = "peanut-inshell")]
        crop: String,
        /// Bed depth, m.
        #[arg(
            long,
            required_unless_present = "depth_ft",
            conflicts_with = "depth_ft"
        )]
        depth_m: Option<f64>,
        /// Bed depth, ft.
        #[arg(long)]
        depth_ft: Option<f64>,
        /// Superficial airflow, m/s (= m³/s per m² of floor).
        #[arg(
            long,
            required_unless_present = "airflow_cfm_ft2",
            conflicts_with = "airflow_cfm_ft2"
        )]
        airflow_m_s: Option<f64>,
        /// Superficial airflow, cfm per ft² of floor.
        #[arg(long)]
        airflow_cfm_ft2: Option<f64>,
        /// Unit system.
        #[command(flatten)]
        common: CommonArgs,
    },
}

/// Run a property look-up and print the result to stdout.
pub fn run(cmd: PropsCommand) -> anyhow::Result<()> {
    let text = render(&cmd)?;
    print!("{text}");
    Ok(())
}

fn temp_in_c(units: UnitSystem, t: f64) -> Result<f64, InputError> {
    match units {
        UnitSystem::Si => check_range("--temp", t, -40.0, 120.0, "°C"),
        UnitSystem::Us => Ok(f_to_c(check_range("--temp", t, -40.0, 248.0, "°F")?)),
    }
}

fn rh_decimal(rh_pct: f64) -> Result<f64, InputError> {
    Ok(check_range("--rh", rh_pct, 0.0, 100.0, "%")? / 100.0)
}

fn load_crop(name: &str) -> anyhow::Result<Crop> {
    // The library error already names the file and field (or the --crop argument).
    Ok(Crop::load_named(name)?)
}

fn line(out: &mut String, label: &str, value: String) {
    out.push_str(&format!("{label:<34} {value}\n"));
}

fn pct(x: f64) -> String {
    format!("{:.2} %", 100.0 * x)
}

fn range_note(out: &mut String, what: &str, range: Option<DataRange>, t_c: f64, rh: f64) {
    if let Some(r) = range {
        if !r.contains(t_c, rh) {
            out.push_str(&format!(
                "note: {what} isotherm evaluated outside its fitted range ({}–{} °C, {:.0}–{:.0} % RH): extrapolated\n",
                r.t_min_c,
                r.t_max_c,
                100.0 * r.rh_min,
                100.0 * r.rh_max
            ));
        }
    }
}

/// A humidity ratio: the same number in both systems, with its unit.
fn humidity_ratio(units: UnitSystem, w: f64) -> String {
    match units {
        UnitSystem::Si => format!("{w:.6} kg/kg dry air"),
        UnitSystem::Us => format!("{w:.6} lb/lb dry air"),
    }
}

fn enthalpy(units: UnitSystem, h_j_per_kg: f64) -> String {
    match units {
        UnitSystem::Si => format!("{:.2} kJ/kg dry air", h_j_per_kg / 1000.0),
        UnitSystem::Us => format!("{:.2} BTU/lb dry air", h_j_per_kg / J_PER_KG_PER_BTU_PER_LB),
    }
}

/// EMC lines for a crop at (t_c, rh).
fn emc_lines(out: &mut String, crop: &Crop, t_c: f64, rh: f64) {
    let eq = crop.moisture.equilibrium(t_c, rh);
    let both = |m_db: f64| format!("{} w.b.   {} d.b.", pct(wb_from_db(m_db)), pct(m_db));
    if crop.is_two_compartment() {
        line(out, "kernel EMC", both(eq.m_kernel_db));
        line(out, "hull EMC", both(eq.m_hull_db));
        line(out, "pod EMC", both(crop.moisture.pod_moisture_db(&eq)));
    } else {
        line(out, "grain EMC", both(eq.m_kernel_db));
    }
    range_note(out, "kernel/grain", crop.kernel_data_range, t_c, rh);
    range_note(out, "hull", crop.hull_data_range, t_c, rh);
}

/// Build the printed output of a look-up (separate from `run` so tests can call it without a process).
pub fn render(cmd: &PropsCommand) -> anyhow::Result<String> {
    let mut out = String::new();
    match cmd {
        PropsCommand::Air {
            temp,
            rh,
            pressure,
            common,
        } => {
            let u = common.units;
            let t_c = temp_in_c(u, *temp)?;
            let rh = rh_decimal(*rh)?;
            let p_pa = pressure.pressure_pa()?;
            let air = AirState::from_rh(t_c, rh, p_pa);
            line(&mut out, "dry bulb", u.temp(t_c));
            line(&mut out, "relative humidity", pct(rh));
            line(&mut out, "barometric pressure", u.barometric(p_pa));
            line(&mut out, "humidity ratio", humidity_ratio(u, air.w));
            line(&mut out, "enthalpy", enthalpy(u, air.enthalpy_j_per_kg()));
            line(&mut out, "wet bulb", u.temp(air.wet_bulb_c()));
            line(&mut out, "dew point", u.temp(air.dew_point_c()));
            let rho = air.density_kg_per_m3();
            let v = air.specific_volume_m3_per_kg();
            match u {
                UnitSystem::Si => {
                    line(&mut out, "moist-air density", format!("{rho:.4} kg/m³"));
                    line(&mut out, "specific volume", format!("{v:.4} m³/kg dry air"));
                }
                UnitSystem::Us => {
                    line(
                        &mut out,
                        "moist-air density",
                        format!("{:.5} lb/ft³", rho / KG_M3_PER_LB_FT3),
                    );
                    line(
                        &mut out,
                        "specific volume",
                        format!("{:.3} ft³/lb dry air", v * KG_M3_PER_LB_FT3),
                    );
                }
            }
        }
        PropsCommand::Emc {
            crop,
            temp,
            rh,
            common,
        } => {
            let u = common.units;
            let t_c = temp_in_c(u, *temp)?;
            let rh = rh_decimal(*rh)?;
            let crop = load_crop(crop)?;
            line(&mut out, "crop", crop.name.clone());
            line(&mut out, "air", format!("{}, {} RH", u.temp(t_c), pct(rh)));
            emc_lines(&mut out, &crop, t_c, rh);
        }
        PropsCommand::Erh {
            crop,
            temp,
            moisture_wb,
            common,
        } => {
            let u = common.units;
            let t_c = temp_in_c(u, *temp)?;
            let m_wb = check_range("--moisture-wb", *moisture_wb, 0.0, 60.0, "% w.b.")? / 100.0;
            let crop = load_crop(crop)?;
            let m_db = db_from_wb(m_wb);
            let erh = crop.moisture.kernel().sorption.desorption.erh(t_c, m_db);
            let what = if crop.is_two_compartment() {
                "kernel"
            } else {
                "grain"
            };
            line(&mut out, "crop", crop.name.clone());
            line(&mut out, "temperature", u.temp(t_c));
            line(
                &mut out,
                &format!("{what} moisture"),
                format!("{} w.b.   {} d.b.", pct(m_wb), pct(m_db)),
            );
            line(&mut out, "equilibrium RH", pct(erh));
            if crop.is_two_compartment() {
                let s = crop.moisture.state_from_kernel(t_c, m_db);
                line(
                    &mut out,
                    "hull moisture at that RH",
                    format!("{} w.b.", pct(wb_from_db(s.m_hull_db))),
                );
            }
            range_note(&mut out, what, crop.kernel_data_range, t_c, erh);
        }
        PropsCommand::Heat {
            crop,
            temp,
            rh,
            rise,
            airflow_m3_min,
            airflow_cfm,
            pressure,
            common,
        } => {
            let u = common.units;
            let t_c = temp_in_c(u, *temp)?;
            let rh = rh_decimal(*rh)?;
            let rise_k = match u {
                UnitSystem::Si => check_range("--rise", *rise, 0.0, 60.0, "K")?,
                UnitSystem::Us => check_range("--rise", *rise, 0.0, 108.0, "°F")? / 1.8,
            };
            let p_pa = pressure.pressure_pa()?;
            let crop = load_crop(crop)?;
            let ambient = AirState::from_rh(t_c, rh, p_pa);
            let heated = ambient.heated_by(rise_k);
            let q_j_per_kg = ambient.heat_to_j_per_kg(heated.t_c);
            line(&mut out, "crop", crop.name.clone());
            line(
                &mut out,
                "ambient",
                format!("{}, {} RH", u.temp(t_c), pct(rh)),
            );
            line(
                &mut out,
                "heated air",
                format!("{}, {} RH", u.temp(heated.t_c), pct(heated.rh())),
            );
            line(
                &mut out,
                "humidity ratio (unchanged)",
                humidity_ratio(u, ambient.w),
            );
            line(&mut out, "heat added", enthalpy(u, q_j_per_kg));
            emc_lines(&mut out, &crop, heated.t_c, heated.rh());
            if heated.t_c > crop.safety.max_plenum_temp_c {
                out.push_str(&format!(
                    "warning: heated air is above the crop's maximum plenum temperature of {}\n",
                    u.temp(crop.safety.max_plenum_temp_c)
                ));
            }
            let flow =
                airflow_m3_min
                    .map(|q| ("--airflow-m3-min", q))
                    .or(airflow_cfm
                        .map(|q| ("--airflow-cfm", UnitSystem::Us.flow_to_si_m3_per_min(q))));
            if let Some((name, q)) = flow {
                let q = check_range(name, q, 0.0, 1.0e5, "m³/min")?;
                let m_da_kg_per_s = q / 60.0 / ambient.specific_volume_m3_per_kg();
                let power_w = m_da_kg_per_s * q_j_per_kg;
                let fuel_kg_per_h = power_w / PROPANE_LHV_J_PER_KG * 3600.0;
                line(&mut out, "airflow", u.flow(q / 60.0));
                line(&mut out, "dry-air mass flow", u.mass_flow(m_da_kg_per_s));
                match u {
                    UnitSystem::Si => line(
                        &mut out,
                        "heater power",
                        format!("{:.1} kW", power_w / 1000.0),
                    ),
                    UnitSystem::Us => line(
                        &mut out,
                        "heater power",
                        format!("{:.0} BTU/h", power_w * 3600.0 / J_PER_BTU),
                    ),
                }
                let lhv = match u {
                    UnitSystem::Si => "LHV 46 MJ/kg",
                    UnitSystem::Us => "LHV 19800 BTU/lb",
                };
                line(
                    &mut out,
                    &format!("propane ({lhv}, 100 % eff.)"),
                    format!(
                        "{}/h = {}/h",
                        u.mass(fuel_kg_per_h),
                        u.volume_l(fuel_kg_per_h / PROPANE_KG_PER_L)
                    ),
                );
            }
        }
        PropsCommand::Pressure {
            crop,
            depth_m,
            depth_ft,
            airflow_m_s,
            airflow_cfm_ft2,
            common,
        } => {
            let u = common.units;
            let depth_m = match (depth_m, depth_ft) {
                (Some(d), _) => check_range("--depth-m", *d, 0.0, 10.0, "m")?,
                (None, Some(d)) => check_range("--depth-ft", *d, 0.0, 33.0, "ft")? * M_PER_FT,
                (None, None) => anyhow::bail!("give --depth-m or --depth-ft"),
            };
            let q_m_s = match (airflow_m_s, airflow_cfm_ft2) {
                (Some(q), _) => check_range("--airflow-m-s", *q, 0.0, 2.0, "m/s")?,
                (None, Some(q)) => {
                    check_range("--airflow-cfm-ft2", *q, 0.0, 400.0, "cfm/ft²")? * M_PER_FT / 60.0
                }
                (None, None) => anyhow::bail!("give --airflow-m-s or --airflow-cfm-ft2"),
            };
            let crop = load_crop(crop)?;
            let r = crop.resistance;
            let loose_pa = r.shedd.pressure_gradient_pa_per_m(q_m_s) * depth_m;
            line(&mut out, "crop", crop.name.clone());
            line(&mut out, "bed depth", u.length(depth_m));
            match u {
                UnitSystem::Si => line(&mut out, "superficial airflow", format!("{q_m_s:.4} m/s")),
                UnitSystem::Us => line(
                    &mut out,
                    "superficial airflow",
                    format!("{:.2} cfm/ft²", q_m_s * 60.0 / M_PER_FT),
                ),
            }
            line(&mut out, "pressure drop, loose fill", u.pressure(loose_pa));
            line(
                &mut out,
                &format!("pressure drop, packed (x{})", r.packing_factor),
                u.pressure(loose_pa * r.packing_factor),
            );
            out.push_str(
                "note: Shedd constants are from memory (see the crop file's sources); floor, plenum and duct losses not included\n",
            );
        }
    }
    Ok(out)
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::units::c_to_f;

    #[test]
    fn us_temperature_input_is_fahrenheit() {
        assert!((temp_in_c(UnitSystem::Us, 95.0).unwrap() - 35.0).abs() < 1e-12);
        assert!((c_to_f(35.0) - 95.0).abs() < 1e-12);
    }
}
