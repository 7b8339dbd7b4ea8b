//! The Thompson-style layer step: one column of thin layers crossed bottom to top by the column's air over one
//! time step, with a heat balance between air and peanuts, moisture change from the thin-layer law toward the
//! equilibrium moisture of the air, humidity and temperature from exact mass and enthalpy balances (latent heat of
//! bound water from the isotherm), and a condensation check (air never leaves above saturation; condensed water goes
//! back to the peanuts).
//!
//! Per layer, with R = dry matter in the layer / dry air through it in the step (DOMAIN.md §6.1):
//! 1. air and peanuts mix sensibly to a common T_e;
//! 2. the material's thin-layer law runs at (T_e, RH(T_e, W_in)) for dt, giving ΔM (dry basis, pod);
//! 3. W_out = W_in + R·ΔM;
//! 4. T_out from the enthalpy balance: air enthalpy (ASHRAE eq. 32, liquid water at 0 °C datum) + peanut sensible
//!    enthalpy (c_dm + c_w·M)·θ is conserved, less the heat of sorption R·ΔM·(ratio − 1)·h_fg(T_e) that bound water
//!    takes beyond free water (stored in the peanuts, counted in the energy balance);
//! 5. if RH(T_out, W_out) > 1, the air is brought to saturation on the same energy line and the condensate is
//!    returned to the peanuts as liquid water;
//! 6. if drying would leave the air more humid than the hulls' equilibrium RH, ΔM is scaled down until the two meet
//!    (air cannot leave wetter than equilibrium with the pods it has just passed), to within [`CAP_TOL_RH`] below.
//!
//! References: Thompson, Peart & Foster (1968) Trans. ASAE 11(4):582–586 (layer structure; step details in our own
//! notation, DOMAIN.md §6.1); ASHRAE Handbook—Fundamentals 2017 ch. 1 (moist-air enthalpy).

use crate::props::lanes::{four, Lanes};
use crate::props::psychro::{
    humidity_ratio_from_vapour_pressure, vapour_pressure_from_humidity_ratio, SaturationTable,
    CP_DRY_AIR, CP_VAPOUR, CP_WATER, EPS_WATER_AIR, HFG0,
};

/// Moisture state of one cell's pods: up to two compartments (hull and kernel), dry basis decimal, each per kg of
/// its own dry matter. Single-compartment crops use `hull` only and leave `kernel` equal to it.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct CellMoisture {
    /// Hull (outer, fast) compartment moisture, kg water / kg hull dry matter.
    pub hull_db: f64,
    /// Kernel (inner, slow) compartment moisture, kg water / kg kernel dry matter.
    pub kernel_db: f64,
    /// Moisture at the start of the present drying or wetting curve (the M₀ of the equivalent-time method, used
    /// by single-compartment crops whose curve is not first order).
    pub curve_start_db: f64,
}

/// What the layer step needs to know about the crop. Implemented by `crop::Crop`; tests use small stand-ins.
pub trait LayerMaterial: Sync {
    /// Advance the thin-layer law over `dt_s` at constant air temperature and RH (decimal).
    fn thin_layer_step(&self, m: CellMoisture, t_c: f64, rh: f64, dt_s: f64) -> CellMoisture;
    /// Four cells at once, each as [`LayerMaterial::thin_layer_step`] steps it to within round-off (the four
    /// columns of [`step_columns4`] at one layer); override where four at a time are cheaper than four one by one.
    fn thin_layer_step4(
        &self,
        m: [CellMoisture; 4],
        t_c: Lanes,
        rh: Lanes,
        dt_s: f64,
    ) -> [CellMoisture; 4] {
        four(|i| self.thin_layer_step(m[i], t_c[i], rh[i], dt_s))
    }
    /// Whole-pod moisture, dry basis (dry-matter-weighted mean of the compartments).
    fn pod_db(&self, m: CellMoisture) -> f64;
    /// Equilibrium RH (decimal) of the outer compartment at `t_c`: the air leaving a layer cannot be wetter.
    fn surface_erh(&self, m: CellMoisture, t_c: f64) -> f64;
    /// `u = −ln(1 − surface_erh)`, the log complement of that equilibrium RH: the equilibrium cap compares
    /// `exp(−u)` with the air's `1 − RH` (override where it is cheaper, or more precise near saturation, than
    /// through the ERH).
    fn surface_erh_log_complement(&self, m: CellMoisture, t_c: f64) -> f64 {
        -(1.0 - self.surface_erh(m, t_c)).ln()
    }
    /// Latent heat of bound water over that of free water (≥ 1) for a cell in state `m`.
    fn latent_heat_ratio(&self, t_c: f64, m: CellMoisture) -> f64;
    /// Specific heat of pod dry matter, J/(kg·K).
    fn cp_dry_j_per_kg_k(&self) -> f64;
    /// Add (or remove, if negative) water, in pod dry-basis terms, e.g. returned condensate (to the outer
    /// compartment first).
    fn add_water(&self, m: CellMoisture, d_pod_db: f64) -> CellMoisture;
    /// Kernel share of pod dry matter (1 for single-compartment crops).
    fn kernel_fraction(&self) -> f64;
    /// A fresh cell with kernel moisture `kernel_db` and its hull in moisture equilibrium with it at `t_c`.
    fn initial_state(&self, kernel_db: f64, t_c: f64) -> CellMoisture;
    /// Highest moisture (dry basis) the material's isotherms allow in any compartment below saturation; a run
    /// stops as non-physical above it (and above its starting moisture). No bound by default.
    fn moisture_ceiling_db(&self) -> f64 {
        f64::INFINITY
    }
}

/// Air crossing a layer: dry bulb °C and humidity ratio kg/kg dry air (pressure is the column's).
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct LayerAir {
    /// Dry bulb, °C.
    pub t_c: f64,
    /// Humidity ratio, kg/kg dry air.
    pub w: f64,
}

/// Totals of one column step, per m² of floor, for the balances.
#[derive(Debug, Clone, Copy, Default, PartialEq)]
pub struct ColumnStepTotals {
    /// Water that left the peanuts (net of condensate and rewetting), kg/m².
    pub water_removed_kg_per_m2: f64,
    /// Heat of sorption stored in the peanuts beyond free-water latent heat, J/m².
    pub sorption_heat_j_per_m2: f64,
    /// Condensate returned to the peanuts, kg/m².
    pub condensate_kg_per_m2: f64,
    /// Largest RH (decimal) of air leaving any layer.
    pub max_rh_out: f64,
    /// The first layer the step left colder than its floor, if any: (layer, temperature °C, floor °C). See
    /// `layer::below_floor`.
    pub below_floor: Option<(usize, f64, f64)>,
}

/// Relative round-off allowed when comparing a layer's saturation pressure with the vapour pressure of the air
/// that entered it (both from the same saturation table; about 2e-8 K in temperature).
const FLOOR_REL_TOL: f64 = 1e-9;
/// Round-off allowed on the sensible-mixing side of the floor, K (the enthalpy inversion is exact to about 1e-10 K).
const FLOOR_TOL_K: f64 = 1e-6;

/// The floor of one layer's temperature after a step, or `None` when `t_out` is on or above it. A layer ends no
/// colder than both its own peanuts and the air entering it were (sensible mixing, heat released by adsorption or
/// condensation), unless it ends no colder than the entering air's dew point (evaporation: the air leaving is at
/// most saturated and holds at least the water it brought). The floor is local: air dried by adsorption in a lower
/// layer can evaporatively cool the layers above it below the *plenum* air's dew point, as a desiccant cooler
/// does, so no bound from the plenum air alone holds for a whole column.
#[inline(always)]
fn below_floor(
    t_out: f64,
    p_ws_out: f64,
    t_before: f64,
    t_air_in: f64,
    p_w_in: f64,
) -> Option<f64> {
    let mixing = t_before.min(t_air_in);
    if t_out >= mixing - FLOOR_TOL_K || p_ws_out >= p_w_in * (1.0 - FLOOR_REL_TOL) {
        return None;
    }
    let dew = crate::props::psychro::dew_point_from_vapour_pressure_c(p_w_in);
    Some(mixing.min(dew))
}

/// Latent heat of free water consistent with the enthalpy datum of ASHRAE eq. 32 (h_fg0 + (c_v − c_w)·T), J/kg.
/// Using the same datum for the step keeps the energy balance exact.
#[inline]
pub fn free_water_latent_j_per_kg(t_c: f64) -> f64 {
    HFG0 + (CP_VAPOUR - CP_WATER) * t_c
}

/// One column's cells, bottom layer first. All slices have the same length.
pub struct ColumnMut<'a> {
    /// Hull moisture per layer, dry basis.
    pub hull_db: &'a mut [f64],
    /// Kernel moisture per layer, dry basis.
    pub kernel_db: &'a mut [f64],
    /// Start of each layer's present drying curve, dry basis (see [`CellMoisture`]).
    pub curve_start_db: &'a mut [f64],
    /// Peanut temperature per layer, °C.
    pub temp_c: &'a mut [f64],
    /// Pod dry matter per layer per m² of floor, kg/m².
    pub dry_matter_kg_per_m2: &'a [f64],
}

/// The air driving one column over one step.
#[derive(Debug, Clone, Copy)]
pub struct ColumnForcing {
    /// Plenum air entering the bottom layer.
    pub air_in: LayerAir,
    /// Dry-air mass flux through the column, kg/(s·m²).
    pub dry_air_kg_per_m2_s: f64,
    /// Barometric pressure, Pa.
    pub p_pa: f64,
    /// Time step, s.
    pub dt_s: f64,
}

/// What one column's step keeps fixed: its material, the saturation table, the peanuts' dry heat capacity, the
/// dry air through the column over the step (kg/m²) and the barometric pressure.
struct StepConsts<'a, M: ?Sized> {
    material: &'a M,
    sat: &'static SaturationTable,
    cp_dm: f64,
    air_kg: f64,
    p_pa: f64,
}

impl<M: ?Sized> Clone for StepConsts<'_, M> {
    fn clone(&self) -> Self {
        *self
    }
}
impl<M: ?Sized> Copy for StepConsts<'_, M> {}

impl<'a, M: LayerMaterial + ?Sized> StepConsts<'a, M> {
    fn of(material: &'a M, forcing: &ColumnForcing) -> Self {
        StepConsts {
            material,
            sat: SaturationTable::get(),
            cp_dm: material.cp_dry_j_per_kg_k(),
            air_kg: forcing.dry_air_kg_per_m2_s * forcing.dt_s,
            p_pa: forcing.p_pa,
        }
    }
}

/// A cell mixed with the air entering it (step 1 of [`step_column`]): what the thin-layer law and the exhaust need.
#[derive(Clone, Copy)]
struct Mixed {
    m: CellMoisture,
    air: LayerAir,
    dm: f64,
    r: f64,
    t_before: f64,
    pod0: f64,
    t_e: f64,
    p_w_in: f64,
    p_ws_e: f64,
    rh_e: f64,
    e_in: f64,
    extra_latent: f64,
}

/// Sensible mixing of four cells (`m` at `th` °C, `dm` kg dry matter per m², with the air entering each), each
/// lane's arithmetic alone and the four side by side, so that the compiler can pair them in vector registers.
#[inline(always)]
fn mix4<M: LayerMaterial + ?Sized>(
    c: &[StepConsts<'_, M>; 4],
    m: [CellMoisture; 4],
    th: Lanes,
    dm: Lanes,
    air: [LayerAir; 4],
) -> [Mixed; 4] {
    // one material and one saturation table for the four (as every caller has)
    let (material, sat) = (c[0].material, c[0].sat);
    let w = four(|l| air[l].w);
    let ta = four(|l| air[l].t_c);
    let r = four(|l| dm[l] / c[l].air_kg);
    let pod0 = four(|l| material.pod_db(m[l]));
    let c_air = four(|l| CP_DRY_AIR + CP_VAPOUR * w[l]);
    let c_grain = four(|l| c[l].cp_dm + CP_WATER * pod0[l]);
    // 1. sensible mixing
    let t_e =
        four(|l| (c_air[l] * ta[l] + r[l] * c_grain[l] * th[l]) / (c_air[l] + r[l] * c_grain[l]));
    let p_w_in = four(|l| vapour_pressure_from_humidity_ratio(w[l], c[l].p_pa));
    let p_ws_e = four(|l| sat.pressure_pa(t_e[l]));
    let rh_e = four(|l| (p_w_in[l] / p_ws_e[l]).min(1.0));
    // Enthalpy in: air (per kg dry air) + peanuts (per kg dry air through the layer).
    let e_in = four(|l| {
        CP_DRY_AIR * ta[l] + w[l] * (HFG0 + CP_VAPOUR * ta[l]) + r[l] * c_grain[l] * th[l]
    });
    let ratio = four(|l| material.latent_heat_ratio(t_e[l], m[l]));
    let extra_latent = four(|l| (ratio[l] - 1.0) * free_water_latent_j_per_kg(t_e[l]));
    four(|l| Mixed {
        m: m[l],
        air: air[l],
        dm: dm[l],
        r: r[l],
        t_before: th[l],
        pod0: pod0[l],
        t_e: t_e[l],
        p_w_in: p_w_in[l],
        p_ws_e: p_ws_e[l],
        rh_e: rh_e[l],
        e_in: e_in[l],
        extra_latent: extra_latent[l],
    })
}

/// The air leaving a cell whose pods lost `d_m` (dry basis) over the step: humidity ratio and temperature, from the
/// cell's energy balance.
#[inline(always)]
fn out_state<M: LayerMaterial + ?Sized>(c: &StepConsts<'_, M>, x: &Mixed, d_m: f64) -> (f64, f64) {
    let w_out = x.air.w + x.r * d_m;
    let pod1 = x.pod0 - d_m;
    let t_out = (x.e_in - w_out * HFG0 - x.r * d_m * x.extra_latent)
        / (CP_DRY_AIR + CP_VAPOUR * w_out + x.r * (c.cp_dm + CP_WATER * pod1));
    (w_out, t_out)
}

/// The air's 1 − RH at humidity ratio `w` and saturation pressure `p_ws`: 1 − p_w/p_ws with p_w = p·W/(ε + W), over
/// one division.
#[inline(always)]
fn dryness(p_pa: f64, w: f64, p_ws: f64) -> f64 {
    let eps_w = EPS_WATER_AIR + w;
    (p_ws * eps_w - p_pa * w) / (p_ws * eps_w)
}

/// The cell's state a fraction `s` of the way from `m` to `full` (both compartments alike; the curve start is the
/// full step's).
#[inline(always)]
fn partial(m: &CellMoisture, full: &CellMoisture, s: f64) -> CellMoisture {
    CellMoisture {
        hull_db: m.hull_db + s * (full.hull_db - m.hull_db),
        kernel_db: m.kernel_db + s * (full.kernel_db - m.kernel_db),
        curve_start_db: full.curve_start_db,
    }
}

/// The exhaust of a cell's uncapped thin-layer step (step 3 of [`step_column`]), and by how much its RH exceeds the
/// hulls' equilibrium RH when the cell dried (`e_hi`: positive when the equilibrium cap applies).
#[derive(Clone, Copy)]
struct Exhaust {
    d_m: f64,
    w_out: f64,
    t_out: f64,
    p_ws_out: f64,
    e_hi: f64,
}

/// The exhausts of four cells once the thin-layer law has given `m_new`, lane-array by lane-array as in [`mix4`]:
/// straight-line work but for the one exponential of an uncertain cap test.
#[inline(always)]
fn exhaust4<M: LayerMaterial + ?Sized>(
    c: &[StepConsts<'_, M>; 4],
    x: &[Mixed; 4],
    m_new: [CellMoisture; 4],
) -> [Exhaust; 4] {
    let (material, sat) = (c[0].material, c[0].sat);
    let d_m = four(|l| x[l].pod0 - material.pod_db(m_new[l]));
    let out = four(|l| out_state(&c[l], &x[l], d_m[l]));
    let p_ws_out = four(|l| sat.pressure_pa(out[l].1));
    let u_hi =
        four(|l| material.surface_erh_log_complement(partial(&x[l].m, &m_new[l], 1.0), out[l].1));
    // RH_out − ERH_hull, written as (1 − ERH_hull) − (1 − RH_out) so that neither side loses digits near
    // saturation. exp(u) ≥ 1 + u + u²/2 + u³/6 for u ≥ 0, so when dryness·(that) ≥ 1 the excess exp(−u) − dryness
    // is not positive, and most uncapped cells are settled without the exponential. The test is written without
    // dryness's division (its denominator p_ws·(ε + W) is positive), which sits on the layer's dependent chain. It
    // may round differently from the test with the division only within a few ulp of equality, where the bound's
    // slack (u⁴/24 relative, far above round-off for any moisture a hull holds) leaves the excess negative either
    // way, so the branch taken and every result are the same.
    let surely_below = four(|l| {
        let (w, p_ws, u) = (out[l].0, p_ws_out[l], u_hi[l]);
        let eps_w = EPS_WATER_AIR + w;
        let (den, num) = (p_ws * eps_w, p_ws * eps_w - c[l].p_pa * w);
        num * (1.0 + u * (1.0 + u * (0.5 + u * (1.0 / 6.0)))) >= den
    });
    four(|l| Exhaust {
        d_m: d_m[l],
        w_out: out[l].0,
        t_out: out[l].1,
        p_ws_out: p_ws_out[l],
        // no cap unless the cell dried (a NaN change does not)
        e_hi: if d_m[l] > 0.0 && !surely_below[l] {
            (-u_hi[l]).exp() - dryness(c[l].p_pa, out[l].0, p_ws_out[l])
        } else {
            0.0
        },
    })
}

/// The rest of a cell's step once the thin-layer law has given `m_new` and [`exhaust4`] its exhaust (steps 4–6 of
/// [`step_column`]: equilibrium cap, condensation, the column's totals): the cell's new moisture and the air leaving
/// it, whose temperature is the cell's.
#[inline(always)]
fn finish<M: LayerMaterial + ?Sized>(
    c: &StepConsts<'_, M>,
    x: &Mixed,
    m_new: CellMoisture,
    ex: Exhaust,
    k: usize,
    totals: &mut ColumnStepTotals,
) -> (CellMoisture, LayerAir) {
    let StepConsts {
        material,
        sat,
        cp_dm,
        air_kg,
        p_pa,
    } = *c;
    let Mixed {
        ref m,
        air,
        dm,
        r,
        t_before,
        pod0,
        t_e,
        p_w_in,
        p_ws_e,
        e_in,
        extra_latent,
        ..
    } = *x;
    let Exhaust {
        mut d_m,
        mut w_out,
        mut t_out,
        mut p_ws_out,
        e_hi,
    } = ex;
    let mut m_next = m_new;
    // 6. equilibrium cap when drying: scale the thin-layer change by s in [0, 1] (both compartments alike, so
    // the pod change scales linearly) until the exhaust RH meets the hulls' equilibrium RH.
    if e_hi > 0.0 {
        let d_m_full = d_m;
        let excess_at = |s: f64, w: f64, t: f64, p_ws: f64| {
            (-material.surface_erh_log_complement(partial(m, &m_new, s), t)).exp()
                - dryness(p_pa, w, p_ws)
        };
        // With no moisture change the air leaves at the mixing state (T = t_e, W = W_in), whose saturation
        // pressure is known already.
        let e_lo =
            (-material.surface_erh_log_complement(*m, t_e)).exp() - dryness(p_pa, air.w, p_ws_e);
        // The exhaust at the last fraction tried, which is usually the one returned.
        let mut last = (f64::NAN, w_out, t_out, p_ws_out);
        let s = cap_fraction(e_lo, e_hi, |s| {
            let (w, t) = out_state(c, x, s * d_m_full);
            last = (s, w, t, sat.pressure_pa(t));
            excess_at(s, w, t, last.3)
        });
        m_next = partial(m, &m_new, s);
        d_m = s * d_m_full;
        if last.0.to_bits() == s.to_bits() {
            (_, w_out, t_out, p_ws_out) = last;
        } else {
            (w_out, t_out) = out_state(c, x, d_m);
            p_ws_out = sat.pressure_pa(t_out);
        }
    }
    // 5. condensation check
    let w_sat = humidity_ratio_from_vapour_pressure(p_ws_out, p_pa);
    if w_out > w_sat {
        let pod1 = pod0 - d_m;
        let e_rhs = e_in - r * d_m * extra_latent;
        // f(T) = enthalpy of saturated air + peanuts holding the condensate, minus the energy available.
        let f = |t: f64| {
            let ws = sat.saturation_humidity_ratio(t, p_pa);
            let pod = pod1 + (w_out - ws) / r;
            CP_DRY_AIR * t + ws * (HFG0 + CP_VAPOUR * t) + r * (cp_dm + CP_WATER * pod) * t - e_rhs
        };
        let (mut lo, mut hi) = (t_out, t_out + 30.0);
        while f(hi) < 0.0 {
            hi += 30.0;
        }
        for _ in 0..60 {
            let mid = 0.5 * (lo + hi);
            if f(mid) > 0.0 {
                hi = mid;
            } else {
                lo = mid;
            }
        }
        let t_s = 0.5 * (lo + hi);
        p_ws_out = sat.pressure_pa(t_s);
        let w_s = humidity_ratio_from_vapour_pressure(p_ws_out, p_pa);
        let condensate = w_out - w_s;
        m_next = material.add_water(m_next, condensate / r);
        totals.condensate_kg_per_m2 += condensate * air_kg;
        d_m -= condensate / r;
        t_out = t_s;
        w_out = w_s;
        // The condensate's share of sorption heat is not counted: it returns as free water.
        totals.sorption_heat_j_per_m2 += (pod0 - pod1) * dm * extra_latent;
    } else {
        totals.sorption_heat_j_per_m2 += d_m * dm * extra_latent;
    }
    if totals.below_floor.is_none() {
        if let Some(floor) = below_floor(t_out, p_ws_out, t_before, air.t_c, p_w_in) {
            totals.below_floor = Some((k, t_out, floor));
        }
    }
    totals.water_removed_kg_per_m2 += d_m * dm;
    totals.max_rh_out = totals
        .max_rh_out
        .max(vapour_pressure_from_humidity_ratio(w_out, p_pa) / p_ws_out);
    (
        m_next,
        LayerAir {
            t_c: t_out,
            w: w_out,
        },
    )
}

/// Advance one column over one time step.
///
/// The column's layers run bottom to top (see [`ColumnMut`], [`CellMoisture`]); `forcing` gives the plenum air,
/// the column's dry-air mass flux and barometric pressure. Returns the exhaust air and the step totals. With no
/// air flow the peanuts keep their state (no air, no exchange in this model).
pub fn step_column<M: LayerMaterial + ?Sized>(
    material: &M,
    column: ColumnMut<'_>,
    forcing: ColumnForcing,
) -> (LayerAir, ColumnStepTotals) {
    let mut totals = ColumnStepTotals::default();
    let c = StepConsts::of(material, &forcing);
    if c.air_kg <= 0.0 {
        return (forcing.air_in, totals);
    }
    let ColumnMut {
        hull_db,
        kernel_db,
        curve_start_db,
        temp_c,
        dry_matter_kg_per_m2,
    } = column;
    // Re-sliced to one length so the loop below needs no bounds checks.
    let n = dry_matter_kg_per_m2.len();
    let (hull_db, kernel_db, curve_start_db, temp_c) = (
        &mut hull_db[..n],
        &mut kernel_db[..n],
        &mut curve_start_db[..n],
        &mut temp_c[..n],
    );
    let mut air = forcing.air_in;
    for k in 0..n {
        let dm = dry_matter_kg_per_m2[k];
        if dm <= 0.0 {
            continue;
        }
        let m = CellMoisture {
            hull_db: hull_db[k],
            kernel_db: kernel_db[k],
            curve_start_db: curve_start_db[k],
        };
        // the four-cell parts with the cell in every lane (this one-column step is no hot path; the four-column
        // step is)
        let [x, ..] = mix4(&[c; 4], [m; 4], [temp_c[k]; 4], [dm; 4], [air; 4]);
        // 2. thin-layer law
        let m_new = material.thin_layer_step(m, x.t_e, x.rh_e, forcing.dt_s);
        let [ex, ..] = exhaust4(&[c; 4], &[x; 4], [m_new; 4]);
        let (m_next, out) = finish(&c, &x, m_new, ex, k, &mut totals);
        hull_db[k] = m_next.hull_db;
        kernel_db[k] = m_next.kernel_db;
        curve_start_db[k] = m_next.curve_start_db;
        temp_c[k] = out.t_c;
        air = out;
    }
    (air, totals)
}

/// Four columns advanced over one time step together, layer by layer: each cell as [`step_column`] steps it, the
/// four cells of a layer through one [`LayerMaterial::thin_layer_step4`] call (so each column's result is
/// `step_column`'s to within round-off, and does not depend on the other three). A column with no air, or with
/// fewer layers, sits out the layers it does not have; an empty column (no layers) pads a group of fewer than
/// four. Columns stepped with different time steps go one by one through `step_column`.
pub fn step_columns4<M: LayerMaterial + ?Sized>(
    material: &M,
    columns: [ColumnMut<'_>; 4],
    forcing: [ColumnForcing; 4],
) -> [(LayerAir, ColumnStepTotals); 4] {
    let dt_s = forcing[0].dt_s;
    if forcing.iter().any(|f| f.dt_s.to_bits() != dt_s.to_bits()) {
        let mut out = [(forcing[0].air_in, ColumnStepTotals::default()); 4];
        for ((o, column), f) in out.iter_mut().zip(columns).zip(forcing) {
            *o = step_column(material, column, f);
        }
        return out;
    }
    let mut columns = columns;
    let consts = four(|l| StepConsts::of(material, &forcing[l]));
    let mut totals = [ColumnStepTotals::default(); 4];
    let mut air = four(|l| forcing[l].air_in);
    let layers = four(|l| columns[l].dry_matter_kg_per_m2.len());
    for k in 0..layers.into_iter().max().unwrap_or(0) {
        let dm = four(|l| match columns[l].dry_matter_kg_per_m2.get(k) {
            Some(&dm) if consts[l].air_kg > 0.0 => dm,
            _ => 0.0,
        });
        let active = four(|l| dm[l] > 0.0);
        // a lane with no cell here steps a copy of one that has (its result is not used)
        let Some(first) = active.iter().position(|&a| a) else {
            continue;
        };
        let lane = four(|l| if active[l] { l } else { first });
        let lane_consts = four(|l| consts[lane[l]]);
        let mixed = mix4(
            &lane_consts,
            four(|l| {
                let col = &columns[lane[l]];
                CellMoisture {
                    hull_db: col.hull_db[k],
                    kernel_db: col.kernel_db[k],
                    curve_start_db: col.curve_start_db[k],
                }
            }),
            four(|l| columns[lane[l]].temp_c[k]),
            four(|l| dm[lane[l]]),
            four(|l| air[lane[l]]),
        );
        let m_new = material.thin_layer_step4(
            four(|l| mixed[l].m),
            four(|l| mixed[l].t_e),
            four(|l| mixed[l].rh_e),
            dt_s,
        );
        let ex = exhaust4(&lane_consts, &mixed, m_new);
        for l in 0..4 {
            if !active[l] {
                continue;
            }
            let (m_next, out) = finish(&consts[l], &mixed[l], m_new[l], ex[l], k, &mut totals[l]);
            let col = &mut columns[l];
            col.hull_db[k] = m_next.hull_db;
            col.kernel_db[k] = m_next.kernel_db;
            col.curve_start_db[k] = m_next.curve_start_db;
            col.temp_c[k] = out.t_c;
            air[l] = out;
        }
    }
    four(|l| (air[l], totals[l]))
}

/// How close below the hulls' equilibrium RH (decimal) the equilibrium cap lets the exhaust leave: the capped step
/// removes at most this much less water than the exact cap would, never more.
pub const CAP_TOL_RH: f64 = 1e-8;

/// The equilibrium cap's fraction: for a continuous excess `f` on [0, 1] (exhaust RH over the hulls' equilibrium RH)
/// with `f(0) = f_lo < 0 < f(1) = f_hi`, a point `s` with `−CAP_TOL_RH ≤ f(s) ≤ 0`, or failing that the end of a
/// shrunken bracket where `f < 0`; never a point where `f > 0`. Returns 0 if `f_lo` is already within tolerance of 0 or
/// above it.
///
/// The excess is close to linear in `s`, so the root is aimed at `−CAP_TOL_RH / 2` by inverse quadratic
/// interpolation through the bracket ends and the last point dropped from it (after a first false-position step),
/// which lands inside the tolerance in two or three evaluations; false position with the Illinois weight halving
/// takes over whenever that estimate falls outside the bracket.
pub fn cap_fraction(f_lo: f64, f_hi: f64, mut f: impl FnMut(f64) -> f64) -> f64 {
    if f_lo >= -CAP_TOL_RH {
        return 0.0;
    }
    let aim = -0.5 * CAP_TOL_RH;
    // Bracket [a, b] with g = f − aim: g(a) < 0 < g(b); `wa`, `wb` are the Illinois weights of the two ends.
    let (mut a, mut ga) = (0.0, f_lo - aim);
    let (mut b, mut gb) = (1.0, f_hi - aim);
    let (mut wa, mut wb) = (ga, gb);
    let mut dropped: Option<(f64, f64)> = None;
    let mut side = 0i8;
    for _ in 0..60 {
        let false_position = a - wa * (b - a) / (wb - wa);
        let x = dropped
            .map(|(c, gc)| inverse_quadratic_root((a, ga), (b, gb), (c, gc)))
            .filter(|x| *x > a && *x < b)
            .unwrap_or(false_position);
        let fx = f(x);
        if (-CAP_TOL_RH..=0.0).contains(&fx) {
            return x;
        }
        let gx = fx - aim;
        if gx < 0.0 {
            dropped = Some((a, ga));
            (a, ga, wa) = (x, gx, gx);
            if side == 1 {
                wb *= 0.5;
            }
            side = 1;
        } else {
            dropped = Some((b, gb));
            (b, gb, wb) = (x, gx, gx);
            if side == -1 {
                wa *= 0.5;
            }
            side = -1;
        }
        if b - a < 1e-12 {
            break;
        }
    }
    a
}

/// Root of the quadratic in g through three points (x, g), i.e. the x where the inverse quadratic interpolant gives
/// g = 0 (Lagrange form); NaN if two g values coincide.
fn inverse_quadratic_root((a, ga): (f64, f64), (b, gb): (f64, f64), (c, gc): (f64, f64)) -> f64 {
    a * gb * gc / ((ga - gb) * (ga - gc))
        + b * ga * gc / ((gb - ga) * (gb - gc))
        + c * ga * gb / ((gc - ga) * (gc - gb))
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn the_floor_holds_a_layer_to_its_mixing_temperature_or_its_air_dew_point() {
        let p_w_in = 1_900.0; // Pa, dew point about 16.7 °C (ASHRAE Fundamentals ch. 1 table 3: 1.938 kPa at 17 °C)
        let sat = SaturationTable::get();
        let dew = crate::props::psychro::dew_point_from_vapour_pressure_c(p_w_in);
        // Warmed (adsorption): never below the floor whatever the air.
        assert_eq!(
            below_floor(18.0, sat.pressure_pa(18.0), 17.0, 20.0, p_w_in),
            None
        );
        // Cooled by evaporation to just above the entering air's dew point: allowed.
        let t = dew + 1e-6;
        assert_eq!(below_floor(t, sat.pressure_pa(t), 17.0, 20.0, p_w_in), None);
        // Cooled below both the mixing temperature and the dew point: caught; the floor is the lower of the two
        // (the dew point here, 16.7 < 17).
        let t = dew - 0.01;
        let floor =
            below_floor(t, sat.pressure_pa(t), 17.0, 20.0, p_w_in).expect("below its floor");
        assert!((floor - dew).abs() < 1e-12, "{floor} vs {dew}");
    }

    /// Runs the cap's root finder on `f`, counting evaluations; checks it never returns a point where the exhaust
    /// would be wetter than equilibrium and, where `f` is continuous, lands within the tolerance.
    fn solve(f: impl Fn(f64) -> f64, continuous: bool) -> (f64, usize) {
        let mut evaluations = 0;
        let s = cap_fraction(f(0.0), f(1.0), |s| {
            evaluations += 1;
            f(s)
        });
        assert!((0.0..=1.0).contains(&s), "s = {s}");
        assert!(f(s) <= 0.0, "f({s}) = {:e} is on the wet side", f(s));
        if continuous {
            assert!(
                f(s) >= -CAP_TOL_RH,
                "f({s}) = {:e} is further than the tolerance",
                f(s)
            );
        }
        (s, evaluations)
    }

    #[test]
    fn cap_fraction_lands_inside_the_tolerance_on_the_dry_side() {
        // Near-linear excesses, as the layer step meets them (a bend of a per cent or so of their span either way),
        // take at most three evaluations (one when exactly linear).
        for curvature in [-0.05, 0.0, 0.05] {
            for root in [0.03, 0.3, 0.97] {
                let f = |s: f64| 0.02 * (s - root) + curvature * 0.02 * (s - root).powi(2);
                let (s, n) = solve(f, true);
                assert!((s - root).abs() < 1e-6, "{s} vs {root}");
                assert!(
                    n <= 3,
                    "{n} evaluations, curvature {curvature}, root {root}"
                );
            }
        }
        // Strongly curved and steep excesses still converge.
        solve(|s: f64| s.powi(8) - 0.2, true);
        solve(|s: f64| (20.0 * s).exp() - 2.0, true);
        solve(|s: f64| 1e-3 * ((s - 0.999_999) / 1e-7).tanh(), true);
        // A jump: the answer stays below it.
        let (s, _) = solve(|s: f64| if s < 0.4 { -0.1 } else { 0.1 }, false);
        assert!((s - 0.4).abs() < 1e-9, "{s}");
    }

    #[test]
    fn cap_fraction_is_zero_when_the_air_is_already_at_equilibrium() {
        for f_lo in [0.01, 0.0, -0.1 * CAP_TOL_RH] {
            let s = cap_fraction(f_lo, 0.02, |_| panic!("not evaluated"));
            assert!(s.abs() < f64::MIN_POSITIVE, "{s}");
        }
    }
}
