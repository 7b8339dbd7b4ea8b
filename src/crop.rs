//! Crop models as data: every constant of a crop (isotherms, thin-layer rates, airflow resistance, thermal
//! properties, safety defaults) is read from `models/crops/<name>.json`, with its unit, status and source, and
//! validated on load. A typo, a missing constant, a wrong unit string or an out-of-range value is an
//! [`InputError::Model`] naming the file and the dotted field (`compartments.kernel.isotherm.a`).
//!
//! File shape (every number is a constant object `{"value", "unit", "status", "source"}`; `status` is one of
//! `published`, `computed`, `calibrated`, `from-memory`, `common-practice`):
//!
//! ```text
//! name, description,
//! compartments: { hull: C, kernel: C } | { grain: C }
//!   C = { dry_matter_fraction (two-compartment only), adsorption_offset_db,
//!         isotherm: { form, moisture_unit, a, b, c, data_range?: {t_min_c, t_max_c, rh_min, rh_max} },
//!         thin_layer: { form, k_ref_per_h, t_ref_c, activation_energy_j_per_mol, rh_slope?, n | a | k2_ratio } }
//! resistance: { shedd_a, shedd_b, packing_factor, horizontal_ratio }
//! thermal: { cp_dry_kernel_j_per_kg_k, cp_dry_hull_j_per_kg_k | cp_dry_j_per_kg_k,
//!            bulk_density_kg_per_m3, bulk_density_ref_moisture_wb_pct, bulk_density_slope_kg_per_m3_per_pct_wb }
//! safety: { max_plenum_temp_c, max_temp_rise_k, max_drying_rate_pct_wb_per_h, target_moisture_wb_pct }
//! ```
//!
//! Isotherm forms and thin-layer forms are those of `props::sorption` and `props::thin_layer`; `a`, `b`, `c` are
//! in the unit of M named by `moisture_unit` (`decimal-db` or `percent-db`); the Cromarty form uses `a` as the oil
//! content (decimal d.b.) and no `b`, `c`.
//!
//! References: the file format is our own; each constant's `source` names its reference.
use std::collections::BTreeMap;
use std::path::{Path, PathBuf};

use serde_json::{Map, Value};

use crate::error::InputError;
use crate::props::resistance::Shedd;
use crate::props::sorption::{DataRange, Isotherm, IsothermForm, MoistureUnit, Sorption};
use crate::props::thin_layer::{ArrheniusRate, Compartment, PodModel, ThinLayer};

/// How much a constant can be trusted.
#[derive(Debug, Clone, Copy, PartialEq, Eq, serde::Serialize, serde::Deserialize)]
#[serde(rename_all = "kebab-case")]
pub enum Status {
    /// Seen in a published source.
    Published,
    /// Computed here from published relations.
    Computed,
    /// Fitted by this project to a target (the source says which, when and how).
    Calibrated,
    /// Recalled, not checked against the primary source.
    FromMemory,
    /// A rule of the trade with no source.
    CommonPractice,
}

/// One constant as written in a crop file.
#[derive(Debug, Clone, PartialEq, serde::Serialize, serde::Deserialize)]
#[serde(deny_unknown_fields)]
pub struct Constant {
    /// The number.
    pub value: f64,
    /// Its unit, as a plain ASCII string (checked against the field's expected unit).
    pub unit: String,
    /// How much to trust it.
    pub status: Status,
    /// Where it comes from.
    pub source: String,
}

/// Airflow resistance of the bed (the airflow solver reads these).
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct CropResistance {
    /// Shedd's constants for loose fill.
    pub shedd: Shedd,
    /// Multiplier on pressure drop for packing in the container (≥ 1).
    pub packing_factor: f64,
    /// Horizontal over vertical resistance (1 = isotropic).
    pub horizontal_ratio: f64,
}

/// Thermal and bulk properties. Specific heats are per kg of dry matter.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct CropThermal {
    /// Specific heat of kernel (or grain) dry matter, J/(kg·K).
    pub cp_dry_kernel_j_per_kg_k: f64,
    /// Specific heat of hull dry matter, J/(kg·K) (equal to the kernel's for single-compartment crops).
    pub cp_dry_hull_j_per_kg_k: f64,
    /// Bulk density as loaded at the reference moisture, kg/m³.
    pub bulk_density_kg_per_m3: f64,
    /// Reference moisture of that bulk density, % w.b. (pod moisture).
    pub bulk_density_ref_moisture_wb_pct: f64,
    /// Change of bulk density per %-point of moisture, kg/m³ per % w.b.
    pub bulk_density_slope_kg_per_m3_per_pct_wb: f64,
}

impl CropThermal {
    /// Bulk density (kg/m³) at pod moisture `m_wb_pct` (% w.b.), linear about the reference.
    pub fn bulk_density_at_kg_per_m3(&self, m_wb_pct: f64) -> f64 {
        self.bulk_density_kg_per_m3
            + self.bulk_density_slope_kg_per_m3_per_pct_wb
                * (m_wb_pct - self.bulk_density_ref_moisture_wb_pct)
    }
}

/// Safety and quality defaults (trade practice; user-editable).
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct CropSafety {
    /// Highest plenum air temperature, °C.
    pub max_plenum_temp_c: f64,
    /// Highest temperature rise over ambient, K.
    pub max_temp_rise_k: f64,
    /// Highest safe batch-average drying rate, %-points w.b. per hour.
    pub max_drying_rate_pct_wb_per_h: f64,
    /// Target (sale) moisture, % w.b. of the reported compartment (kernel for peanuts).
    pub target_moisture_wb_pct: f64,
}

/// A loaded and validated crop model.
#[derive(Debug, Clone, PartialEq)]
pub struct Crop {
    /// Short name (`peanut-inshell`).
    pub name: String,
    /// One-paragraph description.
    pub description: String,
    /// The file it was loaded from.
    pub path: PathBuf,
    /// The moisture model (isotherms, thin-layer curves, compartments).
    pub moisture: PodModel,
    /// Fitted range of the kernel (or grain) isotherm, when the file gives one.
    pub kernel_data_range: Option<DataRange>,
    /// Fitted range of the hull isotherm, when the file gives one.
    pub hull_data_range: Option<DataRange>,
    /// Airflow resistance.
    pub resistance: CropResistance,
    /// Thermal properties.
    pub thermal: CropThermal,
    /// Safety defaults.
    pub safety: CropSafety,
    /// Every constant by dotted field path, with unit, status and source.
    pub constants: BTreeMap<String, Constant>,
}

/// Names of the crop models shipped in `models/crops/`.
pub const BUILTIN_CROPS: [&str; 3] = ["peanut-inshell", "shelled-corn", "soybeans"];

impl Crop {
    /// Whether this crop has separate hull and kernel compartments.
    pub fn is_two_compartment(&self) -> bool {
        matches!(self.moisture, PodModel::TwoCompartment { .. })
    }

    /// Specific heat of pod (or grain) dry matter, J/(kg·K): hull and kernel weighted by dry-matter fraction.
    pub fn cp_dry_pod_j_per_kg_k(&self) -> f64 {
        let f_h = self.moisture.hull_fraction();
        f_h * self.thermal.cp_dry_hull_j_per_kg_k
            + (1.0 - f_h) * self.thermal.cp_dry_kernel_j_per_kg_k
    }

    /// Dry matter per m³ of bed, kg/m³, at pod moisture `m_wb_pct` (% w.b.): `ρ_bulk(m)·(1 − m)`.
    pub fn dry_matter_density_kg_per_m3(&self, m_wb_pct: f64) -> f64 {
        self.thermal.bulk_density_at_kg_per_m3(m_wb_pct) * (1.0 - m_wb_pct / 100.0)
    }

    /// Read a crop by bundled name (`peanut-inshell`) or path to a `.json` file (the one resolver and reader of
    /// `models`).
    pub fn load_named(name_or_path: &str) -> Result<Crop, InputError> {
        let path = crate::models::resolve("crops", name_or_path, "--crop")?;
        Self::from_json_str(&crate::input::read_text(&path)?, &path)
    }

    /// Parse and validate crop JSON text; `path` is used in error messages.
    pub fn from_json_str(text: &str, path: &Path) -> Result<Crop, InputError> {
        Self::from_json_unlocated(text, path)
            .map_err(|e| crate::input::with_json_line(e, path, text))
    }

    fn from_json_unlocated(text: &str, path: &Path) -> Result<Crop, InputError> {
        let root: Value = serde_json::from_str(text).map_err(|e| InputError::Parse {
            path: path.to_path_buf(),
            line: Some(e.line() as u64),
            message: e.to_string(),
        })?;
        let mut rd = Reader {
            path,
            constants: BTreeMap::new(),
        };
        let top = rd.object(
            &root,
            "",
            &[
                "name",
                "description",
                "compartments",
                "resistance",
                "thermal",
                "safety",
            ],
        )?;
        let name = rd.string(top, "", "name")?;
        let description = rd.string(top, "", "description")?;

        let comps = rd.object(
            rd.req(top, "", "compartments")?,
            "compartments",
            &["hull", "kernel", "grain"],
        )?;
        let (moisture, kernel_data_range, hull_data_range) = if comps.contains_key("grain") {
            if comps.contains_key("hull") || comps.contains_key("kernel") {
                return Err(rd.err(
                    "compartments",
                    "give either \"grain\" (one compartment) or \"hull\" and \"kernel\", not both",
                ));
            }
            let (c, range, _) = rd.compartment(comps, "grain", false)?;
            (PodModel::Single(c), range, None)
        } else {
            let (hull, hull_range, f_h) = rd.compartment(comps, "hull", true)?;
            let (kernel, kernel_range, f_k) = rd.compartment(comps, "kernel", true)?;
            if (f_h + f_k - 1.0).abs() > 1e-6 {
                return Err(rd.err(
                    "compartments.kernel.dry_matter_fraction",
                    &format!("hull and kernel fractions must add up to 1 (got {f_h} + {f_k})"),
                ));
            }
            for (field, c) in [("hull", &hull), ("kernel", &kernel)] {
                if !c.thin_layer.is_first_order() {
                    return Err(rd.err(
                        &format!("compartments.{field}.thin_layer.form"),
                        "a two-compartment pod needs a first-order form (\"exponential\" or \"henderson-pabis\")",
                    ));
                }
            }
            (
                PodModel::TwoCompartment {
                    hull,
                    kernel,
                    hull_fraction: f_h,
                },
                kernel_range,
                hull_range,
            )
        };

        let res = rd.object(
            rd.req(top, "", "resistance")?,
            "resistance",
            &["shedd_a", "shedd_b", "packing_factor", "horizontal_ratio"],
        )?;
        let resistance = CropResistance {
            shedd: Shedd {
                a: rd.constant(res, "resistance", "shedd_a", "Pa s2/m3", 1.0, 1e7)?,
                b: rd.constant(res, "resistance", "shedd_b", "m2 s/m3", 1e-3, 1e5)?,
            },
            packing_factor: rd.constant(res, "resistance", "packing_factor", "-", 1.0, 3.0)?,
            horizontal_ratio: rd.constant(res, "resistance", "horizontal_ratio", "-", 0.1, 2.0)?,
        };

        let two = matches!(moisture, PodModel::TwoCompartment { .. });
        let th_keys: &[&str] = if two {
            &[
                "cp_dry_kernel_j_per_kg_k",
                "cp_dry_hull_j_per_kg_k",
                "bulk_density_kg_per_m3",
                "bulk_density_ref_moisture_wb_pct",
                "bulk_density_slope_kg_per_m3_per_pct_wb",
            ]
        } else {
            &[
                "cp_dry_j_per_kg_k",
                "bulk_density_kg_per_m3",
                "bulk_density_ref_moisture_wb_pct",
                "bulk_density_slope_kg_per_m3_per_pct_wb",
            ]
        };
        let th = rd.object(rd.req(top, "", "thermal")?, "thermal", th_keys)?;
        let (cp_k, cp_h) = if two {
            (
                rd.constant(
                    th,
                    "thermal",
                    "cp_dry_kernel_j_per_kg_k",
                    "J/(kg K)",
                    500.0,
                    5000.0,
                )?,
                rd.constant(
                    th,
                    "thermal",
                    "cp_dry_hull_j_per_kg_k",
                    "J/(kg K)",
                    500.0,
                    5000.0,
                )?,
            )
        } else {
            let cp = rd.constant(
                th,
                "thermal",
                "cp_dry_j_per_kg_k",
                "J/(kg K)",
                500.0,
                5000.0,
            )?;
            (cp, cp)
        };
        let thermal = CropThermal {
            cp_dry_kernel_j_per_kg_k: cp_k,
            cp_dry_hull_j_per_kg_k: cp_h,
            bulk_density_kg_per_m3: rd.constant(
                th,
                "thermal",
                "bulk_density_kg_per_m3",
                "kg/m3",
                50.0,
                1500.0,
            )?,
            bulk_density_ref_moisture_wb_pct: rd.constant(
                th,
                "thermal",
                "bulk_density_ref_moisture_wb_pct",
                "% w.b.",
                0.0,
                60.0,
            )?,
            bulk_density_slope_kg_per_m3_per_pct_wb: rd.constant(
                th,
                "thermal",
                "bulk_density_slope_kg_per_m3_per_pct_wb",
                "kg/m3 per % w.b.",
                -50.0,
                50.0,
            )?,
        };

        let sf = rd.object(
            rd.req(top, "", "safety")?,
            "safety",
            &[
                "max_plenum_temp_c",
                "max_temp_rise_k",
                "max_drying_rate_pct_wb_per_h",
                "target_moisture_wb_pct",
            ],
        )?;
        let safety = CropSafety {
            max_plenum_temp_c: rd.constant(
                sf,
                "safety",
                "max_plenum_temp_c",
                "degC",
                5.0,
                100.0,
            )?,
            max_temp_rise_k: rd.constant(sf, "safety", "max_temp_rise_k", "K", 0.0, 60.0)?,
            max_drying_rate_pct_wb_per_h: rd.constant(
                sf,
                "safety",
                "max_drying_rate_pct_wb_per_h",
                "% w.b./h",
                0.01,
                10.0,
            )?,
            target_moisture_wb_pct: rd.constant(
                sf,
                "safety",
                "target_moisture_wb_pct",
                "% w.b.",
                1.0,
                40.0,
            )?,
        };

        Ok(Crop {
            name,
            description,
            path: path.to_path_buf(),
            moisture,
            kernel_data_range,
            hull_data_range,
            resistance,
            thermal,
            safety,
            constants: rd.constants,
        })
    }
}

/// Walks the JSON tree, tracking dotted field paths and collecting constants.
struct Reader<'p> {
    path: &'p Path,
    constants: BTreeMap<String, Constant>,
}

fn join(prefix: &str, key: &str) -> String {
    if prefix.is_empty() {
        key.to_string()
    } else {
        format!("{prefix}.{key}")
    }
}

impl Reader<'_> {
    fn err(&self, field: &str, message: &str) -> InputError {
        InputError::Model {
            line: None,
            path: self.path.to_path_buf(),
            field: field.to_string(),
            message: message.to_string(),
        }
    }

    /// `v` as an object whose keys are all in `allowed`.
    fn object<'v>(
        &self,
        v: &'v Value,
        prefix: &str,
        allowed: &[&str],
    ) -> Result<&'v Map<String, Value>, InputError> {
        let field = if prefix.is_empty() {
            "(top level)"
        } else {
            prefix
        };
        let map = v
            .as_object()
            .ok_or_else(|| self.err(field, "must be a JSON object"))?;
        for key in map.keys() {
            if !allowed.contains(&key.as_str()) {
                return Err(self.err(
                    &join(prefix, key),
                    &format!("unknown field (expected one of: {})", allowed.join(", ")),
                ));
            }
        }
        Ok(map)
    }

    fn req<'v>(
        &self,
        map: &'v Map<String, Value>,
        prefix: &str,
        key: &str,
    ) -> Result<&'v Value, InputError> {
        map.get(key)
            .ok_or_else(|| self.err(&join(prefix, key), "missing field"))
    }

    fn string(
        &self,
        map: &Map<String, Value>,
        prefix: &str,
        key: &str,
    ) -> Result<String, InputError> {
        match self.req(map, prefix, key)? {
            Value::String(s) if !s.trim().is_empty() => Ok(s.clone()),
            _ => Err(self.err(&join(prefix, key), "must be a non-empty string")),
        }
    }

    /// A string naming an enum variant (kebab-case), through serde.
    fn choice<T: serde::de::DeserializeOwned>(
        &self,
        map: &Map<String, Value>,
        prefix: &str,
        key: &str,
        options: &str,
    ) -> Result<T, InputError> {
        let v = self.req(map, prefix, key)?;
        serde_json::from_value(v.clone())
            .map_err(|_| self.err(&join(prefix, key), &format!("{v} is not one of: {options}")))
    }

    /// A constant object with the expected unit (`None`: any non-empty unit) and value in [lo, hi].
    fn constant_any_unit(
        &mut self,
        map: &Map<String, Value>,
        prefix: &str,
        key: &str,
        unit: Option<&str>,
        lo: f64,
        hi: f64,
    ) -> Result<f64, InputError> {
        let field = join(prefix, key);
        let v = self.req(map, prefix, key)?;
        let c: Constant = serde_json::from_value(v.clone()).map_err(|e| {
            self.err(
                &field,
                &format!("must be a constant {{\"value\", \"unit\", \"status\", \"source\"}}: {e}"),
            )
        })?;
        if !c.value.is_finite() {
            return Err(self.err(&field, "value must be a finite number"));
        }
        if let Some(u) = unit {
            if c.unit.trim() != u {
                return Err(self.err(&field, &format!("unit must be {u:?} (got {:?})", c.unit)));
            }
        } else if c.unit.trim().is_empty() {
            return Err(self.err(&field, "unit must not be empty"));
        }
        if c.source.trim().is_empty() {
            return Err(self.err(&field, "source must not be empty"));
        }
        if !(lo..=hi).contains(&c.value) {
            return Err(self.err(
                &field,
                &format!("value {} must be between {lo} and {hi}", c.value),
            ));
        }
        let value = c.value;
        self.constants.insert(field, c);
        Ok(value)
    }

    fn constant(
        &mut self,
        map: &Map<String, Value>,
        prefix: &str,
        key: &str,
        unit: &str,
        lo: f64,
        hi: f64,
    ) -> Result<f64, InputError> {
        self.constant_any_unit(map, prefix, key, Some(unit), lo, hi)
    }

    /// One compartment; returns it, its isotherm data range and its dry-matter fraction (1 for single).
    fn compartment(
        &mut self,
        comps: &Map<String, Value>,
        key: &str,
        two: bool,
    ) -> Result<(Compartment, Option<DataRange>, f64), InputError> {
        let prefix = format!("compartments.{key}");
        let keys: &[&str] = if two {
            &[
                "dry_matter_fraction",
                "adsorption_offset_db",
                "isotherm",
                "thin_layer",
            ]
        } else {
            &["adsorption_offset_db", "isotherm", "thin_layer"]
        };
        let v = self.req(comps, "compartments", key)?;
        let map = self.object(v, &prefix, keys)?;
        let fraction = if two {
            self.constant(map, &prefix, "dry_matter_fraction", "-", 0.01, 0.99)?
        } else {
            1.0
        };
        let offset = self.constant(
            map,
            &prefix,
            "adsorption_offset_db",
            "decimal d.b.",
            0.0,
            0.05,
        )?;
        let (isotherm, range) = self.isotherm(map, &prefix)?;
        let thin_layer = self.thin_layer(map, &prefix)?;
        Ok((
            Compartment {
                sorption: Sorption {
                    desorption: isotherm,
                    adsorption_offset_db: offset,
                },
                thin_layer,
            },
            range,
            fraction,
        ))
    }

    fn isotherm(
        &mut self,
        parent: &Map<String, Value>,
        prefix: &str,
    ) -> Result<(Isotherm, Option<DataRange>), InputError> {
        let p = join(prefix, "isotherm");
        let v = self.req(parent, prefix, "isotherm")?;
        let probe = v.as_object().and_then(|m| m.get("form")).cloned();
        let form: Option<IsothermForm> = probe.and_then(|f| serde_json::from_value(f).ok());
        let keys: &[&str] = if form == Some(IsothermForm::Cromarty) {
            &["form", "moisture_unit", "a", "data_range"]
        } else {
            &["form", "moisture_unit", "a", "b", "c", "data_range"]
        };
        let map = self.object(v, &p, keys)?;
        let form: IsothermForm = self.choice(
            map,
            &p,
            "form",
            "modified-henderson, modified-chung-pfost, modified-halsey, modified-oswin, modified-gab, cromarty",
        )?;
        let unit: MoistureUnit = self.choice(map, &p, "moisture_unit", "decimal-db, percent-db")?;
        let big = 1e6;
        let iso = if form == IsothermForm::Cromarty {
            if unit != MoistureUnit::PercentDb {
                return Err(self.err(
                    &join(&p, "moisture_unit"),
                    "the Cromarty equation is defined in percent dry basis: use \"percent-db\"",
                ));
            }
            Isotherm::Cromarty {
                oil_content_db: self.constant(map, &p, "a", "decimal d.b.", 0.0, 0.9)?,
            }
        } else {
            let a = self.constant_any_unit(map, &p, "a", None, -big, big)?;
            let b = self.constant_any_unit(map, &p, "b", None, -big, big)?;
            let c = self.constant_any_unit(map, &p, "c", None, -big, big)?;
            match form {
                IsothermForm::ModifiedHenderson => Isotherm::ModifiedHenderson { a, b, c, unit },
                IsothermForm::ModifiedChungPfost => Isotherm::ModifiedChungPfost { a, b, c, unit },
                IsothermForm::ModifiedHalsey => Isotherm::ModifiedHalsey { a, b, c, unit },
                IsothermForm::ModifiedOswin => Isotherm::ModifiedOswin { a, b, c, unit },
                IsothermForm::ModifiedGab => Isotherm::ModifiedGab { a, b, c, unit },
                IsothermForm::Cromarty => unreachable!("handled above"),
            }
        };
        if let Err((name, why)) = iso.check() {
            return Err(self.err(&join(&p, name), why));
        }
        let range = match map.get("data_range") {
            None => None,
            Some(v) => {
                let rp = join(&p, "data_range");
                let m = self.object(v, &rp, &["t_min_c", "t_max_c", "rh_min", "rh_max"])?;
                let r = DataRange {
                    t_min_c: self.constant(m, &rp, "t_min_c", "degC", -50.0, 150.0)?,
                    t_max_c: self.constant(m, &rp, "t_max_c", "degC", -50.0, 150.0)?,
                    rh_min: self.constant(m, &rp, "rh_min", "decimal", 0.0, 1.0)?,
                    rh_max: self.constant(m, &rp, "rh_max", "decimal", 0.0, 1.0)?,
                };
                if r.t_min_c >= r.t_max_c || r.rh_min >= r.rh_max {
                    return Err(self.err(&rp, "minimum must be below maximum"));
                }
                Some(r)
            }
        };
        Ok((iso, range))
    }

    fn thin_layer(
        &mut self,
        parent: &Map<String, Value>,
        prefix: &str,
    ) -> Result<ThinLayer, InputError> {
        let p = join(prefix, "thin_layer");
        let v = self.req(parent, prefix, "thin_layer")?;
        let form = v
            .as_object()
            .and_then(|m| m.get("form"))
            .and_then(Value::as_str)
            .unwrap_or("");
        const RATE: [&str; 5] = [
            "form",
            "k_ref_per_h",
            "t_ref_c",
            "activation_energy_j_per_mol",
            "rh_slope",
        ];
        let keys: Vec<&str> = match form {
            "page" => RATE.iter().copied().chain(["n"]).collect(),
            "henderson-pabis" => RATE.iter().copied().chain(["a"]).collect(),
            "two-term" => RATE.iter().copied().chain(["a", "k2_ratio"]).collect(),
            "thompson-corn" => vec!["form"],
            _ => RATE.to_vec(),
        };
        let map = self.object(v, &p, &keys)?;
        let form = match self.string(map, &p, "form")?.as_str() {
            f @ ("exponential" | "page" | "henderson-pabis" | "two-term" | "thompson-corn") => {
                f.to_string()
            }
            other => {
                return Err(self.err(
                    &join(&p, "form"),
                    &format!(
                        "{other:?} is not one of: exponential, page, henderson-pabis, two-term, thompson-corn"
                    ),
                ))
            }
        };
        if form == "thompson-corn" {
            return Ok(ThinLayer::ThompsonCorn);
        }
        let k_unit = if form == "page" { "1/h^n" } else { "1/h" };
        let rate = ArrheniusRate {
            k_ref_per_h: self.constant(map, &p, "k_ref_per_h", k_unit, 1e-6, 100.0)?,
            t_ref_c: self.constant(map, &p, "t_ref_c", "degC", -20.0, 150.0)?,
            activation_energy_j_per_mol: self.constant(
                map,
                &p,
                "activation_energy_j_per_mol",
                "J/mol",
                0.0,
                200_000.0,
            )?,
            rh_slope: if map.contains_key("rh_slope") {
                self.constant(map, &p, "rh_slope", "-", 0.0, 20.0)?
            } else {
                0.0
            },
        };
        Ok(match form.as_str() {
            "exponential" => ThinLayer::Exponential { rate },
            "page" => ThinLayer::Page {
                rate,
                n: self.constant(map, &p, "n", "-", 0.05, 3.0)?,
            },
            "henderson-pabis" => ThinLayer::HendersonPabis {
                rate,
                a: self.constant(map, &p, "a", "-", 0.5, 1.5)?,
            },
            _ => ThinLayer::TwoTerm {
                rate,
                a: self.constant(map, &p, "a", "-", 0.0, 1.0)?,
                k2_ratio: self.constant(map, &p, "k2_ratio", "-", 1e-3, 1e3)?,
            },
        })
    }
}
