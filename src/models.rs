//! Composition → properties: mixture models for viscosity and liquidus, and the
//! crystal data of each phase.
//!
//! A [`MixtureModel`] gives a property as
//! `P(x) = c + Σ_i a_i x_i + Σ_{i<j} a_ij x_i x_j + Σ_k b_k Π_m (Σ_i g_kmi x_i)`
//! (the last sum holds products of oxide groups, as published models such as
//! Giordano et al. 2008 write their cross terms). Each model set comes from a
//! data file (see `data`), never from code; this module only evaluates.
//!
//! The liquidus is the maximum over the phases' liquidus surfaces; the phase
//! that gives it is the primary phase whose kinetics decide glass formation.
//!
//! References
//! - D. Giordano, J. K. Russell, D. B. Dingwell, "Viscosity of magmatic
//!   liquids: A model", Earth Planet. Sci. Lett. 271 (2008) 123–134,
//!   doi:10.1016/j.epsl.2008.03.038.
//! - D. Turnbull, "Under what conditions can a glass be formed?", Contemp.
//!   Phys. 10 (1969) 473–488, doi:10.1080/00107516908204405 (T_g/T_L).

use crate::composition::{Composition, Oxide, N_OXIDES};
use crate::kinetics::{
    GrowthMode, Interface, KineticsError, Melt, ViscosityCurve, GLASS_TRANSITION_LOG_VISCOSITY,
};
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
    pub const GLASS_TRANSITION: f64 = super::GLASS_TRANSITION_LOG_VISCOSITY;
    /// Strain point, η = 10^13.5 Pa·s (ASTM C336).
    pub const STRAIN: f64 = 13.5;
}

/// Whether a model's coefficients multiply mole fractions or mol%.
#[derive(Debug, Clone, Copy, PartialEq, Eq, serde::Deserialize, serde::Serialize)]
#[serde(rename_all = "snake_case")]
pub enum FractionBasis {
    /// x_i in [0, 1].
    MoleFraction,
    /// x_i in mol%, [0, 100].
    MolPercent,
}

impl FractionBasis {
    fn scale(self) -> f64 {
        match self {
            FractionBasis::MoleFraction => 1.0,
            FractionBasis::MolPercent => 100.0,
        }
    }
}

/// A product term: coefficient × Π over groups of (Σ weight·x).
#[derive(Debug, Clone, PartialEq)]
pub struct ProductTerm {
    pub coefficient: f64,
    pub groups: Vec<[f64; N_OXIDES]>,
}

/// An additive (mixture) model of one property.
#[derive(Debug, Clone, PartialEq)]
pub struct MixtureModel {
    pub basis: FractionBasis,
    pub constant: f64,
    pub linear: [f64; N_OXIDES],
    /// (i, j, a_ij) for x_i x_j.
    pub pairs: Vec<(usize, usize, f64)>,
    pub products: Vec<ProductTerm>,
    /// Standard errors of the linear coefficients, where known.
    pub linear_standard_errors: Option<[f64; N_OXIDES]>,
}

impl MixtureModel {
    /// A model that is the same constant everywhere.
    pub fn constant(value: f64) -> Self {
        MixtureModel {
            basis: FractionBasis::MoleFraction,
            constant: value,
            linear: [0.0; N_OXIDES],
            pairs: Vec::new(),
            products: Vec::new(),
            linear_standard_errors: None,
        }
    }

    /// The property at mole fractions `x` (which sum to one).
    pub fn eval(&self, x: &[f64; N_OXIDES]) -> f64 {
        let s = self.basis.scale();
        let mut v = self.constant;
        for (a, xi) in self.linear.iter().zip(x) {
            v += a * xi * s;
        }
        for &(i, j, a) in &self.pairs {
            v += a * x[i] * s * x[j] * s;
        }
        for t in &self.products {
            let mut p = t.coefficient;
            for g in &t.groups {
                p *= (0..N_OXIDES).map(|i| g[i] * x[i] * s).sum::<f64>();
            }
            v += p;
        }
        v
    }
}

/// Range of each oxide (mol%) over the data a model was fitted to.
#[derive(Debug, Clone, PartialEq)]
pub struct Domain {
    pub min: [f64; N_OXIDES],
    pub max: [f64; N_OXIDES],
}

impl Default for Domain {
    fn default() -> Self {
        Domain {
            min: [0.0; N_OXIDES],
            max: [100.0; N_OXIDES],
        }
    }
}

impl Domain {
    /// The oxides outside the domain, as readable phrases.
    pub fn violations(&self, c: &Composition) -> Vec<String> {
        let pct = c.mol_percent();
        let mut out = Vec::new();
        for o in Oxide::ALL {
            let (v, lo, hi) = (pct[o.index()], self.min[o.index()], self.max[o.index()]);
            // A hair of slack so a value on the boundary is inside.
            if v > hi + 1e-9 {
                out.push(format!("{o} {v:.2} mol% above {hi}"));
            } else if v < lo - 1e-9 {
                out.push(format!("{o} {v:.2} mol% below {lo}"));
            }
        }
        out
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

/// A viscosity model with its provenance and validity domain.
#[derive(Debug, Clone, PartialEq)]
pub struct ViscosityModel {
    pub name: String,
    pub source: String,
    pub form: ViscosityForm,
    pub domain: Domain,
}

/// A crystalline phase that can appear on cooling.
#[derive(Debug, Clone, PartialEq)]
pub struct Phase {
    pub name: String,
    pub formula: String,
    pub enthalpy_of_fusion_j_per_mol: f64,
    pub molar_volume_m3_per_mol: f64,
    pub melting_point: Kelvin,
    pub growth: GrowthMode,
    pub turnbull_alpha: f64,
    /// What α was calibrated against, if it was.
    pub calibrated_against: Option<String>,
    /// Liquidus surface of this phase, in K.
    pub liquidus_k: MixtureModel,
    pub domain: Domain,
}

/// Provenance of a model set.
#[derive(Debug, Clone, PartialEq, serde::Serialize)]
pub struct About {
    pub name: String,
    pub description: String,
    pub source: String,
    pub date: String,
    /// The units the file states for its coefficients.
    pub units: String,
    /// True when the coefficients are invented (demo data).
    pub invented: bool,
}

/// Viscosity + liquidus surfaces + crystal data: everything composition → melt.
#[derive(Debug, Clone, PartialEq)]
pub struct ModelSet {
    pub about: About,
    pub viscosity: ViscosityModel,
    pub phases: Vec<Phase>,
}

/// Why a composition has no properties.
#[derive(Debug, Clone, PartialEq, thiserror::Error)]
pub enum ModelError {
    #[error("viscosity model '{model}' gives {what} for this composition: outside model validity")]
    NonPhysicalViscosity { model: String, what: String },
    #[error("the viscosity curve never reaches 10^{level} Pa·s, needed for the {name}")]
    NoFixpoint { name: &'static str, level: f64 },
    #[error("liquidus surface of {phase} gives {value:.1} K: outside model validity")]
    NonPhysicalLiquidus { phase: String, value: f64 },
    #[error(transparent)]
    Kinetics(#[from] KineticsError),
}

/// Predicted properties of one composition.
#[derive(Debug, Clone, PartialEq)]
pub struct Properties {
    pub viscosity: ViscosityCurve,
    pub liquidus: Kelvin,
    /// Index into [`ModelSet::phases`].
    pub primary_phase: usize,
    pub melting_temperature: Kelvin,
    pub working_point: Kelvin,
    pub softening_point: Kelvin,
    pub glass_transition: Kelvin,
    pub strain_point: Kelvin,
    pub fragility: f64,
    /// T_g / T_L.
    pub reduced_glass_transition: f64,
    /// Why the viscosity prediction is an extrapolation (empty when inside).
    pub viscosity_flags: Vec<String>,
    /// Why the liquidus prediction is an extrapolation (empty when inside).
    pub liquidus_flags: Vec<String>,
}

impl ViscosityModel {
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

fn isokom(curve: &ViscosityCurve, level: f64, name: &'static str) -> Result<Kelvin, ModelError> {
    curve
        .temperature_at(Log10PaS(level))
        .map_err(|_| ModelError::NoFixpoint { name, level })
}

impl ModelSet {
    /// Properties of a composition.
    ///
    /// # Errors
    /// A non-physical viscosity or liquidus for this composition, or a missing fixpoint.
    pub fn properties(&self, c: &Composition) -> Result<Properties, ModelError> {
        let (viscosity, viscosity_flags) = self.viscosity.curve(c)?;
        let x = c.fractions();
        let mut best = (0, f64::NEG_INFINITY);
        for (k, p) in self.phases.iter().enumerate() {
            let t = p.liquidus_k.eval(x);
            if t > best.1 {
                best = (k, t);
            }
        }
        let (primary, tl) = best;
        let phase = &self.phases[primary];
        if tl.is_nan() || tl <= 0.0 || !tl.is_finite() {
            return Err(ModelError::NonPhysicalLiquidus {
                phase: phase.name.clone(),
                value: tl,
            });
        }
        let liquidus_flags: Vec<String> = phase
            .domain
            .violations(c)
            .into_iter()
            .map(|v| format!("outside model validity of the {} liquidus: {v}", phase.name))
            .collect();
        let tg = isokom(&viscosity, fixpoints::GLASS_TRANSITION, "glass transition")?;
        Ok(Properties {
            viscosity,
            liquidus: Kelvin(tl),
            primary_phase: primary,
            melting_temperature: isokom(&viscosity, fixpoints::MELTING, "melting temperature")?,
            working_point: isokom(&viscosity, fixpoints::WORKING, "working point")?,
            softening_point: isokom(&viscosity, fixpoints::SOFTENING, "softening point")?,
            glass_transition: tg,
            strain_point: isokom(&viscosity, fixpoints::STRAIN, "strain point")?,
            fragility: viscosity.fragility()?,
            reduced_glass_transition: tg.0 / tl,
            viscosity_flags,
            liquidus_flags,
        })
    }

    /// The melt (primary phase) for the kinetics.
    ///
    /// # Errors
    /// Crystal data or liquidus that the kinetics refuse.
    pub fn melt(&self, props: &Properties) -> Result<Melt, KineticsError> {
        let p = &self.phases[props.primary_phase];
        Melt::new(
            props.viscosity,
            props.liquidus,
            p.enthalpy_of_fusion_j_per_mol,
            p.molar_volume_m3_per_mol,
            Interface::TurnbullAlpha(p.turnbull_alpha),
            p.growth,
        )
    }

    /// Whether every phase's kinetic factor was calibrated against a measurement.
    pub fn kinetics_calibrated(&self, primary: usize) -> bool {
        self.phases[primary].calibrated_against.is_some()
    }

    /// The same set with another viscosity model.
    pub fn with_viscosity(mut self, v: ViscosityModel) -> Self {
        self.viscosity = v;
        self
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn mixture_model_terms() {
        let mut m = MixtureModel::constant(1.0);
        m.basis = FractionBasis::MolPercent;
        m.linear[Oxide::SiO2.index()] = 2.0;
        m.pairs
            .push((Oxide::SiO2.index(), Oxide::Na2O.index(), 0.5));
        let mut g = [0.0; N_OXIDES];
        g[Oxide::Na2O.index()] = 1.0;
        g[Oxide::K2O.index()] = 1.0;
        m.products.push(ProductTerm {
            coefficient: -1.0,
            groups: vec![g],
        });
        let c = Composition::from_mol_percent(&[(Oxide::SiO2, 75.0), (Oxide::Na2O, 25.0)]).unwrap();
        // 1 + 2·75 + 0.5·75·25 − 25 = 1063.5, by hand.
        assert!((m.eval(c.fractions()) - 1063.5).abs() < 1e-9);
    }
}
