//! Advice: where a run's settings fall outside the trade's good practice, the figure, the usual value and why it
//! matters (fuel, splits, time). No I/O: the summary and the reports show the list.
//!
//! The usual values are facts of the trade, labelled as in `../shared/reference/DOMAIN.md`: about 10 m³/min of air
//! per m³ of peanuts ("Performance of Semi-Trailer Peanut Drying Units", 2009, proceedings of the American Peanut
//! Research and Education Society, abstract; DOMAIN.md §12); a rise of about 8 K over ambient, a plenum of about
//! 35 °C and a batch drying rate of about 0.5 %-points per hour (common practice, DOMAIN.md §7.2); a container
//! filled to about 1.3 m in 1.4 m walls (common practice, DOMAIN.md §7.4). How far from a usual value a figure may go
//! before it is flagged is our own choice, written beside each threshold.

use crate::load::{LoadResult, LoadSpec};
use crate::units::UnitSystem;

/// The trade's usual air per volume of peanuts, m³/min per m³ ("Performance of Semi-Trailer Peanut Drying Units").
pub const USUAL_AIRFLOW_M3_MIN_PER_M3: f64 = 10.0;
/// Flagged below this: under two thirds of the usual air (our threshold).
pub const LOW_AIRFLOW_M3_MIN_PER_M3: f64 = 6.5;
/// Flagged above this: half as much again as the usual air (our threshold).
pub const HIGH_AIRFLOW_M3_MIN_PER_M3: f64 = 15.0;
/// The usual cap on the rise over ambient, K (common practice).
pub const USUAL_MAX_RISE_K: f64 = 8.0;
/// The usual highest plenum temperature, °C (common practice).
pub const USUAL_MAX_PLENUM_C: f64 = 35.0;
/// The usual highest batch drying rate, %-points w.b. per hour (common practice).
pub const USUAL_MAX_RATE_PCT_PER_H: f64 = 0.5;
/// Flagged below this share of the wall height filled (our threshold; the usual fill is about 1.3 m in 1.4 m walls,
/// 93 %, common practice).
pub const LOW_FILL_FRACTION: f64 = 0.8;
/// Room for the printing and stepping of a figure at its limit (a rise set to 8 K reads 8.0000001 K after the fan's
/// heat is counted): 0.5 % of the limit.
const MARGIN: f64 = 1.005;

/// The figures of a run the rules look at.
#[derive(Debug, Clone, Copy, PartialEq, serde::Serialize)]
pub struct Figures {
    /// Air through the bed per volume of peanuts, m³/min per m³.
    pub specific_airflow_m3_per_min_per_m3: f64,
    /// Highest plenum temperature over ambient during the run, K.
    pub max_rise_k: f64,
    /// Highest plenum temperature during the run, °C.
    pub max_plenum_c: f64,
    /// Highest batch drying rate, %-points w.b. per hour.
    pub max_rate_pct_per_h: f64,
    /// Volume of peanuts over the container's volume to its wall height (0–1).
    pub fill_fraction: f64,
}

/// Which piece of good practice a run left.
#[derive(Debug, Clone, Copy, PartialEq, Eq, serde::Serialize)]
#[serde(rename_all = "kebab-case")]
pub enum Rule {
    /// Far less air per m³ than usual.
    LowAirflow,
    /// Far more air per m³ than usual.
    HighAirflow,
    /// A rise over ambient above the usual cap.
    HighRise,
    /// A plenum hotter than the usual maximum.
    HotPlenum,
    /// A batch drying rate above the usual maximum.
    FastDrying,
    /// A container filled well below its walls.
    PartFill,
}

/// One piece of advice: the rule, the run's figure, the usual value (both in the rule's SI unit) and why it matters.
#[derive(Debug, Clone, Copy, PartialEq, serde::Serialize)]
pub struct Advice {
    /// Which rule.
    pub rule: Rule,
    /// The run's figure, in the rule's SI unit (m³/min per m³, K, °C, %-points/h, fraction of the wall height).
    pub figure: f64,
    /// The usual value in the same unit.
    pub usual: f64,
    /// Where the usual value comes from.
    pub source: &'static str,
    /// Why it matters.
    pub why: &'static str,
}

const COMMON: &str = "common practice";
const AIR_SOURCE: &str = "Performance of Semi-Trailer Peanut Drying Units (2009)";

/// The advice for a run's figures, in the order of the rules.
pub fn advise(f: &Figures) -> Vec<Advice> {
    let mut out = Vec::new();
    let q = f.specific_airflow_m3_per_min_per_m3;
    let mut add = |rule, figure, usual, source, why| {
        out.push(Advice {
            rule,
            figure,
            usual,
            source,
            why,
        })
    };
    if q < LOW_AIRFLOW_M3_MIN_PER_M3 {
        add(Rule::LowAirflow, q, USUAL_AIRFLOW_M3_MIN_PER_M3, AIR_SOURCE,
            "the drying front moves slowly: longer time on the dryer, and the top stays wet and warm, which risks mold");
    }
    if q > HIGH_AIRFLOW_M3_MIN_PER_M3 {
        add(Rule::HighAirflow, q, USUAL_AIRFLOW_M3_MIN_PER_M3, AIR_SOURCE,
            "the air leaves the bed before it is near saturation: more fuel per tonne for the heat carried out, and the bottom over-dries");
    }
    if f.max_rise_k > USUAL_MAX_RISE_K * MARGIN {
        add(
            Rule::HighRise,
            f.max_rise_k,
            USUAL_MAX_RISE_K,
            COMMON,
            "more fuel per tonne, an over-dried bottom layer (weight lost) and split kernels",
        );
    }
    if f.max_plenum_c > USUAL_MAX_PLENUM_C * MARGIN {
        add(
            Rule::HotPlenum,
            f.max_plenum_c,
            USUAL_MAX_PLENUM_C,
            COMMON,
            "split kernels and off flavour in the bottom layer; more fuel per tonne",
        );
    }
    if f.max_rate_pct_per_h > USUAL_MAX_RATE_PCT_PER_H * MARGIN {
        add(Rule::FastDrying, f.max_rate_pct_per_h, USUAL_MAX_RATE_PCT_PER_H, COMMON,
            "kernels dried this fast split and lose flavour; a lower rise or plenum set-point saves fuel as well");
    }
    if f.fill_fraction < LOW_FILL_FRACTION {
        add(Rule::PartFill, f.fill_fraction, 1.3 / 1.4, COMMON,
            "a shallow bed takes more air per m³ than the fan was sized for: fuel and fan energy per tonne rise, and the thin bed over-dries");
    }
    out
}

/// The advice an airflow solve alone can give (air per m³ and the fill; no heater has run).
pub fn airflow_advice(specific_airflow_m3_per_min_per_m3: f64, fill_fraction: f64) -> Vec<Advice> {
    advise(&Figures {
        specific_airflow_m3_per_min_per_m3,
        max_rise_k: 0.0,
        max_plenum_c: f64::NEG_INFINITY,
        max_rate_pct_per_h: 0.0,
        fill_fraction,
    })
}

/// The figures of a finished load: airflow from its solve, rise and plenum from its recorded series, the fill from
/// its container.
pub fn load_figures(spec: &LoadSpec, r: &LoadResult) -> Figures {
    let s = &r.airflow.summary;
    let rows = &r.outcome.series;
    let max_rise_k = rows
        .iter()
        .map(|row| row.plenum_c - row.ambient_c)
        .fold(0.0, f64::max);
    let max_plenum_c = rows
        .iter()
        .map(|row| row.plenum_c)
        .fold(f64::NEG_INFINITY, f64::max);
    let c = &spec.container;
    Figures {
        specific_airflow_m3_per_min_per_m3: s.specific_airflow_m3_per_min_per_m3,
        max_rise_k,
        max_plenum_c,
        max_rate_pct_per_h: r.outcome.max_rate_pct_per_h,
        fill_fraction: s.bed_volume_m3 / (c.floor_area_m2() * c.wall_height_m),
    }
}

impl Advice {
    /// One line for people, in the user's units.
    pub fn text(&self, u: UnitSystem) -> String {
        let (what, figure, usual) = match self.rule {
            Rule::LowAirflow | Rule::HighAirflow => (
                if self.rule == Rule::LowAirflow {
                    "little air per volume of peanuts"
                } else {
                    "much air per volume of peanuts"
                },
                u.specific_airflow(self.figure),
                u.specific_airflow(self.usual),
            ),
            Rule::HighRise => (
                "rise over ambient above the usual cap",
                u.temp_delta(self.figure),
                u.temp_delta(self.usual),
            ),
            Rule::HotPlenum => (
                "plenum hotter than usual",
                u.temp(self.figure),
                u.temp(self.usual),
            ),
            Rule::FastDrying => (
                "drying faster than usual",
                format!("{:.2} %-points/h", self.figure),
                format!("{:.1} %-points/h", self.usual),
            ),
            Rule::PartFill => (
                "container part-filled",
                format!("{:.0} % of the wall height", self.figure * 100.0),
                format!("{:.0} %", self.usual * 100.0),
            ),
        };
        format!(
            "advice: {what}: {figure} (usual about {usual}, {}): {}",
            self.source, self.why
        )
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    /// A run inside good practice: usual air, rise and plenum, a moderate rate, a full container.
    fn usual() -> Figures {
        Figures {
            specific_airflow_m3_per_min_per_m3: 10.0,
            max_rise_k: 8.0,
            max_plenum_c: 33.0,
            max_rate_pct_per_h: 0.4,
            fill_fraction: 0.93,
        }
    }

    fn rules(f: Figures) -> Vec<Rule> {
        advise(&f).iter().map(|a| a.rule).collect()
    }

    #[test]
    fn a_usual_run_gets_no_advice() {
        assert!(rules(usual()).is_empty());
    }

    #[test]
    fn low_airflow() {
        let f = |q| Figures {
            specific_airflow_m3_per_min_per_m3: q,
            ..usual()
        };
        assert_eq!(rules(f(4.0)), [Rule::LowAirflow]);
        assert!(rules(f(7.0)).is_empty());
        assert!((advise(&f(4.0))[0].figure - 4.0).abs() < 1e-12);
    }

    #[test]
    fn high_airflow() {
        let f = |q| Figures {
            specific_airflow_m3_per_min_per_m3: q,
            ..usual()
        };
        assert_eq!(rules(f(25.0)), [Rule::HighAirflow]);
        assert!(rules(f(14.0)).is_empty());
    }

    #[test]
    fn high_rise() {
        let f = |k| Figures {
            max_rise_k: k,
            ..usual()
        };
        assert_eq!(rules(f(11.0)), [Rule::HighRise]);
        // A rise set to the usual 8 K, read back with the fan's heat and round-off, is not flagged.
        assert!(rules(f(8.02)).is_empty());
    }

    #[test]
    fn hot_plenum() {
        let f = |c| Figures {
            max_plenum_c: c,
            ..usual()
        };
        assert_eq!(rules(f(40.6)), [Rule::HotPlenum]);
        assert!(rules(f(35.0)).is_empty());
    }

    #[test]
    fn fast_drying() {
        let f = |r| Figures {
            max_rate_pct_per_h: r,
            ..usual()
        };
        assert_eq!(rules(f(0.8)), [Rule::FastDrying]);
        assert!(rules(f(0.45)).is_empty());
    }

    #[test]
    fn part_fill() {
        let f = |x| Figures {
            fill_fraction: x,
            ..usual()
        };
        assert_eq!(rules(f(0.5)), [Rule::PartFill]);
        assert!(rules(f(0.85)).is_empty());
    }

    #[test]
    fn advice_text_follows_the_units() {
        let a = advise(&Figures {
            max_plenum_c: 40.0,
            ..usual()
        });
        assert!(a[0].text(UnitSystem::Si).contains("40.00 °C"));
        assert!(a[0].text(UnitSystem::Us).contains("104.00 °F"));
    }
}
