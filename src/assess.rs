//! The whole chain for one candidate: composition → properties → melt →
//! kinetics → an [`Evaluation`] with every number a user reads, in SI and in the
//! units of the trade (°C, K/min, mm), plus the warnings that qualify them.
//!
//! No I/O: the CLI prints an [`Evaluation`], the table mode writes many. The
//! result carries the melt it was computed for, so pictures and reports can
//! draw its curves without running the chain again.

use crate::composition::{Composition, Oxide};
use crate::error::{Diagnostic, Error};
use crate::kinetics::{
    DrivingForce, KineticOptions, KineticSummary, Kinetics, KineticsError, Melt,
};
use crate::properties::{GrowthMode, Interface, ModelError, ModelSet, Properties};
use crate::units::{Kelvin, KelvinPerSecond};
use std::collections::BTreeMap;

/// The cost of a glass per kilogram, in the currency of a price list. The
/// screen sees costs only through this trait, so it does not depend on how
/// they are computed (the least-cost batch of `batch` is one way).
pub trait GlassCost: Send + Sync + std::fmt::Debug {
    /// Cost per kg of glass of this composition.
    ///
    /// # Errors
    /// No batch can make the glass (the message says why).
    fn cost_per_kg_glass(&self, glass: &Composition) -> Result<f64, Error>;
}

/// Thermal diffusivity of a silicate melt used when none is given, m²/s
/// (typical 4–8 × 10⁻⁷ m²/s; from memory).
pub const DEFAULT_MELT_DIFFUSIVITY_M2_PER_S: f64 = 5e-7;
/// Quench-surface temperature used when none is given: a room-temperature plate.
pub const DEFAULT_QUENCH_SURFACE: Kelvin = Kelvin(298.15);

/// A slab quench: the plate temperature and the melt's thermal diffusivity.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct SlabQuench {
    pub surface: Kelvin,
    pub diffusivity_m2_per_s: f64,
}

impl Default for SlabQuench {
    fn default() -> Self {
        SlabQuench {
            surface: DEFAULT_QUENCH_SURFACE,
            diffusivity_m2_per_s: DEFAULT_MELT_DIFFUSIVITY_M2_PER_S,
        }
    }
}

/// How the kinetic factor was (or was not) tied to a measurement.
#[derive(Debug, Clone, PartialEq)]
pub enum Calibration {
    /// α as given, not tied to a measurement.
    None,
    /// α as given, calibrated earlier against what the string says.
    Given(String),
    /// Solve α so the model reproduces a measured critical cooling rate.
    ToCriticalRate(KelvinPerSecond),
    /// Solve α so the model reproduces a measured nose time (s).
    ToNoseTime(f64),
}

/// Everything quenchwise reports for one melt or composition.
#[derive(Debug, Clone, PartialEq, serde::Serialize)]
pub struct Evaluation {
    #[serde(skip_serializing_if = "Option::is_none")]
    pub composition_mol_pct: Option<BTreeMap<String, f64>>,
    #[serde(skip_serializing_if = "Option::is_none")]
    pub model_set: Option<String>,
    #[serde(skip_serializing_if = "Option::is_none")]
    pub primary_phase: Option<String>,
    pub liquidus_k: f64,
    pub liquidus_c: f64,
    pub glass_transition_k: f64,
    pub glass_transition_c: f64,
    #[serde(skip_serializing_if = "Option::is_none")]
    pub melting_temperature_k: Option<f64>,
    #[serde(skip_serializing_if = "Option::is_none")]
    pub working_point_k: Option<f64>,
    #[serde(skip_serializing_if = "Option::is_none")]
    pub softening_point_k: Option<f64>,
    #[serde(skip_serializing_if = "Option::is_none")]
    pub strain_point_k: Option<f64>,
    #[serde(skip_serializing_if = "Option::is_none")]
    pub reduced_glass_transition: Option<f64>,
    pub fragility: f64,
    pub freeze_temperature_k: f64,
    pub nose_temperature_k: f64,
    pub nose_temperature_c: f64,
    pub nose_time_s: f64,
    pub nose_rate_k_per_s: f64,
    pub nose_rate_k_per_min: f64,
    pub critical_rate_k_per_s: f64,
    pub critical_rate_k_per_min: f64,
    pub nose_nucleation_rate_per_m3_s: f64,
    pub nose_growth_rate_m_per_s: f64,
    pub turnbull_alpha: f64,
    pub interface_energy_j_per_m2: f64,
    pub kinetics_calibrated: bool,
    #[serde(skip_serializing_if = "Option::is_none")]
    pub calibrated_against: Option<String>,
    pub detectable_fraction: f64,
    pub driving_force: DrivingForce,
    pub heterogeneous_nuclei_per_m3: f64,
    #[serde(skip_serializing_if = "Option::is_none")]
    pub max_glassy_thickness_mm: Option<f64>,
    pub quench_surface_k: f64,
    pub melt_thermal_diffusivity_m2_per_s: f64,
    /// The viscosity prediction is an extrapolation (see warnings).
    pub viscosity_extrapolated: bool,
    /// The liquidus prediction is an extrapolation (see warnings).
    pub liquidus_extrapolated: bool,
    pub warnings: Vec<String>,
    /// The melt the kinetics were computed for (not written to files).
    #[serde(skip)]
    pub melt: Melt,
    /// The kinetic options in force (not written to files).
    #[serde(skip)]
    pub options: KineticOptions,
    /// The kinetic results as computed (not written to files).
    #[serde(skip)]
    pub kinetic_summary: KineticSummary,
}

impl Evaluation {
    /// The prepared kinetics of the evaluated melt, for curves and pictures.
    ///
    /// # Errors
    /// None in practice: the same melt and options were accepted before.
    pub fn kinetics(&self) -> Result<Kinetics, KineticsError> {
        Kinetics::new(&self.melt, &self.options)
    }
}

/// Why a candidate could not be evaluated.
#[derive(Debug, Clone, PartialEq, thiserror::Error)]
pub enum EvalError {
    #[error(transparent)]
    Model(#[from] ModelError),
    #[error(transparent)]
    Kinetics(#[from] KineticsError),
}

impl Diagnostic for EvalError {
    fn hint(&self) -> Option<String> {
        match self {
            EvalError::Model(e) => e.hint(),
            EvalError::Kinetics(e) => e.hint(),
        }
    }
}

/// The melt of a composition's primary phase, for the kinetics.
///
/// # Errors
/// Crystal data or a liquidus that the kinetics refuse.
pub fn primary_melt(models: &ModelSet, props: &Properties) -> Result<Melt, KineticsError> {
    let p = &models.phases[props.primary_phase];
    Melt::new(
        props.viscosity,
        props.liquidus,
        p.enthalpy_of_fusion_j_per_mol,
        p.molar_volume_m3_per_mol,
        Interface::TurnbullAlpha(p.turnbull_alpha),
        p.growth,
    )
}

fn calibrate(
    melt: &Melt,
    opts: &KineticOptions,
    cal: &Calibration,
) -> Result<(Melt, Option<String>), KineticsError> {
    Ok(match cal {
        Calibration::None => (*melt, None),
        Calibration::Given(s) => (*melt, Some(s.clone())),
        Calibration::ToCriticalRate(r) => (
            Kinetics::calibrate_to_critical_rate(melt, opts, *r)?,
            Some(format!("measured critical cooling rate {} K/s", r.0)),
        ),
        Calibration::ToNoseTime(t) => (
            Kinetics::calibrate_to_nose_time(melt, opts, *t)?,
            Some(format!("measured nose time {t} s")),
        ),
    })
}

fn kinetic_part(
    melt: &Melt,
    opts: &KineticOptions,
    slab: Option<SlabQuench>,
) -> Result<(KineticSummary, Option<f64>, Vec<String>), KineticsError> {
    let k = Kinetics::new(melt, opts)?;
    let s = k.analyse()?;
    let mut warnings = Vec::new();
    let thickness = match slab {
        Some(q) => match k.max_glassy_half_thickness_m(q.surface, q.diffusivity_m2_per_s) {
            Ok(h) => Some(2.0 * h * 1e3),
            Err(e) => {
                warnings.push(format!("glassy thickness not computed: {e}"));
                None
            }
        },
        None => None,
    };
    let js = melt.entropy_of_fusion_over_r();
    match melt.growth {
        GrowthMode::Normal if js > 4.0 => warnings.push(format!(
            "growth is 'normal' but ΔS_m/R = {js:.1} > 4 suggests screw-dislocation growth (Jackson)"
        )),
        GrowthMode::Screw if js < 2.0 => warnings.push(format!(
            "growth is 'screw' but ΔS_m/R = {js:.1} < 2 suggests normal growth (Jackson)"
        )),
        _ => {}
    }
    Ok((s, thickness, warnings))
}

fn base(
    s: &KineticSummary,
    melt: &Melt,
    opts: &KineticOptions,
    slab: Option<SlabQuench>,
    thickness: Option<f64>,
    calibrated_against: Option<String>,
) -> Evaluation {
    let q = slab.unwrap_or_default();
    Evaluation {
        composition_mol_pct: None,
        model_set: None,
        primary_phase: None,
        liquidus_k: s.liquidus.0,
        liquidus_c: s.liquidus.to_celsius().0,
        glass_transition_k: s.glass_transition.0,
        glass_transition_c: s.glass_transition.to_celsius().0,
        melting_temperature_k: None,
        working_point_k: None,
        softening_point_k: None,
        strain_point_k: None,
        reduced_glass_transition: None,
        fragility: melt.viscosity.fragility().unwrap_or(f64::NAN),
        freeze_temperature_k: s.freeze_temperature.0,
        nose_temperature_k: s.nose_temperature.0,
        nose_temperature_c: s.nose_temperature.to_celsius().0,
        nose_time_s: s.nose_time_s,
        nose_rate_k_per_s: s.nose_rate.0,
        nose_rate_k_per_min: s.nose_rate.per_minute(),
        critical_rate_k_per_s: s.critical_rate.0,
        critical_rate_k_per_min: s.critical_rate.per_minute(),
        nose_nucleation_rate_per_m3_s: s.nose_nucleation_per_m3_s,
        nose_growth_rate_m_per_s: s.nose_growth_m_per_s,
        turnbull_alpha: s.turnbull_alpha,
        interface_energy_j_per_m2: s.interface_energy_j_per_m2,
        kinetics_calibrated: calibrated_against.is_some(),
        calibrated_against,
        detectable_fraction: opts.detectable_fraction,
        driving_force: opts.driving_force,
        heterogeneous_nuclei_per_m3: opts.heterogeneous_nuclei_per_m3,
        max_glassy_thickness_mm: thickness,
        quench_surface_k: q.surface.0,
        melt_thermal_diffusivity_m2_per_s: q.diffusivity_m2_per_s,
        viscosity_extrapolated: false,
        liquidus_extrapolated: false,
        warnings: Vec::new(),
        melt: *melt,
        options: *opts,
        kinetic_summary: *s,
    }
}

const UNCALIBRATED: &str =
    "kinetic factor (Turnbull alpha) not calibrated against a measurement: absolute rates may be off by decades";

/// Evaluate a melt given directly (a melt card).
///
/// # Errors
/// The kinetics refuse the melt (e.g. a nose below T_g), or calibration fails.
pub fn evaluate_melt(
    melt: &Melt,
    opts: &KineticOptions,
    slab: Option<SlabQuench>,
    cal: &Calibration,
) -> Result<Evaluation, KineticsError> {
    let (melt, calibrated_against) = calibrate(melt, opts, cal)?;
    let (s, thickness, warnings) = kinetic_part(&melt, opts, slab)?;
    let mut e = base(&s, &melt, opts, slab, thickness, calibrated_against);
    if !e.kinetics_calibrated {
        e.warnings.push(UNCALIBRATED.to_string());
    }
    e.warnings.extend(warnings);
    Ok(e)
}

/// Evaluate a composition with a model set.
///
/// # Errors
/// The models give non-physical values, or the kinetics refuse the melt.
pub fn evaluate_composition(
    models: &ModelSet,
    comp: &Composition,
    opts: &KineticOptions,
    slab: Option<SlabQuench>,
    cal: &Calibration,
) -> Result<Evaluation, EvalError> {
    let props: Properties = models.properties(comp)?;
    let melt = primary_melt(models, &props)?;
    let phase = &models.phases[props.primary_phase];
    let cal = match (cal, &phase.calibrated_against) {
        (Calibration::None, Some(s)) => Calibration::Given(s.clone()),
        (c, _) => c.clone(),
    };
    let (melt, calibrated_against) = calibrate(&melt, opts, &cal)?;
    let (s, thickness, kin_warnings) = kinetic_part(&melt, opts, slab)?;
    let mut e = base(&s, &melt, opts, slab, thickness, calibrated_against);
    let pct = comp.mol_percent();
    e.composition_mol_pct = Some(
        Oxide::ALL
            .iter()
            .filter(|o| pct[o.index()] > 0.0)
            .map(|o| (o.formula().to_string(), pct[o.index()]))
            .collect(),
    );
    e.model_set = Some(models.about.name.clone());
    e.primary_phase = Some(phase.name.clone());
    e.melting_temperature_k = Some(props.melting_temperature.0);
    e.working_point_k = Some(props.working_point.0);
    e.softening_point_k = Some(props.softening_point.0);
    e.strain_point_k = Some(props.strain_point.0);
    e.reduced_glass_transition = Some(props.reduced_glass_transition);
    e.fragility = props.fragility;
    e.viscosity_extrapolated = !props.viscosity_flags.is_empty();
    e.liquidus_extrapolated = !props.liquidus_flags.is_empty();
    if let Some(n) = comp.normalisation_note() {
        e.warnings.push(n);
    }
    e.warnings.extend(props.viscosity_flags.iter().cloned());
    e.warnings.extend(props.liquidus_flags.iter().cloned());
    if models.about.invented {
        e.warnings.push(format!(
            "model set '{}' has invented coefficients: for demonstration, not for decisions",
            models.about.name
        ));
    }
    if !e.kinetics_calibrated {
        e.warnings.push(UNCALIBRATED.to_string());
    }
    e.warnings.extend(kin_warnings);
    Ok(e)
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::files::model_set::{parse_model_set, DEMO_MODELS};
    use crate::files::source::Source;

    #[test]
    fn demo_soda_lime_evaluates() {
        let m = parse_model_set(&Source::new("demo", DEMO_MODELS)).unwrap();
        let c = Composition::parse(
            "SiO2=72 Na2O=14 CaO=10 Al2O3=4",
            crate::composition::Basis::MolPercent,
            2.0,
        )
        .unwrap();
        let e = evaluate_composition(
            &m,
            &c,
            &KineticOptions::default(),
            Some(SlabQuench::default()),
            &Calibration::None,
        )
        .unwrap();
        assert!(e.nose_rate_k_per_s > e.critical_rate_k_per_s);
        assert!(!e.kinetics_calibrated);
    }
}
