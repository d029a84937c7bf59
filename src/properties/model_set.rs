//! A model set: one viscosity model, the liquidus surface and crystal data of
//! every phase that can appear, and their provenance. [`ModelSet::properties`]
//! turns a composition into the properties the kinetics need.
//!
//! The liquidus is the maximum over the phases' liquidus surfaces; the phase
//! that gives it is the primary phase (docs/science.md, "Liquidus").
//!
//! References
//! - D. Turnbull, "Under what conditions can a glass be formed?", Contemp.
//!   Phys. 10 (1969) 473–488, doi:10.1080/00107516908204405 (T_g/T_L).

use super::crystal::GrowthMode;
use super::fit::{FitRecord, KineticsFitRecord};
use super::liquidus::{LiquidusSurface, PhaseLiquidus};
use super::mixture::Domain;
use super::viscosity::{fixpoints, ViscosityCurve, ViscosityError, ViscosityModel};
use crate::composition::Composition;
use crate::error::Diagnostic;
use crate::units::{Kelvin, Log10PaS};

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
    /// Standard error of α where a fit gave one.
    pub turnbull_alpha_sd: Option<f64>,
    /// What α was calibrated against, if it was.
    pub calibrated_against: Option<String>,
    /// ΔC_p = C_p(liquid) − C_p(crystal) near T_m, J/(mol K), where known.
    pub heat_capacity_change_j_per_mol_k: Option<f64>,
    /// Where the phase starts to form, as a function of composition.
    pub liquidus: LiquidusSurface,
    /// Where the liquidus surface is meant to hold (mol%).
    pub domain: Domain,
    /// How the liquidus surface was fitted, with its covariance, if it was.
    pub liquidus_fit: Option<FitRecord>,
}

impl Phase {
    /// This phase's liquidus at a composition (clipped at its melting point).
    pub fn liquidus_at(&self, c: &Composition) -> PhaseLiquidus {
        self.liquidus.at(
            c.fractions(),
            self.melting_point.0,
            self.enthalpy_of_fusion_j_per_mol,
        )
    }
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
    /// What was fitted to which data, one line per fit, oldest first.
    pub fitted: Vec<String>,
}

/// Viscosity + liquidus surfaces + crystal data: everything composition → melt.
#[derive(Debug, Clone, PartialEq)]
pub struct ModelSet {
    pub about: About,
    pub viscosity: ViscosityModel,
    pub phases: Vec<Phase>,
    /// The joint fit of the phases' α (their covariance), if there was one.
    pub kinetics_fit: Option<KineticsFitRecord>,
    /// The viscosity that defines the melting temperature, Pa·s: 10 Pa·s
    /// ([`fixpoints::MELTING`], common practice) unless a screen config's
    /// `[furnace] melting_viscosity_pa_s` sets another.
    pub melting_viscosity_pa_s: f64,
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
    Viscosity(#[from] ViscosityError),
}

impl Diagnostic for ModelError {}

/// Predicted properties of one composition.
#[derive(Debug, Clone, PartialEq)]
pub struct Properties {
    pub viscosity: ViscosityCurve,
    /// The highest of the phases' liquidus temperatures.
    pub liquidus: Kelvin,
    /// Index into [`ModelSet::phases`] of the phase with the highest liquidus.
    pub primary_phase: usize,
    /// Every phase's liquidus, in the model set's order.
    pub liquidus_by_phase: Vec<PhaseLiquidus>,
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
        let by_phase: Vec<PhaseLiquidus> = self.phases.iter().map(|p| p.liquidus_at(c)).collect();
        let mut best = (0, f64::NEG_INFINITY);
        for (k, p) in by_phase.iter().enumerate() {
            if p.liquidus_k.is_nan() {
                return Err(ModelError::NonPhysicalLiquidus {
                    phase: self.phases[k].name.clone(),
                    value: p.liquidus_k,
                });
            }
            if p.liquidus_k > best.1 {
                best = (k, p.liquidus_k);
            }
        }
        let (primary, tl) = best;
        let phase = &self.phases[primary];
        if tl <= 0.0 || !tl.is_finite() {
            return Err(ModelError::NonPhysicalLiquidus {
                phase: phase.name.clone(),
                value: tl,
            });
        }
        let tg = isokom(&viscosity, fixpoints::GLASS_TRANSITION, "glass transition")?;
        let mut liquidus_flags: Vec<String> = phase
            .domain
            .violations(c)
            .into_iter()
            .map(|v| format!("outside model validity of the {} liquidus: {v}", phase.name))
            .collect();
        for (p, l) in self.phases.iter().zip(&by_phase) {
            if l.clipped && l.liquidus_k > tg.0 {
                liquidus_flags.push(format!(
                    "the {} liquidus surface gives {:.0} K, above the phase's melting point {:.0} K: clipped there",
                    p.name, l.surface_k, l.liquidus_k
                ));
            }
        }
        Ok(Properties {
            viscosity,
            liquidus: Kelvin(tl),
            primary_phase: primary,
            melting_temperature: isokom(
                &viscosity,
                self.melting_log_viscosity(),
                "melting temperature",
            )?,
            working_point: isokom(&viscosity, fixpoints::WORKING, "working point")?,
            softening_point: isokom(&viscosity, fixpoints::SOFTENING, "softening point")?,
            glass_transition: tg,
            strain_point: isokom(&viscosity, fixpoints::STRAIN, "strain point")?,
            fragility: viscosity.fragility()?,
            reduced_glass_transition: tg.0 / tl,
            liquidus_by_phase: by_phase,
            viscosity_flags,
            liquidus_flags,
        })
    }

    /// Whether every phase's kinetic factor was calibrated against a measurement.
    pub fn kinetics_calibrated(&self, primary: usize) -> bool {
        self.phases[primary].calibrated_against.is_some()
    }

    /// The viscosity that defines the melting temperature, log10(η / Pa·s).
    pub fn melting_log_viscosity(&self) -> f64 {
        self.melting_viscosity_pa_s.log10()
    }

    /// The same set with another viscosity model.
    pub fn with_viscosity(mut self, v: ViscosityModel) -> Self {
        self.viscosity = v;
        self
    }
}
