//! The run's accounts: water and energy balances, fuel and fan energy, and the drying-rate and temperature peaks,
//! each added up once per step in column order so the totals never depend on the thread count.

use super::layer::ColumnStepTotals;
use crate::props::psychro::{self, AirState};

/// Water and energy accounts of a run, for the balances.
#[derive(Debug, Clone, Copy, Default, PartialEq, serde::Serialize)]
pub struct Balances {
    /// Water held by the peanuts at the start, kg.
    pub water_start_kg: f64,
    /// …at the end, kg.
    pub water_end_kg: f64,
    /// Water the air carried off (exhaust minus plenum humidity, integrated), kg.
    pub water_to_air_kg: f64,
    /// Burner heat released into the air (LHV basis), J.
    pub burner_heat_j: f64,
    /// Enthalpy the burner and fan added to the air (plenum minus ambient), J.
    pub air_heating_j: f64,
    /// Enthalpy carried off by the exhaust above ambient air, J.
    pub exhaust_excess_j: f64,
    /// Change of sensible heat stored in the peanuts and their water, J.
    pub sensible_storage_j: f64,
    /// Heat of sorption taken by bound water beyond free-water latent heat, J.
    pub sorption_heat_j: f64,
    /// Fan electricity, J.
    pub fan_electric_j: f64,
    /// Water condensed from over-saturated air back onto the peanuts, kg.
    pub condensate_kg: f64,
    /// Largest one-step water removal relative to the adiabatic-saturation bound of the plenum air (can pass 1
    /// briefly while warm peanuts give up their own heat).
    pub max_removal_vs_adiabatic: f64,
    /// Water the air could have carried off over the run had it left saturated at its wet bulb (DOMAIN.md §6.3),
    /// kg. Removal cannot exceed this plus what the peanuts' own sensible heat can evaporate.
    pub adiabatic_capacity_kg: f64,
}

/// One column's contribution to a step's accounts.
#[derive(Debug, Clone, Copy)]
pub struct ColumnFlux<'a> {
    /// The layer step's totals for the column.
    pub totals: &'a ColumnStepTotals,
    /// Air leaving the top.
    pub exhaust_t_c: f64,
    /// Its humidity ratio.
    pub exhaust_w: f64,
    /// Dry air through the column in the step, kg (flux × step × column area).
    pub dry_air_kg: f64,
}

/// What one step put in.
#[derive(Debug, Clone, Copy)]
pub struct StepAir {
    /// Ambient air.
    pub ambient: AirState,
    /// Plenum air.
    pub plenum: AirState,
    /// Burner heat, W.
    pub heat_w: f64,
    /// Fan electrical input, W.
    pub electric_w: f64,
    /// Dry air through the bed, kg/s.
    pub dry_air_kg_per_s: f64,
    /// Step length, s.
    pub dt_s: f64,
    /// Floor area of one column, m².
    pub column_area_m2: f64,
}

impl Balances {
    /// These accounts, with the adiabatic bound's figures NaN when the run does not add it up.
    pub fn with_adiabatic_bound(self, kept: bool) -> Self {
        if kept {
            self
        } else {
            Balances {
                max_removal_vs_adiabatic: f64::NAN,
                adiabatic_capacity_kg: f64::NAN,
                ..self
            }
        }
    }

    /// Add one step; returns the water the peanuts gave up in it, kg.
    pub fn add_step<'a>(
        &mut self,
        air: &StepAir,
        columns: impl Iterator<Item = ColumnFlux<'a>>,
    ) -> f64 {
        self.burner_heat_j += air.heat_w * air.dt_s;
        self.fan_electric_j += air.electric_w * air.dt_s;
        let h_amb = air.ambient.enthalpy_j_per_kg();
        let h_plenum = air.plenum.enthalpy_j_per_kg();
        let mut removed = 0.0;
        for c in columns {
            if c.dry_air_kg <= 0.0 {
                continue;
            }
            removed += c.totals.water_removed_kg_per_m2 * air.column_area_m2;
            self.water_to_air_kg += c.dry_air_kg * (c.exhaust_w - air.plenum.w);
            self.air_heating_j += c.dry_air_kg * (h_plenum - h_amb);
            self.exhaust_excess_j +=
                c.dry_air_kg * (psychro::enthalpy_j_per_kg(c.exhaust_t_c, c.exhaust_w) - h_amb);
            self.sorption_heat_j += c.totals.sorption_heat_j_per_m2 * air.column_area_m2;
            self.condensate_kg += c.totals.condensate_kg_per_m2 * air.column_area_m2;
        }
        removed
    }

    /// Add the step's adiabatic bound (DOMAIN.md §6.3): the air cannot take up more than it would leaving
    /// saturated at its wet bulb. `removed_kg` is the water removed in the step.
    pub fn add_adiabatic_bound(&mut self, air: &StepAir, removed_kg: f64) {
        let p = air.plenum;
        let t_wb = psychro::wet_bulb_c(p.t_c, p.w, p.p_pa);
        let bound = air.dry_air_kg_per_s
            * air.dt_s
            * (psychro::saturation_humidity_ratio(t_wb, p.p_pa) - p.w);
        self.adiabatic_capacity_kg += bound.max(0.0);
        if bound > 0.0 {
            self.max_removal_vs_adiabatic = self.max_removal_vs_adiabatic.max(removed_kg / bound);
        }
    }
}

/// Hourly drying-rate bookkeeping: the largest hourly drop of mean kernel moisture and the hours spent above the
/// crop's safe rate.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct RateWatch {
    last: (f64, f64),
    /// Largest hourly drop, percentage points per hour.
    pub max_pct_per_h: f64,
    /// Hours above the safe rate.
    pub hours_fast: f64,
    safe_pct_per_h: f64,
}

impl RateWatch {
    /// Start at `mean_kernel_wb`, hour 0.
    pub fn new(mean_kernel_wb: f64, safe_pct_per_h: f64) -> Self {
        RateWatch {
            last: (0.0, mean_kernel_wb),
            max_pct_per_h: 0.0,
            hours_fast: 0.0,
            safe_pct_per_h,
        }
    }

    /// Look at the mean at `hours`; each full hour closes a rate interval.
    pub fn observe(&mut self, hours: f64, mean_kernel_wb: f64) {
        let (h0, m0) = self.last;
        if hours - h0 >= 1.0 - 1e-9 {
            let rate = (m0 - mean_kernel_wb) * 100.0 / (hours - h0);
            self.max_pct_per_h = self.max_pct_per_h.max(rate);
            if rate > self.safe_pct_per_h {
                self.hours_fast += hours - h0;
            }
            self.last = (hours, mean_kernel_wb);
        }
    }
}
