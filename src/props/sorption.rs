//! Equilibrium moisture content (EMC) of a crop from air temperature and relative humidity, and its inverse, the
//! equilibrium relative humidity (ERH) of air over a crop at a given moisture.
//!
//! Forms (T in °C throughout, RH decimal):
//!
//! | form | RH(T, M) | M(T, RH) |
//! |---|---|---|
//! | modified Henderson | `1 − exp[−A·(T+C)·M^B]` | `[ln(1−RH) / (−A·(T+C))]^(1/B)` |
//! | modified Chung-Pfost | `exp[−A/(T+C)·exp(−B·M)]` | `−(1/B)·ln[−(T+C)·ln(RH)/A]` |
//! | modified Halsey | `exp[−exp(A+B·T)/M^C]` | `[−exp(A+B·T)/ln RH]^(1/C)` |
//! | modified Oswin | `1/{[(A+B·T)/M]^C + 1}` | `(A+B·T)/[(1/RH) − 1]^(1/C)` |
//! | modified GAB | solved in closed form (below) | `A·B·(C/T)·RH / [(1−B·RH)(1−B·RH+B·(C/T)·RH)]` |
//! | Cromarty seed equation | `1 − exp{−[M·(1.1+T/90)/(1−D_o)]²/440}` | `√(−440·ln(1−RH))·(1−D_o)/(1.1+T/90)` |
//!
//! **Moisture basis.** Every constant set declares the unit of M it was fitted in ([`MoistureUnit`]); the public
//! API always takes and returns **dry-basis decimal** (kg water per kg dry matter) and converts inside. The
//! Cromarty equation is defined in percent dry basis, with the oil content `D_o` as a decimal.
//!
//! **Modified GAB inverse.** With y = B·RH and G = C/T the GAB relation is the quadratic
//! `M·(G−1)·y² + (A·G − M·(G−2))·y − M = 0` in y; its physical root is taken in the cancellation-free form
//! `y = 2M / (q + √(q² + 4·M²·(G−1)))`, `q = A·G − M·(G−2)`, which stays finite as G → 1. If the discriminant is
//! negative (no real root, only possible for G < 1 at very high M) the air is taken as saturated.
//!
//! **Outside the data range.** RH is clamped to `[RH_MIN, RH_MAX]` before the EMC forms are evaluated (the forms
//! diverge at 0 and 1), ERH results are clamped to `[0, 1]`, a non-positive moisture gives ERH 0, and a
//! temperature at which a form's temperature term is non-positive (`T + C ≤ 0`, `A + B·T ≤ 0`, `T ≤ 0` for GAB)
//! is moved to the nearest valid temperature. Nothing here panics or returns NaN for finite input. Fitted ranges
//! (typically ≈ 0–50 °C, 10–90 % RH for grains) are flagged by [`DataRange::contains`], which crop loading
//! attaches to each constant set; callers decide whether to warn.
//!
//! **Hysteresis.** [`Sorption`] pairs a desorption isotherm with an adsorption offset (dry-basis decimal): the
//! adsorption EMC is the desorption EMC less the offset (DOMAIN.md §2.3, common practice, no source).
//!
//! References: ASAE D245.5 OCT1995 / ASABE D245.6 (forms from memory, unverified; DOMAIN.md §2.1); Cromarty,
//! Ellis & Roberts (1982) *The Design of Seed Storage Facilities for Genetic Conservation*, IBPGR (DOMAIN.md §2.3).

/// Lowest RH (decimal) at which the EMC forms are evaluated; lower values are clamped to it.
pub const RH_MIN: f64 = 1e-6;
/// Highest RH (decimal) at which the EMC forms are evaluated; higher values are clamped to it.
pub const RH_MAX: f64 = 1.0 - 1e-9;
/// Smallest value a form's temperature term (`T + C`, `A + B·T`, `T` for GAB) is allowed to take.
const TEMP_TERM_MIN: f64 = 1e-3;
/// `−ln(1 − RH_MIN)`: the log complement of the lowest RH the EMC forms see.
pub const U_MIN: f64 = 1.000_000_500_000_333_4e-6;
/// `−ln(1 − RH_MAX)`: the log complement of the highest RH the EMC forms see.
pub const U_MAX: f64 = 20.723_265_865_228_342;
/// Log complement reported for air in equilibrium with a saturating moisture (any value above [`U_MAX`]).
pub const U_CAP: f64 = 50.0;

/// The unit of moisture content a constant set was fitted in.
#[derive(Debug, Clone, Copy, PartialEq, Eq, serde::Serialize, serde::Deserialize)]
#[serde(rename_all = "kebab-case")]
pub enum MoistureUnit {
    /// kg water per kg dry matter (0.25 = 25 % d.b.).
    DecimalDb,
    /// percent dry basis (25.0 = 25 % d.b.).
    PercentDb,
}

impl MoistureUnit {
    /// Multiply a dry-basis decimal by this to get the fitted unit.
    #[inline]
    pub fn scale(self) -> f64 {
        match self {
            MoistureUnit::DecimalDb => 1.0,
            MoistureUnit::PercentDb => 100.0,
        }
    }
}

/// The name of an isotherm form, as written in crop files.
#[derive(Debug, Clone, Copy, PartialEq, Eq, serde::Serialize, serde::Deserialize)]
#[serde(rename_all = "kebab-case")]
pub enum IsothermForm {
    /// Modified Henderson.
    ModifiedHenderson,
    /// Modified Chung-Pfost.
    ModifiedChungPfost,
    /// Modified Halsey.
    ModifiedHalsey,
    /// Modified Oswin.
    ModifiedOswin,
    /// Modified Guggenheim–Anderson–de Boer.
    ModifiedGab,
    /// Cromarty, Ellis & Roberts (1982) seed equation (oil content as the one constant).
    Cromarty,
}

/// An equilibrium-moisture relation with its constants. All methods take and return dry-basis decimal moisture.
#[derive(Debug, Clone, Copy, PartialEq)]
pub enum Isotherm {
    /// Modified Henderson: A, B, C with M in `unit`.
    ModifiedHenderson {
        /// A.
        a: f64,
        /// B.
        b: f64,
        /// C, °C.
        c: f64,
        /// Unit of M the constants were fitted in.
        unit: MoistureUnit,
    },
    /// Modified Chung-Pfost: A, B, C with M in `unit`.
    ModifiedChungPfost {
        /// A.
        a: f64,
        /// B.
        b: f64,
        /// C, °C.
        c: f64,
        /// Unit of M the constants were fitted in.
        unit: MoistureUnit,
    },
    /// Modified Halsey: A, B, C with M in `unit`.
    ModifiedHalsey {
        /// A.
        a: f64,
        /// B, per °C.
        b: f64,
        /// C.
        c: f64,
        /// Unit of M the constants were fitted in.
        unit: MoistureUnit,
    },
    /// Modified Oswin: A, B, C with M in `unit`.
    ModifiedOswin {
        /// A.
        a: f64,
        /// B, per °C.
        b: f64,
        /// C.
        c: f64,
        /// Unit of M the constants were fitted in.
        unit: MoistureUnit,
    },
    /// Modified GAB: A (monolayer moisture, in `unit`), B (0 < B < 1), C (°C).
    ModifiedGab {
        /// A, monolayer moisture.
        a: f64,
        /// B.
        b: f64,
        /// C, °C.
        c: f64,
        /// Unit of M the constants were fitted in.
        unit: MoistureUnit,
    },
    /// Cromarty seed equation (defined in percent dry basis).
    Cromarty {
        /// Oil content, decimal dry basis (0.48 for peanut kernels).
        oil_content_db: f64,
    },
}

#[inline]
fn clamp_rh(rh: f64) -> f64 {
    rh.clamp(RH_MIN, RH_MAX)
}

/// `−ln(1 − rh)`, the log complement of an RH, to full precision. From 0.5 up the subtraction `1 − rh` is exact
/// (Sterbenz lemma), so the plain logarithm, cheaper than `ln_1p` (about 40 % fewer instructions with this
/// machine's C library), is exactly as accurate there.
#[inline]
fn log_complement(rh: f64) -> f64 {
    if rh >= 0.5 {
        -(1.0 - rh).ln()
    } else {
        -(-rh).ln_1p()
    }
}

/// The Cromarty form's log complement `u` of the ERH at `m_db` (dry-basis decimal, positive) and `t_c` °C, with
/// `du/dm`; `s` is the scale of the form's moisture unit. Written with constant reciprocals so that no division
/// waits on T or M (this sits on the layer step's critical path); `s/(1 − D_o)` depends on neither.
#[inline(always)]
fn cromarty_log_complement(oil_content_db: f64, s: f64, t_c: f64, m_db: f64) -> (f64, f64) {
    let g = (1.1 + t_c * (1.0 / 90.0)) * (s / (1.0 - oil_content_db));
    let x = m_db * g;
    (x * x * (1.0 / 440.0), x * g * (2.0 / 440.0))
}

/// `(u, du/dm)` as it is below [`U_CAP`], else `(U_CAP, 0)`; NaN fails the test too.
#[inline(always)]
fn below_u_cap((u, du_dm): (f64, f64)) -> (f64, f64) {
    if u < U_CAP {
        (u, du_dm)
    } else {
        (U_CAP, 0.0)
    }
}

#[inline]
fn positive(term: f64) -> f64 {
    term.max(TEMP_TERM_MIN)
}

impl Isotherm {
    /// Which form this is.
    pub fn form(&self) -> IsothermForm {
        match self {
            Isotherm::ModifiedHenderson { .. } => IsothermForm::ModifiedHenderson,
            Isotherm::ModifiedChungPfost { .. } => IsothermForm::ModifiedChungPfost,
            Isotherm::ModifiedHalsey { .. } => IsothermForm::ModifiedHalsey,
            Isotherm::ModifiedOswin { .. } => IsothermForm::ModifiedOswin,
            Isotherm::ModifiedGab { .. } => IsothermForm::ModifiedGab,
            Isotherm::Cromarty { .. } => IsothermForm::Cromarty,
        }
    }

    /// The unit of M the constants were fitted in.
    pub fn unit(&self) -> MoistureUnit {
        match *self {
            Isotherm::ModifiedHenderson { unit, .. }
            | Isotherm::ModifiedChungPfost { unit, .. }
            | Isotherm::ModifiedHalsey { unit, .. }
            | Isotherm::ModifiedOswin { unit, .. }
            | Isotherm::ModifiedGab { unit, .. } => unit,
            Isotherm::Cromarty { .. } => MoistureUnit::PercentDb,
        }
    }

    /// Equilibrium moisture content, dry-basis decimal, of the crop in air at `t_c` (°C) and `rh` (decimal).
    /// RH is clamped to `[RH_MIN, RH_MAX]`; the result is never negative.
    #[inline]
    pub fn emc_db(&self, t_c: f64, rh: f64) -> f64 {
        let rh = clamp_rh(rh);
        let m_fit = match *self {
            Isotherm::ModifiedHenderson { a, b, c, .. } => {
                (log_complement(rh) / (a * positive(t_c + c))).powf(1.0 / b)
            }
            Isotherm::ModifiedChungPfost { a, b, c, .. } => {
                -(positive(t_c + c) * (-rh.ln()) / a).ln() / b
            }
            Isotherm::ModifiedHalsey { a, b, c, .. } => {
                ((a + b * t_c).exp() / (-rh.ln())).powf(1.0 / c)
            }
            Isotherm::ModifiedOswin { a, b, c, .. } => {
                positive(a + b * t_c) / (1.0 / rh - 1.0).powf(1.0 / c)
            }
            Isotherm::ModifiedGab { a, b, c, .. } => {
                let g = c / positive(t_c);
                let y = b * rh;
                a * g * y / ((1.0 - y) * (1.0 - y + g * y))
            }
            Isotherm::Cromarty { oil_content_db } => {
                // Already in dry-basis decimal: the factor (divisions included) does not wait for the logarithm.
                let factor = (1.0 - oil_content_db) / ((1.1 + t_c * (1.0 / 90.0)) * 100.0);
                return ((440.0 * log_complement(rh)).sqrt() * factor).max(0.0);
            }
        };
        (m_fit / self.unit().scale()).max(0.0)
    }

    /// Equilibrium relative humidity (decimal, 0–1) of air over the crop at `t_c` (°C) and moisture `m_db`
    /// (dry-basis decimal). Non-positive moisture gives 0.
    #[inline]
    pub fn erh(&self, t_c: f64, m_db: f64) -> f64 {
        if m_db <= 0.0 || m_db.is_nan() {
            return 0.0;
        }
        let m = m_db * self.unit().scale();
        let rh = match *self {
            Isotherm::ModifiedHenderson { a, b, c, .. } => {
                -(-a * positive(t_c + c) * m.powf(b)).exp_m1()
            }
            Isotherm::ModifiedChungPfost { a, b, c, .. } => {
                (-a / positive(t_c + c) * (-b * m).exp()).exp()
            }
            Isotherm::ModifiedHalsey { a, b, c, .. } => (-(a + b * t_c).exp() / m.powf(c)).exp(),
            Isotherm::ModifiedOswin { a, b, c, .. } => {
                1.0 / ((positive(a + b * t_c) / m).powf(c) + 1.0)
            }
            Isotherm::ModifiedGab { a, b, c, .. } => gab_rh(a, b, c / positive(t_c), m),
            Isotherm::Cromarty { oil_content_db } => {
                let x = m * (1.1 + t_c / 90.0) / (1.0 - oil_content_db);
                -(-x * x / 440.0).exp_m1()
            }
        };
        if rh.is_nan() {
            1.0
        } else {
            rh.clamp(0.0, 1.0)
        }
    }

    /// The equilibrium humidity at `m_db` as its log complement `u = −ln(1 − ERH)`, with `du/dm` (per unit of
    /// dry-basis decimal moisture). `u` is the variable the Henderson and Cromarty forms are written in, so a chain
    /// hull → air → kernel through it needs no exp/ln round trip and keeps full precision near saturation, where
    /// ERH itself rounds to 1. Consistent with [`Isotherm::erh`]: `ERH = 1 − exp(−u)`; a non-positive moisture
    /// gives `(0, 0)`; where the ERH form saturates the result is capped at [`U_CAP`] with slope 0.
    #[inline(always)]
    pub fn erh_log_complement(&self, t_c: f64, m_db: f64) -> (f64, f64) {
        match *self {
            // The bundled peanut's hull form, in the layer step's hot path: kept inline there (the whole match is
            // too large to be), the same arithmetic as the arm below.
            Isotherm::Cromarty { oil_content_db } if m_db > 0.0 => below_u_cap(
                cromarty_log_complement(oil_content_db, self.unit().scale(), t_c, m_db),
            ),
            _ => self.erh_log_complement_of_form(t_c, m_db),
        }
    }

    /// [`Isotherm::erh_log_complement`] for every form.
    fn erh_log_complement_of_form(&self, t_c: f64, m_db: f64) -> (f64, f64) {
        if m_db <= 0.0 || m_db.is_nan() {
            return (0.0, 0.0);
        }
        let s = self.unit().scale();
        let m = m_db * s;
        // For the forms written in RH, u and its slope follow from ERH and dERH/dm by du = dERH / (1 − ERH).
        let via_rh = |rh: f64, drh_dm: f64| {
            if rh >= 1.0 || rh.is_nan() {
                return (U_CAP, 0.0);
            }
            let u = log_complement(rh);
            if u >= U_CAP {
                (U_CAP, 0.0)
            } else {
                (u.max(0.0), (drh_dm / (1.0 - rh)).max(0.0))
            }
        };
        let (u, du_dm) = match *self {
            Isotherm::ModifiedHenderson { a, b, c, .. } => {
                let u = a * positive(t_c + c) * m.powf(b);
                (u, u * b / m_db)
            }
            Isotherm::Cromarty { oil_content_db } => {
                cromarty_log_complement(oil_content_db, s, t_c, m_db)
            }
            Isotherm::ModifiedChungPfost { a, b, c, .. } => {
                let v = a / positive(t_c + c) * (-b * m).exp();
                let rh = (-v).exp();
                via_rh(rh, rh * v * b * s)
            }
            Isotherm::ModifiedHalsey { a, b, c, .. } => {
                let v = (a + b * t_c).exp() / m.powf(c);
                let rh = (-v).exp();
                via_rh(rh, rh * c * v / m_db)
            }
            Isotherm::ModifiedOswin { a, b, c, .. } => {
                // rh = 1/(z + 1), z = (P/M)^C: u = ln(1 + 1/z), du/dM = C/(M·(z + 1)).
                let z = (positive(a + b * t_c) / m).powf(c);
                let u = (1.0 / z).ln_1p();
                if u >= U_CAP {
                    (U_CAP, 0.0)
                } else {
                    (u, c / (m_db * (z + 1.0)))
                }
            }
            Isotherm::ModifiedGab { a, b, c, .. } => {
                let g = c / positive(t_c);
                let rh = gab_rh(a, b, g, m);
                let dm_drh = gab_dm_drh(a, b, g, rh) / s;
                via_rh(rh, if dm_drh > 0.0 { 1.0 / dm_drh } else { 0.0 })
            }
        };
        below_u_cap((u, du_dm))
    }

    /// EMC (dry-basis decimal) in air whose RH has log complement `u = −ln(1 − RH)`, with `dM/du`. Consistent
    /// with [`Isotherm::emc_db`] at `RH = 1 − exp(−u)`, including its clamping of RH to `[RH_MIN, RH_MAX]`
    /// (slope 0 where clamped).
    #[inline]
    pub fn emc_from_log_complement(&self, t_c: f64, u: f64) -> (f64, f64) {
        let clamped = !(U_MIN..=U_MAX).contains(&u);
        let u = u.clamp(U_MIN, U_MAX);
        let s = self.unit().scale();
        let (m_fit, dm_du) = match *self {
            Isotherm::ModifiedHenderson { a, b, c, .. } => {
                let m = (u / (a * positive(t_c + c))).powf(1.0 / b);
                (m, m / (b * u))
            }
            Isotherm::Cromarty { oil_content_db } => {
                let m = (440.0 * u).sqrt() * (1.0 - oil_content_db) / (1.1 + t_c / 90.0);
                (m, m / (2.0 * u))
            }
            _ => {
                // dM/du = dM/dRH · dRH/du with dRH/du = exp(−u) = 1 − RH.
                let one_minus = (-u).exp();
                let rh = -(-u).exp_m1();
                let m = self.emc_db(t_c, rh) * s;
                let dm_drh = match *self {
                    Isotherm::ModifiedChungPfost { b, .. } => {
                        let l = -rh.ln();
                        1.0 / (b * l * rh)
                    }
                    Isotherm::ModifiedHalsey { c, .. } => m / (c * -rh.ln() * rh),
                    Isotherm::ModifiedOswin { c, .. } => m / (c * (1.0 / rh - 1.0) * rh * rh),
                    Isotherm::ModifiedGab { a, b, c, .. } => {
                        gab_dm_drh(a, b, c / positive(t_c), rh)
                    }
                    Isotherm::ModifiedHenderson { .. } | Isotherm::Cromarty { .. } => {
                        unreachable!("handled above")
                    }
                };
                (m, dm_drh * one_minus)
            }
        };
        let m_db = m_fit / s;
        if !(m_db > 0.0 && m_db < f64::INFINITY) {
            return (0.0, 0.0);
        }
        (m_db, if clamped { 0.0 } else { dm_du / s })
    }

    /// Check the constants are usable (finite, right signs). Returns the name of the first bad constant and why.
    pub fn check(&self) -> Result<(), (&'static str, &'static str)> {
        let finite = |name, v: f64| {
            if v.is_finite() {
                Ok(())
            } else {
                Err((name, "must be a finite number"))
            }
        };
        let pos = |name, v: f64| {
            if v.is_finite() && v > 0.0 {
                Ok(())
            } else {
                Err((name, "must be a finite number greater than 0"))
            }
        };
        match *self {
            Isotherm::ModifiedHenderson { a, b, c, .. } => {
                pos("a", a)?;
                pos("b", b)?;
                finite("c", c)
            }
            Isotherm::ModifiedChungPfost { a, b, c, .. } => {
                pos("a", a)?;
                pos("b", b)?;
                finite("c", c)
            }
            Isotherm::ModifiedHalsey { a, b, c, .. } => {
                finite("a", a)?;
                finite("b", b)?;
                pos("c", c)
            }
            Isotherm::ModifiedOswin { a, b, c, .. } => {
                pos("a", a)?;
                finite("b", b)?;
                pos("c", c)
            }
            Isotherm::ModifiedGab { a, b, c, .. } => {
                pos("a", a)?;
                if !(b.is_finite() && b > 0.0 && b < 1.0) {
                    return Err(("b", "must be between 0 and 1 (exclusive)"));
                }
                pos("c", c)
            }
            Isotherm::Cromarty { oil_content_db } => {
                if oil_content_db.is_finite() && (0.0..0.95).contains(&oil_content_db) {
                    Ok(())
                } else {
                    Err(("a", "oil content must be between 0 and 0.95 (decimal d.b.)"))
                }
            }
        }
    }
}

/// RH from the modified GAB relation at monolayer moisture `a`, `b`, `g = C/T`, moisture `m` (fitted unit):
/// the physical root of the quadratic in y = b·RH (module docs).
#[inline]
fn gab_rh(a: f64, b: f64, g: f64, m: f64) -> f64 {
    let q = a * g - m * (g - 2.0);
    let disc = q * q + 4.0 * m * m * (g - 1.0);
    if disc < 0.0 {
        return 1.0;
    }
    let denom = q + disc.sqrt();
    if denom <= 0.0 {
        return 1.0;
    }
    (2.0 * m / denom / b).clamp(0.0, 1.0)
}

/// dM/dRH of the modified GAB form (fitted units), from `M = A·G·y/((1 − y)(1 + (G − 1)·y))`, `y = B·RH`.
#[inline]
fn gab_dm_drh(a: f64, b: f64, g: f64, rh: f64) -> f64 {
    let y = b * rh;
    let d = (1.0 - y) * (1.0 + (g - 1.0) * y);
    let dd = -(1.0 + (g - 1.0) * y) + (1.0 - y) * (g - 1.0);
    a * g * (d - y * dd) / (d * d) * b
}

/// The temperature and RH range a constant set was fitted over.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct DataRange {
    /// Lowest fitted temperature, °C.
    pub t_min_c: f64,
    /// Highest fitted temperature, °C.
    pub t_max_c: f64,
    /// Lowest fitted RH, decimal.
    pub rh_min: f64,
    /// Highest fitted RH, decimal.
    pub rh_max: f64,
}

impl DataRange {
    /// Whether (t_c, rh) lies inside the fitted range.
    pub fn contains(&self, t_c: f64, rh: f64) -> bool {
        (self.t_min_c..=self.t_max_c).contains(&t_c) && (self.rh_min..=self.rh_max).contains(&rh)
    }
}

/// A desorption isotherm with an optional adsorption (rewetting) offset.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Sorption {
    /// The desorption (drying) isotherm.
    pub desorption: Isotherm,
    /// Adsorption EMC = desorption EMC − this, dry-basis decimal (0 = no hysteresis).
    pub adsorption_offset_db: f64,
}

impl Sorption {
    /// Desorption EMC, dry-basis decimal.
    #[inline]
    pub fn emc_desorption_db(&self, t_c: f64, rh: f64) -> f64 {
        self.desorption.emc_db(t_c, rh)
    }

    /// Adsorption EMC, dry-basis decimal (never negative).
    #[inline]
    pub fn emc_adsorption_db(&self, t_c: f64, rh: f64) -> f64 {
        (self.desorption.emc_db(t_c, rh) - self.adsorption_offset_db).max(0.0)
    }

    /// The moisture a product at `m_db` moves toward in air at (t_c, rh): the desorption EMC if it is wetter
    /// than that, the adsorption EMC if it is drier than that, and its own moisture inside the hysteresis band.
    #[inline]
    pub fn target_db(&self, t_c: f64, rh: f64, m_db: f64) -> f64 {
        let des = self.emc_desorption_db(t_c, rh);
        if m_db >= des {
            return des;
        }
        let ads = (des - self.adsorption_offset_db).max(0.0);
        if m_db <= ads {
            ads
        } else {
            m_db
        }
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn clamped_extremes_stay_finite() {
        let iso = Isotherm::ModifiedChungPfost {
            a: 312.40,
            b: 16.958,
            c: 30.205,
            unit: MoistureUnit::DecimalDb,
        };
        for rh in [-1.0, 0.0, 1.0, 2.0] {
            assert!(iso.emc_db(25.0, rh).is_finite());
        }
        assert!(iso.emc_db(-40.0, 0.5).is_finite());
        assert!(iso.erh(25.0, -0.1).abs() < 1e-15);
        assert!((0.0..=1.0).contains(&iso.erh(25.0, 5.0)));
    }

    #[test]
    fn gab_rejects_b_outside_unit_interval() {
        let iso = Isotherm::ModifiedGab {
            a: 0.06,
            b: 1.2,
            c: 300.0,
            unit: MoistureUnit::DecimalDb,
        };
        assert_eq!(iso.check().unwrap_err().0, "b");
    }

    #[test]
    fn log_complement_matches_ln_1p_on_both_branches() {
        // Reference: std's ln_1p, correctly rounded to within an ulp or so; the plain-log branch must not lose digits.
        let mut worst: f64 = 0.0;
        for i in 1..100_000 {
            let rh = i as f64 / 100_000.0;
            let reference = -(-rh).ln_1p();
            worst = worst.max((log_complement(rh) / reference - 1.0).abs());
        }
        for rh in [RH_MAX, 1.0 - 1e-6, 0.999_999_999_9, 0.5, 0.5 - 1e-16] {
            let reference = -(-rh).ln_1p();
            worst = worst.max((log_complement(rh) / reference - 1.0).abs());
        }
        assert!(worst < 1e-15, "worst relative difference {worst:e}");
    }
}
