//! Sweeps over several machines: each machine runs one [`Shard`] of a sweep's (case, season) runs and keeps their
//! figures in a shard file; [`merge`] puts the shards of one sweep back together into exactly the single-machine
//! result (every run has its own seeds, so a run gives the same figures on whichever machine it ran, and the
//! percentiles are taken over the same figures in the same order).
//!
//! Figures are kept as Rust's shortest round-trip decimal text, so they read back bit for bit. Pure computation:
//! the input layer reads shard files, `report::season` writes them.

use std::path::{Path, PathBuf};

use super::kpi::{Kpis, KPI_FIELDS};
use super::sweep::{assemble, CaseResult, JobResult, Shard, SweepGrid};
use crate::drying::heater::StrategySpec;
use crate::error::InputError;
use crate::season::dispatch::DispatchPolicy;

/// The first field of every shard file; a file without it is not one.
pub const SHARD_FORMAT: &str = "dryfront season sweep shard, version 1";

/// What makes two shards parts of the same sweep, and what the merge needs to report it as the sweep would.
#[derive(Debug, Clone, PartialEq, serde::Serialize, serde::Deserialize)]
#[serde(deny_unknown_fields)]
pub struct SweepSetup {
    /// Every command-line value that shapes the results (not file paths: their contents are in `inputs_digest`).
    pub args: String,
    /// The SHA-256 of every input file, in the order the sweep read them (a file read twice listed once), joined
    /// by commas: the same hashes its `report.html` lists.
    pub inputs_digest: String,
    /// Buying point's name.
    pub name: String,
    /// Its currency.
    pub currency: String,
    /// Its wait limit, h.
    pub max_wait_h: f64,
    /// Dryer counts swept.
    pub dryer_counts: Vec<usize>,
    /// Policy names.
    pub policies: Vec<String>,
    /// Heater strategies in the heater language, or `scenario`.
    pub heaters: Vec<String>,
    /// Seasons per case.
    pub seasons: usize,
    /// Loads per season.
    pub loads: usize,
    /// The sweep's seed.
    pub seed: u64,
    /// The line that says which drier dried the loads.
    pub drier_note: String,
}

impl SweepSetup {
    /// The grid the setup names.
    pub fn grid(&self) -> Result<SweepGrid, String> {
        let policies = self
            .policies
            .iter()
            .map(|p| DispatchPolicy::from_name(p).ok_or_else(|| format!("{p:?} is not a policy")))
            .collect::<Result<_, _>>()?;
        let heaters = self
            .heaters
            .iter()
            .map(|h| match h.as_str() {
                "scenario" => Ok(None),
                h => h
                    .parse::<StrategySpec>()
                    .map(Some)
                    .map_err(|e| e.to_string()),
            })
            .collect::<Result<_, _>>()?;
        Ok(SweepGrid {
            dryer_counts: self.dryer_counts.clone(),
            policies,
            heaters,
        })
    }
}

/// One run as a shard file keeps it.
#[derive(Debug, Clone, PartialEq, serde::Serialize, serde::Deserialize)]
#[serde(deny_unknown_fields)]
pub struct ShardRun {
    /// Case position in the grid (dryer count slowest, then heater, then policy).
    pub case: usize,
    /// Season index.
    pub season: usize,
    /// The figures in [`KPI_FIELDS`] order, as shortest round-trip decimal text.
    pub figures: Vec<String>,
}

/// A shard file: one shard's runs of one sweep.
#[derive(Debug, Clone, PartialEq, serde::Serialize, serde::Deserialize)]
#[serde(deny_unknown_fields)]
pub struct ShardFile {
    /// [`SHARD_FORMAT`].
    pub format: String,
    /// `K/N`.
    pub shard: String,
    /// The sweep it belongs to.
    pub setup: SweepSetup,
    /// Its runs, in case-major order.
    pub runs: Vec<ShardRun>,
}

impl ShardFile {
    /// The file for `shard`'s `runs` of the sweep `setup`.
    pub fn new(setup: SweepSetup, shard: Shard, runs: &[JobResult]) -> Self {
        ShardFile {
            format: SHARD_FORMAT.into(),
            shard: shard.to_string(),
            setup,
            runs: runs
                .iter()
                .map(|r| ShardRun {
                    case: r.case,
                    season: r.season,
                    figures: r.kpis.values().iter().map(|v| format!("{v:?}")).collect(),
                })
                .collect(),
        }
    }

    /// Check the file on its own (format, shard, every run in range, in this shard and with whole figures) and
    /// return its shard and runs. Errors name `path` and the dotted field.
    pub fn check(&self, path: &Path) -> Result<(Shard, Vec<JobResult>), InputError> {
        let err = |field: String, message: String| crate::input::field_err(path, field, message);
        if self.format != SHARD_FORMAT {
            return Err(err(
                "format".into(),
                format!(
                    "{:?} is not a dryfront sweep shard ({SHARD_FORMAT:?})",
                    self.format
                ),
            ));
        }
        let shard = Shard::parse(&self.shard).map_err(|e| err("shard".into(), e.to_string()))?;
        let cases = self
            .setup
            .grid()
            .map_err(|e| err("setup".into(), e))?
            .cases()
            .len();
        let seasons = self.setup.seasons;
        let mut runs = Vec::with_capacity(self.runs.len());
        for (i, r) in self.runs.iter().enumerate() {
            let field = |f: &str| format!("runs[{i}].{f}");
            if r.case >= cases || r.season >= seasons {
                return Err(err(
                    field("case"),
                    format!(
                        "case {} season {} is outside the sweep's {cases} cases × {seasons} seasons",
                        r.case, r.season
                    ),
                ));
            }
            if !shard.holds(r.case * seasons + r.season) {
                return Err(err(
                    field("case"),
                    format!(
                        "case {} season {} is not a run of shard {shard}",
                        r.case, r.season
                    ),
                ));
            }
            let kpis = figures(&r.figures).ok_or_else(|| {
                err(
                    field("figures"),
                    format!("must be {} numbers written as text", KPI_FIELDS.len()),
                )
            })?;
            runs.push(JobResult {
                case: r.case,
                season: r.season,
                kpis,
            });
        }
        Ok((shard, runs))
    }
}

fn figures(text: &[String]) -> Option<Kpis> {
    let v: Vec<f64> = text
        .iter()
        .map(|t| t.parse::<f64>().ok())
        .collect::<Option<_>>()?;
    Kpis::from_values(&v.try_into().ok()?)
}

/// The sweep put back together from all its shards, each given once: its setup, grid and results, exactly as the
/// single-machine sweep gives them. Refuses shards of different sweeps (naming the two files), a shard given twice,
/// a missing shard, and a run missing from its shard.
pub fn merge(
    files: &[(PathBuf, ShardFile)],
) -> Result<(SweepSetup, SweepGrid, Vec<CaseResult>), InputError> {
    let Some((first_path, first)) = files.first() else {
        return Err(InputError::argument(
            "shard files",
            "none",
            "name every shard file of the sweep",
        ));
    };
    let mut seen: Vec<Option<&Path>> = Vec::new();
    let mut runs = Vec::new();
    for (path, file) in files {
        let (shard, mut rs) = file.check(path)?;
        let other = |field: &str, what: &str| {
            crate::input::field_err(
                path,
                field,
                format!(
                    "{what} than {} (shards of one sweep must come from the same command and inputs)",
                    first_path.display()
                ),
            )
        };
        if file.setup != first.setup {
            let field = if file.setup.args != first.setup.args {
                "setup.args"
            } else if file.setup.inputs_digest != first.setup.inputs_digest {
                "setup.inputs_digest"
            } else {
                "setup"
            };
            return Err(other(field, "belongs to another sweep"));
        }
        if seen.is_empty() {
            seen = vec![None; shard.count];
        } else if seen.len() != shard.count {
            return Err(other(
                "shard",
                &format!(
                    "splits the sweep into {} shards, not {}",
                    shard.count,
                    seen.len()
                ),
            ));
        }
        if let Some(earlier) = seen[shard.index] {
            return Err(crate::input::field_err(
                path,
                "shard",
                format!("shard {shard} is also given as {}", earlier.display()),
            ));
        }
        seen[shard.index] = Some(path);
        let expected = (0..first.setup.seasons * first.setup.grid().map_or(0, |g| g.cases().len()))
            .filter(|&j| shard.holds(j))
            .count();
        if rs.len() != expected {
            return Err(crate::input::field_err(
                path,
                "runs",
                format!("holds {} runs; shard {shard} has {expected}", rs.len()),
            ));
        }
        runs.append(&mut rs);
    }
    let missing: Vec<String> = seen
        .iter()
        .enumerate()
        .filter(|(_, p)| p.is_none())
        .map(|(k, _)| format!("{}/{}", k + 1, seen.len()))
        .collect();
    if !missing.is_empty() {
        return Err(InputError::argument(
            "shard files",
            format!("{} of {}", files.len(), seen.len()),
            &format!(
                "are not the whole sweep: shard {} missing",
                missing.join(", ")
            ),
        ));
    }
    let setup = first.setup.clone();
    let grid = setup
        .grid()
        .map_err(|e| crate::input::field_err(first_path, "setup", e))?;
    let results = assemble(&grid, setup.seasons, &runs).ok_or_else(|| {
        crate::input::field_err(
            first_path,
            "runs",
            "the shards repeat a run or leave one out",
        )
    })?;
    Ok((setup, grid, results))
}
