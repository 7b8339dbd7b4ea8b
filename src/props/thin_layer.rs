//! Thin-layer drying and rewetting: moisture-ratio curves MR(t) = (M − M_e)/(M₀ − M_e), their temperature
//! dependence, the equivalent-time step a deep-bed model needs, and the two-compartment (hull + kernel) pod.
//!
//! Forms (t in hours): exponential (Lewis/Newton) `MR = exp(−k·t)`; Page `MR = exp(−k·tⁿ)`; Henderson–Pabis
//! `MR = a·exp(−k·t)`; two-term `MR = a·exp(−k·t) + (1−a)·exp(−r·k·t)`; Thompson's corn time form
//! `t = A·ln MR + B·(ln MR)²`, `A = −1.862 + 0.00488·T`, `B = 427.4·exp(−0.033·T)` with T in °F (DOMAIN.md §3.2,
//! from memory, unverified). The rate constant follows Arrhenius about a reference temperature,
//! `k = k_ref·exp(−E_a/R·(1/T − 1/T_ref))·exp(−β·RH)`, where the optional RH factor `exp(−β·RH)` (β ≥ 0, own
//! choice of form) lowers the rate in humid air; β = 0 switches it off.
//!
//! **Equivalent time** (Thompson's approach, DOMAIN.md §3.2, from memory): convert the present MR to the time the
//! curve at the present (T, RH) would need to reach it, add Δt, read the new MR. With the exponential form this is
//! exactly `MR_new = MR·exp(−k·Δt)`; Henderson–Pabis gives the same step (its `a` cancels), so it only differs
//! from the exponential in [`ThinLayer::moisture_ratio`]. MR is measured from the start of the present drying (or
//! wetting) curve, kept in [`PodState::m_curve_start_db`]; when the target EMC moves past it (the product starts
//! to rewet, or the air gets drier than the curve start) the curve restarts at the present moisture (MR = 1).
//!
//! **Rewetting.** The product moves toward [`Sorption::target_db`]: the desorption EMC when it is wetter, the
//! adsorption EMC (desorption less an offset) when it is drier, and nowhere inside the hysteresis band.
//!
//! **Two compartments** (DOMAIN.md §3.3 recommended structure, own formulation): hull (fraction f_h of pod dry
//! matter) and kernel (f_k = 1 − f_h), each first order:
//! `dM_h/dt = −k_h·(M_h − M_e,h) + (f_k/f_h)·k_kh·(M_k − M_k*(M_h))`, `dM_k/dt = −k_kh·(M_k − M_k*(M_h))`,
//! where `M_k*(M_h) = EMC_kernel(T, ERH_hull(T, M_h))` is the kernel moisture in equilibrium with the humidity
//! inside the hull. The hull exchanges with the air, the kernel only with the hull, and the exchange term moves
//! water without creating or losing any. The step linearises M_k* about the hull moisture and solves the linear
//! 2×2 system exactly with its matrix exponential (real, negative eigenvalues), so it is stable and bounded for any
//! Δt; a second pass re-linearises about the mid-step hull moisture to cut the linearisation error on long steps
//! (skipped when M_k* is linear over the step, so the second system would be the same). M_k* and its slope come
//! in closed form, chained through the log complement `u = −ln(1 − ERH)` of the humidity inside the hull
//! ([`crate::props::sorption::Isotherm::erh_log_complement`]), which keeps full precision near saturation.
//!
//! References: ASAE S448 (thin-layer drying); Page, Henderson–Pabis and two-term forms as tabulated in thin-layer
//! papers (DOMAIN.md §3.2); Thompson, Peart & Foster (1968) Trans. ASAE 11(4):582–586 (time form from memory).

use crate::props::lanes::{self, four, Lane, Lanes};
use crate::props::sorption::{Isotherm, MoistureUnit, Sorption, RH_MAX, RH_MIN, U_MAX, U_MIN};
use crate::units::wb_from_db;

/// Molar gas constant, J/(mol·K) (CODATA 2018, exact).
pub const R_GAS_J_PER_MOL_K: f64 = 8.314_462_618;
const KELVIN: f64 = 273.15;

/// Arrhenius rate law about a reference temperature, with an optional RH factor.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct ArrheniusRate {
    /// Rate constant at `t_ref_c` and RH = 0, per hour (per hourⁿ for Page).
    pub k_ref_per_h: f64,
    /// Reference temperature, °C.
    pub t_ref_c: f64,
    /// Activation energy, J/mol.
    pub activation_energy_j_per_mol: f64,
    /// β in the RH factor `exp(−β·RH)` (0 = no RH dependence).
    pub rh_slope: f64,
}

impl ArrheniusRate {
    /// Rate constant at air temperature `t_c` (°C) and relative humidity `rh` (decimal), per hour.
    #[inline]
    pub fn k_per_h(&self, t_c: f64, rh: f64) -> f64 {
        RateTerms::of(self).k_per_h(t_c, rh)
    }
}

/// An [`ArrheniusRate`] with the parts that depend on its constants alone divided out once: a bed steps every cell
/// with the same law, and these divisions would otherwise be repeated per cell. Each is the same expression the
/// law is written in, so the rate is the same to the bit.
#[derive(Debug, Clone, Copy, PartialEq)]
struct RateTerms {
    k_ref_per_h: f64,
    /// −E_a/R, K.
    neg_ea_over_r: f64,
    /// 1/(T_ref + 273.15), 1/K.
    inv_t_ref: f64,
    rh_slope: f64,
}

impl RateTerms {
    #[inline]
    fn of(rate: &ArrheniusRate) -> Self {
        RateTerms {
            k_ref_per_h: rate.k_ref_per_h,
            neg_ea_over_r: -rate.activation_energy_j_per_mol / R_GAS_J_PER_MOL_K,
            inv_t_ref: 1.0 / (rate.t_ref_c + KELVIN),
            rh_slope: rate.rh_slope,
        }
    }

    /// [`ArrheniusRate::k_per_h`].
    #[inline]
    fn k_per_h(&self, t_c: f64, rh: f64) -> f64 {
        let inv = 1.0 / (t_c + KELVIN) - self.inv_t_ref;
        self.k_ref_per_h * (self.neg_ea_over_r * inv - self.rh_slope * rh).exp()
    }
}

impl ArrheniusRate {
    /// How this law's rate at RH 0 follows from `other`'s rate at the same temperature (and any RH): as a ratio of
    /// reference rates, with no second exponential, when both laws share activation energy and reference
    /// temperature and `other` has no RH factor; computed afresh otherwise.
    fn beside(&self, other: &ArrheniusRate) -> KernelRate {
        // Identical constants, bit for bit: only then is the ratio exactly the same law.
        let same = |a: f64, b: f64| a.to_bits() == b.to_bits();
        if same(
            self.activation_energy_j_per_mol,
            other.activation_energy_j_per_mol,
        ) && same(self.t_ref_c, other.t_ref_c)
            && other.rh_slope == 0.0
            && other.k_ref_per_h > 0.0
        {
            KernelRate::RatioToHull(self.k_ref_per_h / other.k_ref_per_h)
        } else {
            KernelRate::Own(RateTerms::of(self))
        }
    }
}

/// A thin-layer moisture-ratio curve.
#[derive(Debug, Clone, Copy, PartialEq)]
pub enum ThinLayer {
    /// `MR = exp(−k·t)`.
    Exponential {
        /// k(T, RH).
        rate: ArrheniusRate,
    },
    /// `MR = exp(−k·tⁿ)`.
    Page {
        /// k(T, RH), per hourⁿ.
        rate: ArrheniusRate,
        /// Exponent n (> 0).
        n: f64,
    },
    /// `MR = a·exp(−k·t)`.
    HendersonPabis {
        /// k(T, RH).
        rate: ArrheniusRate,
        /// Shape constant a (> 0).
        a: f64,
    },
    /// `MR = a·exp(−k·t) + (1−a)·exp(−r·k·t)`.
    TwoTerm {
        /// k(T, RH) of the first term.
        rate: ArrheniusRate,
        /// Weight of the first term, 0–1.
        a: f64,
        /// r: second rate over the first (> 0).
        k2_ratio: f64,
    },
    /// Thompson's corn time form (T in °F inside; rate set by the formula, no constants).
    ThompsonCorn,
}

/// Thompson's A and B at `t_c`; temperature clamped to 0–150 °C where the form stays monotone.
#[inline]
fn thompson_ab(t_c: f64) -> (f64, f64) {
    let t_f = crate::units::c_to_f(t_c.clamp(0.0, 150.0));
    (-1.862 + 0.00488 * t_f, 427.4 * (-0.033 * t_f).exp())
}

impl ThinLayer {
    /// Whether the curve is first order in the equivalent-time step (exponential or Henderson–Pabis).
    pub fn is_first_order(&self) -> bool {
        matches!(
            self,
            ThinLayer::Exponential { .. } | ThinLayer::HendersonPabis { .. }
        )
    }

    /// The Arrhenius law of the first (or only) rate constant; `None` for Thompson's form.
    pub fn rate(&self) -> Option<&ArrheniusRate> {
        match self {
            ThinLayer::Exponential { rate }
            | ThinLayer::Page { rate, .. }
            | ThinLayer::HendersonPabis { rate, .. }
            | ThinLayer::TwoTerm { rate, .. } => Some(rate),
            ThinLayer::ThompsonCorn => None,
        }
    }

    /// The first (or only) rate constant at (t_c, rh), per hour; Thompson's form returns the equivalent
    /// first-order rate at MR = 0.5 (ln 2 / t½) for comparison only.
    pub fn k_per_h(&self, t_c: f64, rh: f64) -> f64 {
        match self {
            ThinLayer::Exponential { rate }
            | ThinLayer::Page { rate, .. }
            | ThinLayer::HendersonPabis { rate, .. }
            | ThinLayer::TwoTerm { rate, .. } => rate.k_per_h(t_c, rh),
            ThinLayer::ThompsonCorn => {
                std::f64::consts::LN_2 / self.equivalent_time_h(0.5, t_c, rh)
            }
        }
    }

    /// MR after `t_h` hours at constant (t_c, rh).
    pub fn moisture_ratio(&self, t_h: f64, t_c: f64, rh: f64) -> f64 {
        let t_h = t_h.max(0.0);
        match *self {
            ThinLayer::Exponential { rate } => (-rate.k_per_h(t_c, rh) * t_h).exp(),
            ThinLayer::Page { rate, n } => (-rate.k_per_h(t_c, rh) * t_h.powf(n)).exp(),
            ThinLayer::HendersonPabis { rate, a } => a * (-rate.k_per_h(t_c, rh) * t_h).exp(),
            ThinLayer::TwoTerm { rate, a, k2_ratio } => {
                let k = rate.k_per_h(t_c, rh);
                a * (-k * t_h).exp() + (1.0 - a) * (-k2_ratio * k * t_h).exp()
            }
            ThinLayer::ThompsonCorn => {
                let (a, b) = thompson_ab(t_c);
                // t = A·L + B·L², L = ln MR ≤ 0: the root with L ≤ 0.
                let l = (-a - (a * a + 4.0 * b * t_h).sqrt()) / (2.0 * b);
                l.min(0.0).exp()
            }
        }
    }

    /// Hours the curve at (t_c, rh) needs to reach `mr` (0 < mr ≤ 1). Henderson–Pabis may give a negative time
    /// when mr > a.
    pub fn equivalent_time_h(&self, mr: f64, t_c: f64, rh: f64) -> f64 {
        let mr = mr.clamp(1e-300, 1.0);
        match *self {
            ThinLayer::Exponential { rate } => -mr.ln() / rate.k_per_h(t_c, rh),
            ThinLayer::Page { rate, n } => (-mr.ln() / rate.k_per_h(t_c, rh)).powf(1.0 / n),
            ThinLayer::HendersonPabis { rate, a } => (a / mr).ln() / rate.k_per_h(t_c, rh),
            ThinLayer::TwoTerm { .. } => self.invert_monotone(mr, t_c, rh),
            ThinLayer::ThompsonCorn => {
                let (a, b) = thompson_ab(t_c);
                let l = mr.ln();
                a * l + b * l * l
            }
        }
    }

    /// Invert a decreasing MR(t) by bracketing and bisection (two-term form has no closed-form inverse).
    fn invert_monotone(&self, mr: f64, t_c: f64, rh: f64) -> f64 {
        if mr >= 1.0 {
            return 0.0;
        }
        let mut hi = 1.0;
        let mut guard = 0;
        while self.moisture_ratio(hi, t_c, rh) > mr && guard < 200 {
            hi *= 2.0;
            guard += 1;
        }
        let mut lo = 0.0;
        for _ in 0..200 {
            let mid = 0.5 * (lo + hi);
            if self.moisture_ratio(mid, t_c, rh) > mr {
                lo = mid;
            } else {
                hi = mid;
            }
            if hi - lo <= 1e-14 * hi {
                break;
            }
        }
        0.5 * (lo + hi)
    }

    /// New MR after `dt_s` seconds at (t_c, rh), starting from `mr`, by the equivalent-time method.
    pub fn step_ratio(&self, mr: f64, t_c: f64, rh: f64, dt_s: f64) -> f64 {
        let dt_h = dt_s.max(0.0) / 3600.0;
        match *self {
            ThinLayer::Exponential { rate } | ThinLayer::HendersonPabis { rate, .. } => {
                mr * (-rate.k_per_h(t_c, rh) * dt_h).exp()
            }
            _ => {
                let t_eq = self.equivalent_time_h(mr, t_c, rh);
                self.moisture_ratio(t_eq + dt_h, t_c, rh)
            }
        }
    }
}

/// One moisture compartment: its isotherm (with hysteresis) and its thin-layer curve.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Compartment {
    /// Equilibrium moisture.
    pub sorption: Sorption,
    /// Drying/rewetting curve.
    pub thin_layer: ThinLayer,
}

/// How a crop's moisture is modelled: one compartment (grains) or hull + kernel (peanut pods).
#[derive(Debug, Clone, Copy, PartialEq)]
pub enum PodModel {
    /// One compartment exchanging with the air.
    Single(Compartment),
    /// Hull exchanging with the air and kernel exchanging with the hull (both curves first order).
    TwoCompartment {
        /// The hull.
        hull: Compartment,
        /// The kernel.
        kernel: Compartment,
        /// Hull fraction of pod dry matter, 0–1 exclusive.
        hull_fraction: f64,
    },
}

/// Moisture state of one layer of product, dry-basis decimal. For single-compartment crops both moistures are
/// equal and mean the grain moisture.
#[derive(Debug, Clone, Copy, PartialEq, serde::Serialize, serde::Deserialize)]
pub struct PodState {
    /// Hull moisture, kg water per kg hull dry matter.
    pub m_hull_db: f64,
    /// Kernel moisture, kg water per kg kernel dry matter.
    pub m_kernel_db: f64,
    /// Moisture at the start of the present drying/wetting curve (M₀ of the equivalent-time method; used by
    /// single-compartment crops with a non-first-order curve).
    pub m_curve_start_db: f64,
}

impl PodState {
    /// A single-compartment state at `m_db`.
    pub fn uniform(m_db: f64) -> Self {
        PodState {
            m_hull_db: m_db,
            m_kernel_db: m_db,
            m_curve_start_db: m_db,
        }
    }
}

impl PodModel {
    /// Hull fraction of dry matter (0 for single-compartment crops).
    pub fn hull_fraction(&self) -> f64 {
        match self {
            PodModel::Single(_) => 0.0,
            PodModel::TwoCompartment { hull_fraction, .. } => *hull_fraction,
        }
    }

    /// The compartment whose moisture the trade reports (kernel, or the only one).
    pub fn kernel(&self) -> &Compartment {
        match self {
            PodModel::Single(c) => c,
            PodModel::TwoCompartment { kernel, .. } => kernel,
        }
    }

    /// The compartment that meets the air (hull, or the only one).
    pub fn hull(&self) -> &Compartment {
        match self {
            PodModel::Single(c) => c,
            PodModel::TwoCompartment { hull, .. } => hull,
        }
    }

    /// Pod moisture, dry basis decimal: dry-mass-weighted mean of hull and kernel.
    pub fn pod_moisture_db(&self, s: &PodState) -> f64 {
        match self {
            PodModel::Single(_) => s.m_kernel_db,
            PodModel::TwoCompartment { hull_fraction, .. } => {
                hull_fraction * s.m_hull_db + (1.0 - hull_fraction) * s.m_kernel_db
            }
        }
    }

    /// Pod moisture, wet basis decimal.
    pub fn pod_moisture_wb(&self, s: &PodState) -> f64 {
        wb_from_db(self.pod_moisture_db(s))
    }

    /// Kernel moisture, wet basis decimal (the trade's moisture).
    pub fn kernel_moisture_wb(&self, s: &PodState) -> f64 {
        wb_from_db(s.m_kernel_db)
    }

    /// Hull moisture, wet basis decimal.
    pub fn hull_moisture_wb(&self, s: &PodState) -> f64 {
        wb_from_db(s.m_hull_db)
    }

    /// Desorption equilibrium state in air at (t_c, rh).
    pub fn equilibrium(&self, t_c: f64, rh: f64) -> PodState {
        let m_h = self.hull().sorption.emc_desorption_db(t_c, rh);
        let m_k = self.kernel().sorption.emc_desorption_db(t_c, rh);
        PodState {
            m_hull_db: m_h,
            m_kernel_db: m_k,
            m_curve_start_db: m_k,
        }
    }

    /// A state with the kernel at `m_kernel_db` and the hull in equilibrium with it at `t_c` (hull moisture from
    /// the kernel's ERH), as for pods that have rested in a closed sample.
    pub fn state_from_kernel(&self, t_c: f64, m_kernel_db: f64) -> PodState {
        match self {
            PodModel::Single(_) => PodState::uniform(m_kernel_db),
            PodModel::TwoCompartment { hull, kernel, .. } => {
                let erh = kernel.sorption.desorption.erh(t_c, m_kernel_db);
                PodState {
                    m_hull_db: hull.sorption.desorption.emc_db(t_c, erh),
                    m_kernel_db,
                    m_curve_start_db: m_kernel_db,
                }
            }
        }
    }

    /// Advance the state by `dt_s` seconds in air at (t_c, rh). Stable for any `dt_s ≥ 0`.
    pub fn step(&self, s: PodState, t_c: f64, rh: f64, dt_s: f64) -> PodState {
        step_pod(self, s, t_c, rh, dt_s)
    }
}

/// Advance a single compartment by the equivalent-time method; returns (new M, new curve start).
pub fn step_compartment(
    c: &Compartment,
    m_db: f64,
    m_start_db: f64,
    t_c: f64,
    rh: f64,
    dt_s: f64,
) -> (f64, f64) {
    let target = c.sorption.target_db(t_c, rh, m_db);
    let gap = m_db - target;
    if gap.abs() < 1e-15 {
        return (m_db, m_db);
    }
    if c.thin_layer.is_first_order() {
        let mr = c.thin_layer.step_ratio(1.0, t_c, rh, dt_s);
        return (target + gap * mr, m_start_db);
    }
    let span = m_start_db - target;
    let (start, mr) = if span.signum() == gap.signum() && span.abs() >= gap.abs() {
        (m_start_db, gap / span)
    } else {
        (m_db, 1.0)
    };
    let mr_new = c.thin_layer.step_ratio(mr, t_c, rh, dt_s);
    (target + mr_new * (start - target), start)
}

/// Advance a pod (or grain) by `dt_s` seconds in air at (t_c, rh). See the module docs for the equations.
pub fn step_pod(model: &PodModel, s: PodState, t_c: f64, rh: f64, dt_s: f64) -> PodState {
    PodStepper::new(model).step(s, t_c, rh, dt_s)
}

/// [`step_pod`] for one model over many calls: what depends on the model's constants alone (rate-law divisions,
/// the kernel-to-hull dry-matter ratio, which kernel rate applies) is worked out once, as the same expressions, so
/// every step is the same to the bit as [`step_pod`]'s.
// One per material, stepped millions of times: boxing the larger variant would add a pointer chase to every step.
#[allow(clippy::large_enum_variant)]
#[derive(Debug, Clone, Copy, PartialEq)]
pub enum PodStepper {
    /// One compartment (nothing to work out ahead).
    Single(Compartment),
    /// Hull and kernel with their model-only terms.
    TwoCompartment {
        /// The hull.
        hull: Compartment,
        /// The kernel.
        kernel: Compartment,
        /// What the step takes from the model alone.
        terms: TwoCompartmentTerms,
    },
}

/// The model-only part of a two-compartment step.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct TwoCompartmentTerms {
    /// Kernel over hull dry matter, (1 − f_h)/f_h.
    r: f64,
    /// The hull's rate law, if it is an Arrhenius law (else its own `k_per_h`).
    hull_rate: Option<RateTerms>,
    /// How the kernel's rate is found, if it does not depend on the RH inside the hull.
    kernel_rate: Option<KernelRate>,
    /// See [`TwoCompartmentStep::kernel_ratio`].
    kernel_ratio: Option<f64>,
    /// The constants of [`PodStepper::step4`]'s four-lane path, when the model has that path.
    lanes: Option<LaneTerms>,
}

/// What [`PodStepper::step4`] needs to step four pods of a model whose one-pass path is exact (a Cromarty hull and
/// kernel, the kernel's rate a fixed ratio of the hull's Arrhenius rate), each the value the scalar step uses.
#[derive(Debug, Clone, Copy, PartialEq)]
struct LaneTerms {
    hull_rate: RateTerms,
    /// Kernel rate over hull rate.
    rate_ratio: f64,
    /// Kernel over hull dry matter.
    r: f64,
    /// κ of [`TwoCompartmentStep::kernel_ratio`].
    kappa: f64,
    /// The hull's oil content, decimal.
    oil: f64,
    /// `s/(1 − D_o)` of [`Isotherm::erh_log_complement`]'s Cromarty form (s = 100, percent dry basis).
    g_scale: f64,
    /// The hull's adsorption offset.
    adsorption_offset_db: f64,
    /// The processor has AVX2: checked once when the stepper is built (it is never read from a file, so the flag
    /// always describes the processor it runs on), not on every call of the hot path.
    avx2: bool,
}

/// A kernel rate constant that does not depend on the RH inside the hull.
#[derive(Debug, Clone, Copy, PartialEq)]
enum KernelRate {
    /// The hull's rate at the same temperature times this ratio of reference rates (same law otherwise).
    RatioToHull(f64),
    /// Its own law at RH 0.
    Own(RateTerms),
}

impl KernelRate {
    /// The kernel's rate at `t_c`, per hour, given the hull's rate `k_hull` there.
    #[inline]
    fn k_per_h(&self, k_hull: f64, t_c: f64) -> f64 {
        match self {
            KernelRate::RatioToHull(ratio) => k_hull * ratio,
            KernelRate::Own(rate) => rate.k_per_h(t_c, 0.0),
        }
    }
}

impl PodStepper {
    /// The stepper of `model`.
    pub fn new(model: &PodModel) -> Self {
        match *model {
            PodModel::Single(c) => PodStepper::Single(c),
            PodModel::TwoCompartment {
                hull,
                kernel,
                hull_fraction,
            } => {
                let kernel_rate = match kernel.thin_layer {
                    ThinLayer::Exponential { rate } | ThinLayer::HendersonPabis { rate, .. }
                        if rate.rh_slope == 0.0 =>
                    {
                        Some(match hull.thin_layer.rate() {
                            Some(hull_rate) => rate.beside(hull_rate),
                            None => KernelRate::Own(RateTerms::of(&rate)),
                        })
                    }
                    _ => None,
                };
                let kernel_ratio = match (hull.sorption.desorption, kernel.sorption.desorption) {
                    (
                        Isotherm::Cromarty {
                            oil_content_db: d_h,
                        },
                        Isotherm::Cromarty {
                            oil_content_db: d_k,
                        },
                    ) if kernel_rate.is_some() => Some((1.0 - d_k) / (1.0 - d_h)),
                    _ => None,
                };
                let r = (1.0 - hull_fraction) / hull_fraction;
                let hull_rate = hull.thin_layer.rate().map(RateTerms::of);
                let lanes = match (
                    hull_rate,
                    kernel_rate,
                    kernel_ratio,
                    hull.sorption.desorption,
                ) {
                    (
                        Some(hull_rate),
                        Some(KernelRate::RatioToHull(rate_ratio)),
                        Some(kappa),
                        Isotherm::Cromarty { oil_content_db },
                    ) => Some(LaneTerms {
                        hull_rate,
                        rate_ratio,
                        r,
                        kappa,
                        oil: oil_content_db,
                        g_scale: MoistureUnit::PercentDb.scale() / (1.0 - oil_content_db),
                        adsorption_offset_db: hull.sorption.adsorption_offset_db,
                        avx2: has_avx2(),
                    }),
                    _ => None,
                };
                let terms = TwoCompartmentTerms {
                    r,
                    hull_rate,
                    kernel_rate,
                    kernel_ratio,
                    lanes,
                };
                PodStepper::TwoCompartment {
                    hull,
                    kernel,
                    terms,
                }
            }
        }
    }

    /// Advance a pod (or grain) by `dt_s` seconds in air at (t_c, rh), as [`step_pod`].
    pub fn step(&self, s: PodState, t_c: f64, rh: f64, dt_s: f64) -> PodState {
        match self {
            PodStepper::TwoCompartment {
                hull,
                kernel,
                terms,
            } => {
                let step = TwoCompartmentStep::new(hull, kernel, terms, s, t_c, rh, dt_s);
                let lin = step.linearise(s.m_hull_db);
                let first = step.solve(&lin);
                if step.line_is_exact(&lin, first.m_hull_db) {
                    return first;
                }
                let mid = step.linearise(0.5 * (s.m_hull_db + first.m_hull_db));
                if lin.same_line_as(&mid) {
                    // M_k* is linear over the step (e.g. two Cromarty curves, whose temperature factors cancel):
                    // the re-linearised pass would solve the same system.
                    first
                } else {
                    step.solve(&mid)
                }
            }
            PodStepper::Single(c) => {
                let (m, start) =
                    step_compartment(c, s.m_kernel_db, s.m_curve_start_db, t_c, rh, dt_s);
                PodState {
                    m_hull_db: m,
                    m_kernel_db: m,
                    m_curve_start_db: start,
                }
            }
        }
    }
}

impl PodStepper {
    /// Four pods stepped as [`PodStepper::step`] steps each (the cells of four columns at one layer, as
    /// `drying::layer::step_columns4` steps them). For a model whose one-pass path is exact (two Cromarty
    /// compartments, the kernel's rate a fixed ratio of the hull's), that path runs lane by lane in plain arithmetic
    /// ([`props::lanes`](crate::props::lanes) in place of the C library's `exp` and `log`), compiled for 256-bit
    /// vectors where the processor has AVX2 (chosen at run time) and for plain registers elsewhere, with the same
    /// result to the bit either way. Results agree with `step`'s to within round-off (a few units in the last
    /// place, checked in the tests). A lane that leaves the path (a second pass needed, a double eigenvalue, a
    /// moisture outside the forms' range, a non-finite value) and every lane of any other model take `step`.
    pub fn step4(&self, s: [PodState; 4], t_c: Lanes, rh: Lanes, dt_s: f64) -> [PodState; 4] {
        let lanes = match self {
            PodStepper::TwoCompartment { terms, .. } => terms.lanes,
            PodStepper::Single(_) => None,
        };
        let Some(lt) = lanes else {
            return four(|i| self.step(s[i], t_c[i], rh[i], dt_s));
        };
        let (out, exact) = step_lanes_best(&lt, &s, t_c, rh, dt_s);
        four(|i| {
            if exact[i] {
                out[i]
            } else {
                self.step(s[i], t_c[i], rh[i], dt_s)
            }
        })
    }
}

/// The exact one-pass path of [`TwoCompartmentStep`] for four pods on the lanes `V`, each expression the scalar
/// one's in the same order (the rate law, the Cromarty EMC target with its hysteresis band, the closed-form kernel
/// line, Putzer's matrix exponential), with the exponentials and the log complement from [`lanes`]. Returns the
/// states and, per lane, whether the scalar step takes this path too (the one-pass line exact over the step, the
/// eigenvalues apart, everything finite).
#[inline(always)]
fn step_lanes<V: Lane>(
    lt: &LaneTerms,
    s: &[PodState; 4],
    t_c: Lanes,
    rh: Lanes,
    dt_s: f64,
) -> ([PodState; 4], [bool; 4]) {
    let c = V::splat;
    let (t, rh) = (V::load(t_c), V::load(rh));
    let m_h = V::load(four(|i| s[i].m_hull_db));
    let m_k = V::load(four(|i| s[i].m_kernel_db));
    let dt_h = c(dt_s.max(0.0) / 3600.0);
    // rates: RateTerms::k_per_h, KernelRate::RatioToHull
    let rt = lt.hull_rate;
    let inv = c(1.0).div(t.add(c(KELVIN))).sub(c(rt.inv_t_ref));
    let arg = c(rt.neg_ea_over_r).mul(inv).sub(c(rt.rh_slope).mul(rh));
    let k_h = c(rt.k_ref_per_h).mul(lanes::exp(arg));
    let k_kh = k_h.mul(c(lt.rate_ratio));
    // the hull's target: Sorption::target_db on Isotherm::emc_db's Cromarty form
    let t_factor = c(1.1).add(t.mul(c(1.0 / 90.0)));
    let lc = lanes::log_complement(rh.max(c(RH_MIN)).min(c(RH_MAX)));
    let factor = c(1.0 - lt.oil).div(t_factor.mul(c(100.0)));
    let des = c(440.0).mul(lc).sqrt().mul(factor).max(c(0.0));
    let ads = des.sub(c(lt.adsorption_offset_db)).max(c(0.0));
    let eq_h = m_h.ge(des).select(des, ads.ge(m_h).select(ads, m_h));
    // the kernel line at M_h: TwoCompartmentStep::linearise in closed form, u from Isotherm::erh_log_complement
    let x = m_h.mul(t_factor.mul(c(lt.g_scale)));
    let u = x.mul(x).mul(c(1.0 / 440.0));
    let slope = c(lt.kappa);
    // TwoCompartmentStep::solve with expm2
    let rk = c(lt.r).mul(k_kh);
    let a11 = c(0.0).sub(k_h).sub(rk.mul(slope));
    let a12 = rk;
    let a21 = k_kh.mul(slope);
    let a22 = c(0.0).sub(k_kh);
    let tr = a11.add(a22);
    let det = a11.mul(a22).sub(a12.mul(a21));
    let root = c(0.25).mul(tr).mul(tr).sub(det).max(c(0.0)).sqrt();
    let (l1, l2) = (c(0.5).mul(tr).add(root), c(0.5).mul(tr).sub(root));
    let (e1, e2) = (lanes::exp(l1.mul(dt_h)), lanes::exp(l2.mul(dt_h)));
    let inv_gap = c(1.0).div(l1.sub(l2));
    let c0 = l1.mul(e2).sub(l2.mul(e1)).mul(inv_gap);
    let c1 = e1.sub(e2).mul(inv_gap);
    let (e11, e12) = (c0.add(c1.mul(a11)), c1.mul(a12));
    let (e21, e22) = (c1.mul(a21), c0.add(c1.mul(a22)));
    let eq_k = slope.mul(m_h).add(slope.mul(eq_h.sub(m_h)));
    let (d_h, d_k) = (m_h.sub(eq_h), m_k.sub(eq_k));
    let hull = eq_h.add(e11.mul(d_h)).add(e12.mul(d_k)).max(c(0.0));
    let kernel = eq_k.add(e21.mul(d_h)).add(e22.mul(d_k)).max(c(0.0));
    // TwoCompartmentStep::line_is_exact, and the branches of linearise and expm2 this path stands for
    let within = |v: V| v.ge(c(U_MIN)).and(c(U_MAX).ge(v));
    let q = hull.div(m_h);
    let finite = |v: V| v.sub(v).ge(c(0.0));
    let exact = m_h
        .gt(c(0.0))
        .and(within(u))
        .and(within(u.mul(q.mul(q))))
        .and(l1.sub(l2).mul(dt_h).gt(c(1e-6)))
        .and(finite(hull))
        .and(finite(kernel))
        .truth();
    let (hull, kernel) = (hull.store(), kernel.store());
    let out = four(|i| PodState {
        m_hull_db: hull[i],
        m_kernel_db: kernel[i],
        m_curve_start_db: s[i].m_curve_start_db,
    });
    (out, four(|i| exact[i] && lt.kappa > 0.0))
}

/// [`step_lanes`] compiled for AVX2.
///
/// # Safety
/// Only on a processor with AVX2.
#[cfg(target_arch = "x86_64")]
#[target_feature(enable = "avx2")]
unsafe fn step_lanes_avx2(
    lt: &LaneTerms,
    s: &[PodState; 4],
    t_c: Lanes,
    rh: Lanes,
    dt_s: f64,
) -> ([PodState; 4], [bool; 4]) {
    step_lanes::<lanes::Avx2>(lt, s, t_c, rh, dt_s)
}

/// Whether the processor has AVX2 (always false off x86-64).
fn has_avx2() -> bool {
    #[cfg(target_arch = "x86_64")]
    return std::arch::is_x86_feature_detected!("avx2");
    #[cfg(not(target_arch = "x86_64"))]
    false
}

/// [`step_lanes`] on the processor's widest lanes: AVX2 where it has them ([`LaneTerms::avx2`]), plain values
/// elsewhere, with the same result to the bit.
fn step_lanes_best(
    lt: &LaneTerms,
    s: &[PodState; 4],
    t_c: Lanes,
    rh: Lanes,
    dt_s: f64,
) -> ([PodState; 4], [bool; 4]) {
    #[cfg(target_arch = "x86_64")]
    if lt.avx2 {
        // SAFETY: `lt.avx2` was set from the run-time check on this processor (`has_avx2`).
        return unsafe { step_lanes_avx2(lt, s, t_c, rh, dt_s) };
    }
    step_lanes::<lanes::Plain>(lt, s, t_c, rh, dt_s)
}

/// What one two-compartment step keeps fixed over its passes: air target, rates and time.
struct TwoCompartmentStep<'a> {
    hull: &'a Compartment,
    kernel: &'a Compartment,
    /// Kernel over hull dry matter, (1 − f_h)/f_h.
    r: f64,
    s: PodState,
    t_c: f64,
    dt_h: f64,
    /// Hull target moisture in the air (desorption or adsorption EMC, or its own inside the band).
    m_e_h: f64,
    /// Hull rate constant, per hour.
    k_h: f64,
    /// Kernel rate constant if it does not depend on the RH inside the hull (its `rh_slope` is 0).
    k_kh_fixed: Option<f64>,
    /// κ where `M_k*(M_h) = κ·M_h` exactly inside the EMC forms' range, whatever the temperature, and the kernel
    /// rate is fixed: a hull and kernel both on the Cromarty equation, `u = (M·g(T)/(1 − D_o))²/440` in the log
    /// complement `u`, give κ = (1 − D_k)/(1 − D_h).
    kernel_ratio: Option<f64>,
}

/// `M_k*(M_h)` linearised about a hull moisture: `M_k* ≈ value + slope·(M_h − m_lin)`, and the kernel rate there.
struct KernelLine {
    m_lin: f64,
    /// Log complement of the hull's equilibrium RH at `m_lin`.
    u_lin: f64,
    value: f64,
    slope: f64,
    k_kh: f64,
}

impl KernelLine {
    /// Whether `other` describes the same linear system (to rounding).
    fn same_line_as(&self, other: &KernelLine) -> bool {
        let predicted = self.value + self.slope * (other.m_lin - self.m_lin);
        let close = |a: f64, b: f64| (a - b).abs() <= 1e-12 * a.abs().max(b.abs()).max(1e-3);
        close(predicted, other.value)
            && close(self.slope, other.slope)
            && close(self.k_kh, other.k_kh)
    }
}

impl<'a> TwoCompartmentStep<'a> {
    fn new(
        hull: &'a Compartment,
        kernel: &'a Compartment,
        terms: &TwoCompartmentTerms,
        s: PodState,
        t_c: f64,
        rh: f64,
        dt_s: f64,
    ) -> Self {
        let k_h = match &terms.hull_rate {
            Some(rate) => rate.k_per_h(t_c, rh),
            None => hull.thin_layer.k_per_h(t_c, rh),
        };
        let k_kh_fixed = terms.kernel_rate.map(|k| k.k_per_h(k_h, t_c));
        TwoCompartmentStep {
            hull,
            kernel,
            kernel_ratio: terms.kernel_ratio,
            r: terms.r,
            s,
            t_c,
            dt_h: dt_s.max(0.0) / 3600.0,
            m_e_h: hull.sorption.target_db(t_c, rh, s.m_hull_db),
            k_h,
            k_kh_fixed,
        }
    }

    /// Whether `line` (taken at the step's start) is `M_k*` itself over the whole step, up to the hull moisture
    /// `m_end`, so that re-linearising could only give the same system: `M_k*` is proportional to `M_h`
    /// ([`TwoCompartmentStep::kernel_ratio`]) and neither end is clamped (the slope at the start is positive, and `u`
    /// at `m_end`, `u_lin·(m_end/m_lin)²` since `u ∝ M²`, lies inside the EMC forms' range [`U_MIN`, `U_MAX`]; `u`
    /// rises with `M`, so every point between is inside too).
    fn line_is_exact(&self, line: &KernelLine, m_end: f64) -> bool {
        self.kernel_ratio.is_some()
            && line.slope > 0.0
            && (U_MIN..=U_MAX).contains(&(line.u_lin * (m_end / line.m_lin).powi(2)))
    }

    /// `M_k*(M_h) = EMC_kernel(T, ERH_hull(T, M_h))` and its exact slope at `m_lin`, chained through the log
    /// complement of the humidity inside the hull (no round trip through RH).
    fn linearise(&self, m_lin: f64) -> KernelLine {
        let (u, du_dm) = self
            .hull
            .sorption
            .desorption
            .erh_log_complement(self.t_c, m_lin);
        if let (Some(kappa), Some(k_kh)) = (self.kernel_ratio, self.k_kh_fixed) {
            if (U_MIN..=U_MAX).contains(&u) {
                // The same line as below, in closed form.
                return KernelLine {
                    m_lin,
                    u_lin: u,
                    value: kappa * m_lin,
                    slope: kappa,
                    k_kh,
                };
            }
        }
        let (value, dk_du) = self
            .kernel
            .sorption
            .desorption
            .emc_from_log_complement(self.t_c, u);
        let k_kh = self
            .k_kh_fixed
            .unwrap_or_else(|| self.kernel.thin_layer.k_per_h(self.t_c, -(-u).exp_m1()));
        KernelLine {
            m_lin,
            u_lin: u,
            value,
            slope: (dk_du * du_dm).max(0.0),
            k_kh,
        }
    }

    /// One exact solve of the system linearised on `line`:
    /// x' = A·x + c, A = [[−k_h − r·k_kh·s, r·k_kh], [k_kh·s, −k_kh]], about its fixed point.
    fn solve(&self, line: &KernelLine) -> PodState {
        let KernelLine {
            m_lin,
            value,
            slope,
            k_kh,
            ..
        } = *line;
        let (r, k_h, s) = (self.r, self.k_h, self.s);
        let a11 = -k_h - r * k_kh * slope;
        let a12 = r * k_kh;
        let a21 = k_kh * slope;
        let a22 = -k_kh;
        let eq_h = self.m_e_h;
        let eq_k = value + slope * (eq_h - m_lin);
        let d_h = s.m_hull_db - eq_h;
        let d_k = s.m_kernel_db - eq_k;
        let [[e11, e12], [e21, e22]] = expm2([[a11, a12], [a21, a22]], self.dt_h);
        PodState {
            m_hull_db: (eq_h + e11 * d_h + e12 * d_k).max(0.0),
            m_kernel_db: (eq_k + e21 * d_h + e22 * d_k).max(0.0),
            m_curve_start_db: s.m_curve_start_db,
        }
    }
}

/// exp(A·t) for a 2×2 matrix with real eigenvalues (Putzer's formula; the equal-eigenvalue limit near a double
/// root). The two-compartment matrix always has real, non-positive eigenvalues (its discriminant is
/// (k_h + r·k_kh·s + k_kh)² − 4·k_h·k_kh ≥ (k_h − k_kh)²).
fn expm2(a: [[f64; 2]; 2], t: f64) -> [[f64; 2]; 2] {
    let tr = a[0][0] + a[1][1];
    let det = a[0][0] * a[1][1] - a[0][1] * a[1][0];
    let disc = (0.25 * tr * tr - det).max(0.0);
    let root = disc.sqrt();
    let l1 = 0.5 * tr + root;
    let l2 = 0.5 * tr - root;
    let e1 = (l1 * t).exp();
    let e2 = (l2 * t).exp();
    // exp(At) = c0·I + c1·A
    let (c0, c1) = if (l1 - l2) * t > 1e-6 {
        let inv = 1.0 / (l1 - l2);
        ((l1 * e2 - l2 * e1) * inv, (e1 - e2) * inv)
    } else {
        let l = 0.5 * (l1 + l2);
        let e = (l * t).exp();
        (e * (1.0 - l * t), e * t)
    };
    [
        [c0 + c1 * a[0][0], c1 * a[0][1]],
        [c1 * a[1][0], c0 + c1 * a[1][1]],
    ]
}

#[cfg(test)]
mod tests {
    use super::*;

    /// Pod states, air temperatures and RH spread over drying, rewetting, the hysteresis band and the RH clamps,
    /// from a fixed seed.
    fn spread(n: usize) -> Vec<(PodState, f64, f64)> {
        let mut seed = 0x2545_f491_4f6c_dd1d_u64;
        let mut unit = || {
            seed ^= seed << 13;
            seed ^= seed >> 7;
            seed ^= seed << 17;
            (seed >> 11) as f64 / (1u64 << 53) as f64
        };
        (0..n)
            .map(|_| {
                let s = PodState {
                    m_hull_db: 0.02 + 0.6 * unit(),
                    m_kernel_db: 0.04 + 0.4 * unit(),
                    m_curve_start_db: 0.3,
                };
                let rh = match (unit() * 10.0) as u32 {
                    0 => 1e-7,
                    1 => 1.0 - 1e-12,
                    _ => unit(),
                };
                (s, 5.0 + 50.0 * unit(), rh)
            })
            .collect()
    }

    fn bundled_peanut() -> PodStepper {
        let crop =
            crate::crop::Crop::load_named("peanut-inshell").expect("bundled peanut model loads");
        PodStepper::new(&crop.moisture)
    }

    /// `step4` against `step` on the bundled peanut, whose model has the four-lane path: every lane within 2.5e-16
    /// (dry-basis decimal) of the scalar result, most lanes through the four-lane path, and each lane's result the
    /// same to the bit whatever its neighbours. The two differ only in the exponentials and logarithms, each within
    /// 2 ulp of the C library's (`props::lanes`); measured 2.2e-16 at worst, 4 units in the last place of a moisture
    /// of 0.25–0.5. The bound is absolute because a result can be much smaller than the terms it is summed from
    /// (a dry hull rewetting towards a near-saturated equilibrium: 16 ulp of the result there).
    #[test]
    fn four_pods_at_once_step_as_one_pod_does_to_round_off() {
        let stepper = bundled_peanut();
        let PodStepper::TwoCompartment { terms, .. } = stepper else {
            panic!("the bundled peanut is a two-compartment model")
        };
        let lt = terms
            .lanes
            .expect("the bundled peanut has the four-lane path");
        let cases = spread(4_000);
        let (mut worst, mut exact): (f64, usize) = (0.0, 0);
        for (q, group) in cases.chunks(4).enumerate() {
            let s = four(|i| group[i].0);
            let (t, rh) = (four(|i| group[i].1), four(|i| group[i].2));
            for dt_s in [36.0, 360.0, 3_600.0] {
                let out = stepper.step4(s, t, rh, dt_s);
                exact += step_lanes::<lanes::Plain>(&lt, &s, t, rh, dt_s)
                    .1
                    .iter()
                    .filter(|e| **e)
                    .count();
                for i in 0..4 {
                    let one = stepper.step(s[i], t[i], rh[i], dt_s);
                    for (a, b) in [
                        (out[i].m_hull_db, one.m_hull_db),
                        (out[i].m_kernel_db, one.m_kernel_db),
                    ] {
                        worst = worst.max((a - b).abs());
                    }
                    assert_eq!(
                        out[i].m_curve_start_db.to_bits(),
                        one.m_curve_start_db.to_bits()
                    );
                }
                // the same pods in the other order: each lane's result does not depend on its neighbours
                let turned = [3, 2, 1, 0];
                let back = stepper.step4(
                    turned.map(|i| s[i]),
                    turned.map(|i| t[i]),
                    turned.map(|i| rh[i]),
                    dt_s,
                );
                for i in 0..4 {
                    assert_eq!(back[3 - i], out[i], "group {q}, lane {i}");
                }
            }
        }
        assert!(worst <= 2.5e-16, "{worst:e}");
        assert!(
            exact > 9_000,
            "only {exact} of 12 000 lanes took the four-lane path"
        );
    }

    /// The AVX2 and plain implementations of the four-lane path give the same bits (where the processor has AVX2;
    /// elsewhere there is only the plain one).
    #[cfg(target_arch = "x86_64")]
    #[test]
    fn the_four_lane_path_is_the_same_to_the_bit_on_avx2_and_on_plain_lanes() {
        if !std::arch::is_x86_feature_detected!("avx2") {
            return;
        }
        let PodStepper::TwoCompartment { terms, .. } = bundled_peanut() else {
            panic!("the bundled peanut is a two-compartment model")
        };
        let lt = terms
            .lanes
            .expect("the bundled peanut has the four-lane path");
        for group in spread(4_000).chunks(4) {
            let s = four(|i| group[i].0);
            let (t, rh) = (four(|i| group[i].1), four(|i| group[i].2));
            let plain = step_lanes::<lanes::Plain>(&lt, &s, t, rh, 360.0);
            // SAFETY: the processor has AVX2 (checked above).
            let avx2 = unsafe { step_lanes_avx2(&lt, &s, t, rh, 360.0) };
            assert_eq!(plain.1, avx2.1);
            for i in 0..4 {
                assert_eq!(
                    plain.0[i].m_hull_db.to_bits(),
                    avx2.0[i].m_hull_db.to_bits()
                );
                assert_eq!(
                    plain.0[i].m_kernel_db.to_bits(),
                    avx2.0[i].m_kernel_db.to_bits()
                );
            }
        }
    }

    fn cromarty_pod(k_h: f64, k_kh: f64, ea_kernel: f64) -> PodModel {
        let compartment = |oil: f64, k: f64, ea: f64| Compartment {
            sorption: Sorption {
                desorption: Isotherm::Cromarty {
                    oil_content_db: oil,
                },
                adsorption_offset_db: 0.01,
            },
            thin_layer: ThinLayer::Exponential {
                rate: ArrheniusRate {
                    k_ref_per_h: k,
                    t_ref_c: 35.0,
                    activation_energy_j_per_mol: ea,
                    rh_slope: 0.0,
                },
            },
        };
        PodModel::TwoCompartment {
            hull: compartment(0.0, k_h, 30_000.0),
            kernel: compartment(0.48, k_kh, ea_kernel),
            hull_fraction: 0.25,
        }
    }

    /// The one-pass shortcut for two Cromarty compartments, with its closed-form line, gives what the generic line
    /// through the isotherms gives after the re-linearised second pass.
    #[test]
    fn exact_kernel_line_skips_only_a_pass_that_changes_nothing() {
        let model = cromarty_pod(0.5, 0.09, 30_000.0);
        let PodStepper::TwoCompartment {
            hull,
            kernel,
            terms,
        } = PodStepper::new(&model)
        else {
            unreachable!()
        };
        let mut shortcuts = 0;
        for &(m_h, m_k, t_c, rh, dt_s) in &[
            (0.30, 0.25, 35.0, 0.40, 360.0),
            (0.12, 0.11, 30.0, 0.85, 360.0),
            (0.08, 0.10, 20.0, 0.95, 3600.0),
            (0.50, 0.40, 45.0, 0.20, 900.0),
            (0.20, 0.09, 25.0, 0.70, 36_000.0),
        ] {
            let s = PodState {
                m_hull_db: m_h,
                m_kernel_db: m_k,
                m_curve_start_db: m_k,
            };
            let step = TwoCompartmentStep::new(&hull, &kernel, &terms, s, t_c, rh, dt_s);
            if step.line_is_exact(
                &step.linearise(m_h),
                step.solve(&step.linearise(m_h)).m_hull_db,
            ) {
                shortcuts += 1;
            }
            // The long way: the generic line through the isotherms (no closed form), solved twice.
            let generic = TwoCompartmentStep {
                kernel_ratio: None,
                ..TwoCompartmentStep::new(&hull, &kernel, &terms, s, t_c, rh, dt_s)
            };
            let first = generic.solve(&generic.linearise(m_h));
            let two_pass = generic.solve(&generic.linearise(0.5 * (m_h + first.m_hull_db)));
            let got = model.step(s, t_c, rh, dt_s);
            assert!(
                (got.m_hull_db - two_pass.m_hull_db).abs() < 1e-13,
                "{got:?} {two_pass:?}"
            );
            assert!(
                (got.m_kernel_db - two_pass.m_kernel_db).abs() < 1e-13,
                "{got:?} {two_pass:?}"
            );
        }
        assert!(
            shortcuts >= 4,
            "the shortcut should apply in ordinary states ({shortcuts})"
        );
    }

    /// The kernel rate taken as a ratio beside the hull's equals the rate computed on its own, and a different
    /// activation energy falls back to computing it.
    #[test]
    fn kernel_rate_beside_the_hull_rate_equals_its_own() {
        for ea_kernel in [30_000.0, 25_000.0] {
            let PodModel::TwoCompartment { hull, kernel, .. } = cromarty_pod(0.5, 0.09, ea_kernel)
            else {
                unreachable!()
            };
            let (h, k) = (
                hull.thin_layer.rate().unwrap(),
                kernel.thin_layer.rate().unwrap(),
            );
            let rule = k.beside(h);
            assert_eq!(
                matches!(rule, KernelRate::RatioToHull(_)),
                ea_kernel.to_bits() == h.activation_energy_j_per_mol.to_bits(),
                "{ea_kernel} J/mol: {rule:?}"
            );
            for t_c in [5.0, 25.0, 35.0, 50.0] {
                let beside = rule.k_per_h(h.k_per_h(t_c, 0.6), t_c);
                let own = k.k_per_h(t_c, 0.0);
                assert!(
                    (beside / own - 1.0).abs() < 1e-14,
                    "{ea_kernel} J/mol, {t_c} °C: {beside} vs {own}"
                );
            }
        }
    }

    /// The rate law with its constant divisions worked out ahead gives the law as written, bit for bit (the layer
    /// step's results must not move by this), over temperatures, RH factors and activation energies.
    #[test]
    fn rate_terms_give_the_arrhenius_law_to_the_bit() {
        for (ea, t_ref, slope) in [
            (21_200.0, 35.0, 0.0),
            (30_000.0, 40.0, 0.7),
            (0.0, 0.0, 0.0),
        ] {
            let rate = ArrheniusRate {
                k_ref_per_h: 0.4851,
                t_ref_c: t_ref,
                activation_energy_j_per_mol: ea,
                rh_slope: slope,
            };
            let terms = RateTerms::of(&rate);
            for i in 0..400 {
                let (t_c, rh) = (-10.0 + 0.2137 * f64::from(i), f64::from(i % 97) / 96.0);
                let inv = 1.0 / (t_c + KELVIN) - 1.0 / (t_ref + KELVIN);
                let written = 0.4851 * (-ea / R_GAS_J_PER_MOL_K * inv - slope * rh).exp();
                assert_eq!(
                    terms.k_per_h(t_c, rh).to_bits(),
                    written.to_bits(),
                    "{ea} J/mol, {t_c} °C, RH {rh}"
                );
            }
        }
    }

    /// exp(A·t) by scaling and squaring a Taylor series: an independent reference for [`expm2`].
    fn expm2_reference(a: [[f64; 2]; 2], t: f64) -> [[f64; 2]; 2] {
        let mul = |p: [[f64; 2]; 2], q: [[f64; 2]; 2]| {
            [
                [
                    p[0][0] * q[0][0] + p[0][1] * q[1][0],
                    p[0][0] * q[0][1] + p[0][1] * q[1][1],
                ],
                [
                    p[1][0] * q[0][0] + p[1][1] * q[1][0],
                    p[1][0] * q[0][1] + p[1][1] * q[1][1],
                ],
            ]
        };
        let norm = (a[0][0].abs() + a[0][1].abs()).max(a[1][0].abs() + a[1][1].abs()) * t;
        let squarings = (norm / 0.01).log2().ceil().max(0.0) as u32;
        let h = t / 2f64.powi(squarings as i32);
        let b = [[a[0][0] * h, a[0][1] * h], [a[1][0] * h, a[1][1] * h]];
        let (mut sum, mut term) = ([[1.0, 0.0], [0.0, 1.0]], [[1.0, 0.0], [0.0, 1.0]]);
        for k in 1..20 {
            term = mul(term, b);
            term = [
                [term[0][0] / k as f64, term[0][1] / k as f64],
                [term[1][0] / k as f64, term[1][1] / k as f64],
            ];
            sum = [
                [sum[0][0] + term[0][0], sum[0][1] + term[0][1]],
                [sum[1][0] + term[1][0], sum[1][1] + term[1][1]],
            ];
        }
        for _ in 0..squarings {
            sum = mul(sum, sum);
        }
        sum
    }

    /// The two-compartment matrices met in practice (rates 0.01–5 per hour, slopes 0–3, steps of minutes to many
    /// hours, equal and nearly equal eigenvalues): against the
    /// triangular closed form where the slope is 0 (exact, including the double eigenvalue), and against scaling and
    /// squaring elsewhere (that reference drifts by up to about 1e-13 per unit of the result over its squarings, so
    /// it gets a looser tolerance).
    #[test]
    fn matrix_exponential_matches_closed_forms_and_scaling_and_squaring() {
        let (mut worst_reference, mut worst_exact): (f64, f64) = (0.0, 0.0);
        let r = 3.0;
        for &k_h in &[0.01, 0.3, 0.485, 1.0, 5.0] {
            for &k_kh in &[0.01, 0.0873, 0.3, 0.3 * (1.0 + 1e-9), 1.0] {
                for &slope in &[0.0, 0.2, 0.52, 3.0] {
                    for &t in &[0.01, 0.1, 0.25, 1.0, 10.0] {
                        let a = [[-k_h - r * k_kh * slope, r * k_kh], [k_kh * slope, -k_kh]];
                        let got = expm2(a, t);
                        let scale = got[0][0].abs().max(got[1][1].abs());
                        let compare = |want: [[f64; 2]; 2], worst: &mut f64| {
                            for i in 0..2 {
                                for j in 0..2 {
                                    *worst = worst.max((got[i][j] - want[i][j]).abs() / scale);
                                }
                            }
                        };
                        if slope == 0.0 {
                            let (eh, ek) = ((-k_h * t).exp(), (-k_kh * t).exp());
                            let off = if (k_h - k_kh).abs() > 1e-6 * k_h {
                                r * k_kh * (eh - ek) / (k_kh - k_h)
                            } else {
                                // Double eigenvalue (to first order in the gap).
                                r * k_kh * t * (0.5 * (eh + ek))
                            };
                            compare([[eh, off], [0.0, ek]], &mut worst_exact);
                        } else {
                            compare(expm2_reference(a, t), &mut worst_reference);
                        }
                    }
                }
            }
        }
        println!(
            "against the closed form {worst_exact:.1e}, against scaling and squaring {worst_reference:.1e}"
        );
        assert!(
            worst_exact < 1e-14,
            "closed form: {worst_exact:e} of the diagonal"
        );
        assert!(
            worst_reference < 1e-11,
            "scaling and squaring: {worst_reference:e}"
        );
    }

    #[test]
    fn matrix_exponential_of_diagonal_is_elementwise() {
        let e = expm2([[-1.0, 0.0], [0.0, -3.0]], 0.5);
        assert!((e[0][0] - (-0.5f64).exp()).abs() < 1e-14);
        assert!((e[1][1] - (-1.5f64).exp()).abs() < 1e-14);
        assert!(e[0][1].abs() < 1e-15 && e[1][0].abs() < 1e-15);
        let same = expm2([[-2.0, 0.0], [0.0, -2.0]], 1.0);
        assert!((same[0][0] - (-2.0f64).exp()).abs() < 1e-12);
    }

    #[test]
    fn arrhenius_is_k_ref_at_reference_temperature() {
        let r = ArrheniusRate {
            k_ref_per_h: 0.5,
            t_ref_c: 35.0,
            activation_energy_j_per_mol: 30_000.0,
            rh_slope: 0.0,
        };
        assert!((r.k_per_h(35.0, 0.4) - 0.5).abs() < 1e-15);
    }
}
