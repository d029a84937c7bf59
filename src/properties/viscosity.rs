//! Viscosity: the temperature dependence of one melt ([`ViscosityCurve`], VFT
//! or MYEGA), its fixpoints, and the composition models that give a curve for
//! any composition ([`ViscosityModel`]). See docs/science.md, "Viscosity".
//!
//! References
//! - G. S. Fulcher, J. Am. Ceram. Soc. 8 (1925) 339–355,
//!   doi:10.1111/j.1151-2916.1925.tb16731.x (VFT).
//! - J. C. Mauro et al., "Viscosity of glass-forming liquids", PNAS 106 (2009)
//!   19780–19784, doi:10.1073/pnas.0911705106 (MYEGA).
//! - D. Giordano, J. K. Russell, D. B. Dingwell, "Viscosity of magmatic
//!   liquids: A model", Earth Planet. Sci. Lett. 271 (2008) 123–134,
//!   doi:10.1016/j.epsl.2008.03.038 (a published composition model).

use super::fit::FitRecord;
use super::mixture::{Domain, MixtureModel, Term};
use super::model_set::ModelError;
use crate::composition::Composition;
use crate::error::{finite, positive, Diagnostic, ValueError};
use crate::numeric::brent_root;
use crate::units::{Kelvin, Log10PaS};

/// Viscosity fixpoints, log10(η/Pa·s) (common practice; ASTM C965, C338, C336).
pub mod fixpoints {
    /// "Melting" (fining) temperature, η = 10 Pa·s.
    pub const MELTING: f64 = 1.0;
    /// Working point, η = 10³ Pa·s.
    pub const WORKING: f64 = 3.0;
    /// Littleton softening point, η = 10^6.6 Pa·s (ASTM C338).
    pub const SOFTENING: f64 = 6.6;
    /// Glass transition ≈ annealing point, η = 10¹² Pa·s.
    pub const GLASS_TRANSITION: f64 = 12.0;
    /// Strain point, η = 10^13.5 Pa·s (ASTM C336).
    pub const STRAIN: f64 = 13.5;
}

/// Viscosity that defines the glass transition, log10(η/Pa·s) (common practice).
pub const GLASS_TRANSITION_LOG_VISCOSITY: f64 = fixpoints::GLASS_TRANSITION;

/// Why a viscosity curve was refused or cannot give a temperature.
#[derive(Debug, Clone, PartialEq, thiserror::Error)]
pub enum ViscosityError {
    #[error(transparent)]
    Value(#[from] ValueError),
    #[error("the viscosity never reaches 10^{target} Pa·s on this curve")]
    NoIsokom { target: f64 },
    #[error("numerical failure: {0}")]
    Numerical(String),
}

impl Diagnostic for ViscosityError {}

/// Temperature dependence of the melt viscosity.
#[derive(Debug, Clone, Copy, PartialEq, serde::Serialize)]
#[serde(tag = "form", rename_all = "snake_case")]
pub enum ViscosityCurve {
    /// Vogel–Fulcher–Tammann: log10(η/Pa·s) = a + b/(T − c), b and c in K.
    Vft { a: f64, b_k: f64, c_k: f64 },
    /// MYEGA (Mauro et al. 2009): log10 η = L + (12 − L)(Tg/T) exp[(m/(12 − L) − 1)(Tg/T − 1)].
    Myega {
        log_eta_inf: f64,
        tg_k: f64,
        fragility: f64,
    },
}

impl ViscosityCurve {
    /// A VFT curve.
    ///
    /// # Errors
    /// Non-finite values, `b_k ≤ 0`.
    pub fn vft(a: f64, b_k: f64, c_k: f64) -> Result<Self, ViscosityError> {
        finite("a", a)?;
        positive("b_k", b_k, "K")?;
        finite("c_k", c_k)?;
        Ok(ViscosityCurve::Vft { a, b_k, c_k })
    }

    /// A MYEGA curve.
    ///
    /// # Errors
    /// Non-finite values, `tg_k ≤ 0`, `log_eta_inf ≥ 12`, or a fragility below
    /// 12 − log_eta_inf (where the curve stops being monotone).
    pub fn myega(log_eta_inf: f64, tg_k: f64, fragility: f64) -> Result<Self, ViscosityError> {
        finite("log_eta_inf", log_eta_inf)?;
        positive("tg_k", tg_k, "K")?;
        finite("fragility", fragility)?;
        if log_eta_inf >= 12.0 {
            return Err(ValueError::OutOfRange {
                name: "log_eta_inf",
                value: log_eta_inf,
                range: "(-inf, 12)",
            }
            .into());
        }
        if fragility < 12.0 - log_eta_inf {
            return Err(ValueError::OutOfRange {
                name: "fragility",
                value: fragility,
                range: "[12 - log_eta_inf, inf)",
            }
            .into());
        }
        Ok(ViscosityCurve::Myega {
            log_eta_inf,
            tg_k,
            fragility,
        })
    }

    /// log10(η/Pa·s) at T; +∞ at or below the VFT divergence.
    #[inline]
    pub fn log10_viscosity(&self, t: Kelvin) -> Log10PaS {
        Log10PaS(self.log10_eta(t.0))
    }

    #[inline]
    pub(crate) fn log10_eta(&self, t: f64) -> f64 {
        match *self {
            ViscosityCurve::Vft { a, b_k, c_k } => {
                if t <= c_k {
                    f64::INFINITY
                } else {
                    a + b_k / (t - c_k)
                }
            }
            ViscosityCurve::Myega {
                log_eta_inf: l,
                tg_k,
                fragility: m,
            } => {
                let u = tg_k / t;
                l + (12.0 - l) * u * ((m / (12.0 - l) - 1.0) * (u - 1.0)).exp()
            }
        }
    }

    /// The temperature at which the viscosity equals `level` (an isokom).
    ///
    /// # Errors
    /// The curve never reaches that viscosity (VFT: `level ≤ a`; MYEGA:
    /// `level ≤ log_eta_inf`).
    pub fn temperature_at(&self, level: Log10PaS) -> Result<Kelvin, ViscosityError> {
        let target = level.0;
        match *self {
            ViscosityCurve::Vft { a, b_k, c_k } => {
                if target <= a {
                    return Err(ViscosityError::NoIsokom { target });
                }
                Ok(Kelvin(c_k + b_k / (target - a)))
            }
            ViscosityCurve::Myega {
                log_eta_inf, tg_k, ..
            } => {
                if target <= log_eta_inf {
                    return Err(ViscosityError::NoIsokom { target });
                }
                // log10 η falls monotonically with T: bracket, then Brent.
                let f = |t: f64| self.log10_eta(t) - target;
                let mut lo = tg_k * 0.5;
                let mut hi = tg_k * 2.0;
                while f(lo) < 0.0 {
                    lo *= 0.5;
                }
                while f(hi) > 0.0 {
                    hi *= 2.0;
                    if hi > 1e7 {
                        return Err(ViscosityError::NoIsokom { target });
                    }
                }
                brent_root(f, lo, hi, 1e-9 * tg_k)
                    .map(Kelvin)
                    .map_err(ViscosityError::Numerical)
            }
        }
    }

    /// Kinetic fragility m = dlog10η/d(Tg/T) at the glass transition.
    pub fn fragility(&self) -> Result<f64, ViscosityError> {
        match *self {
            ViscosityCurve::Vft { b_k, c_k, .. } => {
                let tg = self
                    .temperature_at(Log10PaS(GLASS_TRANSITION_LOG_VISCOSITY))?
                    .0;
                Ok(b_k * tg / ((tg - c_k) * (tg - c_k)))
            }
            ViscosityCurve::Myega { fragility, .. } => Ok(fragility),
        }
    }
}

/// The composition dependence of the viscosity curve.
#[derive(Debug, Clone, PartialEq)]
pub enum ViscosityForm {
    /// log10 η = A + B/(T − C) with A, B (K), C (K) mixture models.
    Vft {
        a: MixtureModel,
        b_k: MixtureModel,
        c_k: MixtureModel,
    },
    /// MYEGA with log10 η∞, T_g (K) and fragility m as mixture models.
    Myega {
        log_eta_inf: MixtureModel,
        tg_k: MixtureModel,
        fragility: MixtureModel,
    },
}

/// One of the three composition-dependent parameters of a viscosity form,
/// named as in model files: `a`, `b_k`, `c_k` (VFT) or `log_eta_inf`,
/// `tg_k`, `fragility` (MYEGA).
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum ViscosityParam {
    A,
    BK,
    CK,
    LogEtaInf,
    TgK,
    Fragility,
}

impl ViscosityParam {
    /// The key in a model file.
    pub fn key(self) -> &'static str {
        match self {
            ViscosityParam::A => "a",
            ViscosityParam::BK => "b_k",
            ViscosityParam::CK => "c_k",
            ViscosityParam::LogEtaInf => "log_eta_inf",
            ViscosityParam::TgK => "tg_k",
            ViscosityParam::Fragility => "fragility",
        }
    }

    /// The parameter with this key.
    pub fn from_key(key: &str) -> Option<Self> {
        [
            ViscosityParam::A,
            ViscosityParam::BK,
            ViscosityParam::CK,
            ViscosityParam::LogEtaInf,
            ViscosityParam::TgK,
            ViscosityParam::Fragility,
        ]
        .into_iter()
        .find(|p| p.key() == key)
    }
}

impl ViscosityForm {
    /// The three parameters of this form, in order.
    pub fn params(&self) -> [ViscosityParam; 3] {
        match self {
            ViscosityForm::Vft { .. } => {
                [ViscosityParam::A, ViscosityParam::BK, ViscosityParam::CK]
            }
            ViscosityForm::Myega { .. } => [
                ViscosityParam::LogEtaInf,
                ViscosityParam::TgK,
                ViscosityParam::Fragility,
            ],
        }
    }

    /// The mixture model of a parameter, if this form has it.
    pub fn mixture(&self, p: ViscosityParam) -> Option<&MixtureModel> {
        match (self, p) {
            (ViscosityForm::Vft { a, .. }, ViscosityParam::A) => Some(a),
            (ViscosityForm::Vft { b_k, .. }, ViscosityParam::BK) => Some(b_k),
            (ViscosityForm::Vft { c_k, .. }, ViscosityParam::CK) => Some(c_k),
            (ViscosityForm::Myega { log_eta_inf, .. }, ViscosityParam::LogEtaInf) => {
                Some(log_eta_inf)
            }
            (ViscosityForm::Myega { tg_k, .. }, ViscosityParam::TgK) => Some(tg_k),
            (ViscosityForm::Myega { fragility, .. }, ViscosityParam::Fragility) => Some(fragility),
            _ => None,
        }
    }

    /// The mixture model of a parameter, to change it.
    pub fn mixture_mut(&mut self, p: ViscosityParam) -> Option<&mut MixtureModel> {
        match (self, p) {
            (ViscosityForm::Vft { a, .. }, ViscosityParam::A) => Some(a),
            (ViscosityForm::Vft { b_k, .. }, ViscosityParam::BK) => Some(b_k),
            (ViscosityForm::Vft { c_k, .. }, ViscosityParam::CK) => Some(c_k),
            (ViscosityForm::Myega { log_eta_inf, .. }, ViscosityParam::LogEtaInf) => {
                Some(log_eta_inf)
            }
            (ViscosityForm::Myega { tg_k, .. }, ViscosityParam::TgK) => Some(tg_k),
            (ViscosityForm::Myega { fragility, .. }, ViscosityParam::Fragility) => Some(fragility),
            _ => None,
        }
    }
}

/// A coefficient of a viscosity model, written `b_k.SiO2`, `a.constant` or
/// `c_k.Na2O*CaO` in a fit's list of coefficients.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub struct ViscosityCoefficient {
    pub param: ViscosityParam,
    pub term: Term,
}

impl std::fmt::Display for ViscosityCoefficient {
    fn fmt(&self, f: &mut std::fmt::Formatter<'_>) -> std::fmt::Result {
        write!(f, "{}.{}", self.param.key(), self.term)
    }
}

impl std::str::FromStr for ViscosityCoefficient {
    type Err = String;
    fn from_str(s: &str) -> Result<Self, String> {
        let (p, t) = s
            .split_once('.')
            .ok_or_else(|| format!("'{s}' must be PARAMETER.TERM, e.g. b_k.SiO2 or a.constant"))?;
        let param = ViscosityParam::from_key(p.trim())
            .ok_or_else(|| format!("unknown viscosity parameter '{p}' in '{s}'"))?;
        Ok(ViscosityCoefficient {
            param,
            term: t.parse()?,
        })
    }
}

/// A viscosity model with its provenance and validity domain.
#[derive(Debug, Clone, PartialEq)]
pub struct ViscosityModel {
    pub name: String,
    pub source: String,
    pub form: ViscosityForm,
    pub domain: Domain,
    /// How the coefficients were fitted, with their covariance, if they were.
    pub fit: Option<FitRecord>,
}

impl ViscosityModel {
    /// The value of a coefficient (None: the form has no such parameter, or
    /// the model no such pair term).
    pub fn coefficient(&self, c: ViscosityCoefficient) -> Option<f64> {
        self.form.mixture(c.param)?.coefficient(c.term)
    }

    /// The same model with the coefficients `names` set to `values` (as a
    /// draw from the fit's covariance would set them).
    ///
    /// # Errors
    /// A name that does not address a coefficient of this model.
    pub fn with_coefficients(
        &self,
        names: &[ViscosityCoefficient],
        values: &[f64],
    ) -> Result<ViscosityModel, String> {
        let mut m = self.clone();
        for (c, v) in names.iter().zip(values) {
            let mix = m.form.mixture_mut(c.param).ok_or_else(|| {
                format!("this viscosity form has no parameter '{}'", c.param.key())
            })?;
            mix.set_coefficient(c.term, *v);
        }
        Ok(m)
    }

    /// The viscosity curve of a composition, and flags if it is extrapolated.
    ///
    /// # Errors
    /// A curve that cannot be a viscosity (B ≤ 0 for VFT, an invalid MYEGA set).
    pub fn curve(&self, c: &Composition) -> Result<(ViscosityCurve, Vec<String>), ModelError> {
        let x = c.fractions();
        let mut flags: Vec<String> = self
            .domain
            .violations(c)
            .into_iter()
            .map(|v| format!("outside model validity of '{}': {v}", self.name))
            .collect();
        let nonphysical = |what: String| ModelError::NonPhysicalViscosity {
            model: self.name.clone(),
            what,
        };
        let curve = match &self.form {
            ViscosityForm::Vft { a, b_k, c_k } => {
                let (a, b, cc) = (a.eval(x), b_k.eval(x), c_k.eval(x));
                if b.is_nan() || b <= 0.0 || !b.is_finite() || !a.is_finite() || !cc.is_finite() {
                    return Err(nonphysical(format!("VFT B = {b:.1} K")));
                }
                if cc <= 0.0 {
                    flags.push(format!(
                        "outside model validity of '{}': VFT C = {cc:.1} K is not physical",
                        self.name
                    ));
                }
                ViscosityCurve::vft(a, b, cc).map_err(|e| nonphysical(e.to_string()))?
            }
            ViscosityForm::Myega {
                log_eta_inf,
                tg_k,
                fragility,
            } => ViscosityCurve::myega(log_eta_inf.eval(x), tg_k.eval(x), fragility.eval(x))
                .map_err(|e| nonphysical(e.to_string()))?,
        };
        Ok((curve, flags))
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn myega_passes_through_tg_with_its_fragility() {
        // Source: Mauro et al. (2009), PNAS 106, 19780, eq. for MYEGA: log η(T_g) = 12 and
        // m = d log η / d(T_g/T) at T_g. Checked by central finite difference.
        let c = ViscosityCurve::myega(-2.9, 820.0, 38.0).unwrap();
        assert!((c.log10_viscosity(Kelvin(820.0)).0 - 12.0).abs() < 1e-12);
        let tg = c.temperature_at(Log10PaS(12.0)).unwrap().0;
        assert!((tg - 820.0).abs() < 1e-6, "{tg}");
        let h = 1e-6;
        let f = |u: f64| c.log10_viscosity(Kelvin(820.0 / u)).0;
        let m = (f(1.0 + h) - f(1.0 - h)) / (2.0 * h);
        assert!((m - 38.0).abs() < 1e-5, "{m}");
    }

    #[test]
    fn vft_fragility_matches_a_finite_difference() {
        // Source: VFT algebra, m = B T_g/(T_g − C)² (docs/science.md, "Viscosity"),
        // against a central finite difference of the curve itself.
        let c = ViscosityCurve::vft(-2.8, 4500.0, 480.0).unwrap();
        let tg = c.temperature_at(Log10PaS(12.0)).unwrap().0;
        let h = 1e-6;
        let f = |u: f64| c.log10_viscosity(Kelvin(tg / u)).0;
        let m = (f(1.0 + h) - f(1.0 - h)) / (2.0 * h);
        assert!((m - c.fragility().unwrap()).abs() < 1e-5);
    }
}
