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
    plausible, Calibrated, CrystalPhase, DrivingForce, KineticOptions, KineticSummary, Kinetics,
    KineticsError, Melt, Transport,
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

/// Beyond these the model's numbers are extrapolations no experiment in a
/// glass lab can check (common practice for what a lab can verify): a TTT nose
/// later than a day, a glassy slab thicker than 100 mm, a critical rate below
/// 1e-3 K/s (3.6 K/h, slower than any DSC cooling run).
pub const VOUCH_NOSE_TIME_S: f64 = 86_400.0;
/// See [`VOUCH_NOSE_TIME_S`].
pub const VOUCH_THICKNESS_MM: f64 = 100.0;
/// See [`VOUCH_NOSE_TIME_S`].
pub const VOUCH_CRITICAL_RATE_K_PER_S: f64 = 1e-3;

/// Everything quenchwise reports for one melt or composition.
#[derive(Debug, Clone, PartialEq, serde::Serialize)]
pub struct Evaluation {
    #[serde(skip_serializing_if = "Option::is_none")]
    pub composition_mol_pct: Option<BTreeMap<String, f64>>,
    #[serde(skip_serializing_if = "Option::is_none")]
    pub model_set: Option<String>,
    /// The phase with the highest liquidus (the first to appear on cooling).
    #[serde(skip_serializing_if = "Option::is_none")]
    pub primary_phase: Option<String>,
    /// The phase with the largest share of the crystallised volume at R_c.
    pub limiting_phase: String,
    pub liquidus_k: f64,
    pub liquidus_c: f64,
    /// Every phase's liquidus, K (clipped at its melting point).
    pub liquidus_by_phase_k: BTreeMap<String, f64>,
    pub glass_transition_k: f64,
    pub glass_transition_c: f64,
    #[serde(skip_serializing_if = "Option::is_none")]
    pub melting_temperature_k: Option<f64>,
    #[serde(skip_serializing_if = "Option::is_none")]
    pub melting_temperature_c: Option<f64>,
    /// The viscosity that defines the melting temperature, Pa·s (10 Pa·s
    /// unless a screen config sets `[furnace] melting_viscosity_pa_s`).
    #[serde(skip_serializing_if = "Option::is_none")]
    pub melting_viscosity_pa_s: Option<f64>,
    #[serde(skip_serializing_if = "Option::is_none")]
    pub working_point_k: Option<f64>,
    #[serde(skip_serializing_if = "Option::is_none")]
    pub working_point_c: Option<f64>,
    #[serde(skip_serializing_if = "Option::is_none")]
    pub softening_point_k: Option<f64>,
    #[serde(skip_serializing_if = "Option::is_none")]
    pub softening_point_c: Option<f64>,
    #[serde(skip_serializing_if = "Option::is_none")]
    pub strain_point_k: Option<f64>,
    #[serde(skip_serializing_if = "Option::is_none")]
    pub strain_point_c: Option<f64>,
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
    /// The critical rate each phase alone would need, K/s.
    pub critical_rate_by_phase_k_per_s: BTreeMap<String, f64>,
    pub nose_nucleation_rate_per_m3_s: f64,
    pub nose_growth_rate_m_per_s: f64,
    /// α of the limiting phase.
    pub turnbull_alpha: f64,
    /// σ of the limiting phase, J/m².
    pub interface_energy_j_per_m2: f64,
    /// The limiting phase's kinetic factor is tied to a measurement.
    pub kinetics_calibrated: bool,
    #[serde(skip_serializing_if = "Option::is_none")]
    pub calibrated_against: Option<String>,
    pub detectable_fraction: f64,
    pub driving_force: DrivingForce,
    /// Pre-existing nuclei of each phase, per m³.
    pub heterogeneous_nuclei_per_m3: f64,
    /// Contact angle of nucleation on the sample's walls (180: none), degrees.
    pub wall_contact_angle_deg: f64,
    /// Thickness of the sample whose walls nucleate, m.
    pub sample_thickness_m: f64,
    /// How diffusion follows viscosity near T_g.
    pub transport: String,
    #[serde(skip_serializing_if = "Option::is_none")]
    pub max_glassy_thickness_mm: Option<f64>,
    pub quench_surface_k: f64,
    pub melt_thermal_diffusivity_m2_per_s: f64,
    /// The viscosity prediction is an extrapolation (see warnings).
    pub viscosity_extrapolated: bool,
    /// The liquidus prediction is an extrapolation (see warnings).
    pub liquidus_extrapolated: bool,
    /// R_c, the nose time and the glassy thickness are all within what the
    /// model can vouch for (see [`VOUCH_NOSE_TIME_S`]).
    pub vouched: bool,
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
    pub fn kinetics(&self) -> Result<Kinetics<'_>, KineticsError> {
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

/// The melt of a composition: its viscosity curve and every phase whose
/// liquidus lies above T_g (the others cannot crystallise from the liquid).
///
/// # Errors
/// Crystal data or a liquidus that the kinetics refuse.
pub fn composition_melt(models: &ModelSet, props: &Properties) -> Result<Melt, KineticsError> {
    let tg = props.glass_transition.0;
    let phases = models
        .phases
        .iter()
        .zip(&props.liquidus_by_phase)
        .filter(|(_, l)| l.liquidus_k > tg)
        .map(|(p, l)| CrystalPhase {
            name: p.name.clone(),
            liquidus: Kelvin(l.liquidus_k),
            enthalpy_of_fusion_j_per_mol: p.enthalpy_of_fusion_j_per_mol,
            molar_volume_m3_per_mol: p.molar_volume_m3_per_mol,
            interface: Interface::TurnbullAlpha(p.turnbull_alpha),
            growth: p.growth,
            heat_capacity_change_j_per_mol_k: p.heat_capacity_change_j_per_mol_k.unwrap_or(0.0),
            melting_point: Some(p.melting_point),
            nuclei_per_m3: None,
        })
        .collect();
    Melt::with_phases(props.viscosity, phases)
}

fn calibrate(
    melt: Melt,
    opts: &KineticOptions,
    cal: &Calibration,
) -> Result<(Melt, Option<String>), KineticsError> {
    let name = |c: &Calibrated| c.melt.phases[c.phase].name.clone();
    Ok(match cal {
        Calibration::None => (melt, None),
        Calibration::Given(s) => (melt, Some(s.clone())),
        Calibration::ToCriticalRate(r) => {
            let c = Kinetics::calibrate_to_critical_rate(&melt, opts, *r, None)?;
            let what = format!("measured critical cooling rate {} K/s ({})", r.0, name(&c));
            (c.melt, Some(what))
        }
        Calibration::ToNoseTime(t) => {
            let c = Kinetics::calibrate_to_nose_time(&melt, opts, *t, None)?;
            let what = format!("measured nose time {t} s ({})", name(&c));
            (c.melt, Some(what))
        }
    })
}

fn kinetic_part(
    melt: &Melt,
    opts: &KineticOptions,
    slab: Option<SlabQuench>,
) -> Result<(KineticSummary, Option<f64>, Vec<String>), KineticsError> {
    let k = Kinetics::new(melt, opts)?;
    // With a slab, its quadrature starts from the constant-rate panels.
    let (s, slab_half) = match slab {
        Some(q) => {
            let (s, h) = k.analyse_with_slab(q.surface, q.diffusivity_m2_per_s)?;
            (s, Some(h))
        }
        None => (k.analyse()?, None),
    };
    let mut warnings: Vec<String> = melt
        .implausible()
        .into_iter()
        .chain(opts.implausible())
        .chain(slab.and_then(|q| {
            plausible::check(
                None,
                "melt thermal diffusivity",
                q.diffusivity_m2_per_s,
                plausible::MELT_DIFFUSIVITY_M2_PER_S,
            )
        }))
        .map(|i| i.to_string())
        .collect();
    let thickness = match slab_half {
        Some(Ok(h)) => Some(2.0 * h * 1e3),
        Some(Err(e)) => {
            warnings.push(format!("glassy thickness not computed: {e}"));
            None
        }
        None => None,
    };
    for ps in &s.phases {
        let p = &melt.phases[ps.index];
        let js = p.entropy_of_fusion_over_r();
        let (at, what) = match p.melting_point {
            Some(_) => ("", "T_m"),
            None => (" (T_L standing for T_m)", "T_L"),
        };
        match p.growth {
            GrowthMode::Normal if js > 4.0 => warnings.push(format!(
                "{}: growth is 'normal' but ΔS_m/R = ΔH_m/(R {what}) = {js:.1} > 4 suggests screw-dislocation growth (Jackson){at}",
                p.name
            )),
            GrowthMode::Screw if js < 2.0 => warnings.push(format!(
                "{}: growth is 'screw' but ΔS_m/R = ΔH_m/(R {what}) = {js:.1} < 2 suggests normal growth (Jackson){at}",
                p.name
            )),
            _ => {}
        }
    }
    let td = opts.decoupling_ratio * s.glass_transition.0;
    if s.nose_temperature.0 < td {
        warnings.push(format!(
            "the TTT nose ({:.0} K) lies below {:.2} T_g = {:.0} K, where diffusion decouples from viscosity: {}",
            s.nose_temperature.0,
            opts.decoupling_ratio,
            td,
            match opts.transport {
                Transport::StokesEinstein => "Stokes–Einstein, used here, underestimates the rates there",
                Transport::Fractional { .. } => "the fractional Stokes–Einstein law used there is itself uncertain",
            }
        ));
    }
    Ok((s, thickness, warnings))
}

/// What the model cannot vouch for in an evaluation, as phrases (empty when
/// everything is within reach of an experiment).
fn beyond_vouching(e: &Evaluation) -> Vec<String> {
    let mut out = Vec::new();
    if e.nose_time_s > VOUCH_NOSE_TIME_S {
        // Beyond a century, digits past the second say nothing.
        let days = e.nose_time_s / 86_400.0;
        out.push(if days < 36_525.0 {
            format!("a nose time of {days:.1} days")
        } else {
            format!("a nose time of {days:.1e} days")
        });
    }
    if let Some(mm) = e.max_glassy_thickness_mm {
        if mm > VOUCH_THICKNESS_MM {
            out.push(if mm < 1e6 {
                format!("a glassy slab of {mm:.0} mm")
            } else {
                format!("a glassy slab of {mm:.1e} mm")
            });
        }
    }
    if e.critical_rate_k_per_s < VOUCH_CRITICAL_RATE_K_PER_S {
        out.push(format!(
            "a critical rate of {:.1e} K/s",
            e.critical_rate_k_per_s
        ));
    }
    out
}

/// A description of the transport law.
fn transport_text(opts: &KineticOptions) -> String {
    match opts.transport {
        Transport::StokesEinstein => "stokes_einstein".into(),
        Transport::Fractional { exponent } => format!(
            "fractional (D ∝ (T/η)^{exponent} below {} T_g)",
            opts.decoupling_ratio
        ),
    }
}

fn base(
    s: KineticSummary,
    melt: Melt,
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
        limiting_phase: s.limiting_phase().name.clone(),
        liquidus_k: s.liquidus.0,
        liquidus_c: s.liquidus.to_celsius().0,
        liquidus_by_phase_k: melt
            .phases
            .iter()
            .map(|p| (p.name.clone(), p.liquidus.0))
            .collect(),
        glass_transition_k: s.glass_transition.0,
        glass_transition_c: s.glass_transition.to_celsius().0,
        melting_temperature_k: None,
        melting_temperature_c: None,
        melting_viscosity_pa_s: None,
        working_point_k: None,
        working_point_c: None,
        softening_point_k: None,
        softening_point_c: None,
        strain_point_k: None,
        strain_point_c: None,
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
        critical_rate_by_phase_k_per_s: s
            .phases
            .iter()
            .map(|p| (p.name.clone(), p.critical_rate.0))
            .collect(),
        nose_nucleation_rate_per_m3_s: s.nose_nucleation_per_m3_s,
        nose_growth_rate_m_per_s: s.nose_growth_m_per_s,
        turnbull_alpha: s.turnbull_alpha,
        interface_energy_j_per_m2: s.interface_energy_j_per_m2,
        kinetics_calibrated: calibrated_against.is_some(),
        calibrated_against,
        detectable_fraction: opts.detectable_fraction,
        driving_force: opts.driving_force,
        heterogeneous_nuclei_per_m3: opts.heterogeneous_nuclei_per_m3,
        wall_contact_angle_deg: opts.contact_angle_deg,
        sample_thickness_m: opts.sample_thickness_m,
        transport: transport_text(opts),
        max_glassy_thickness_mm: thickness,
        quench_surface_k: q.surface.0,
        melt_thermal_diffusivity_m2_per_s: q.diffusivity_m2_per_s,
        viscosity_extrapolated: false,
        liquidus_extrapolated: false,
        vouched: true,
        warnings: Vec::new(),
        melt,
        options: *opts,
        kinetic_summary: s,
    }
}

/// Add the glassy-slab estimate to an evaluation made without it, and mark
/// again what the model cannot vouch for.
///
/// # Errors
/// The slab cannot be computed (e.g. a quench surface above the freeze temperature).
pub fn add_glassy_thickness(e: &mut Evaluation, slab: SlabQuench) -> Result<(), KineticsError> {
    let k = e.kinetics()?;
    let h = k.max_glassy_half_thickness_m(slab.surface, slab.diffusivity_m2_per_s)?;
    e.max_glassy_thickness_mm = Some(2.0 * h * 1e3);
    e.quench_surface_k = slab.surface.0;
    e.melt_thermal_diffusivity_m2_per_s = slab.diffusivity_m2_per_s;
    e.warnings.retain(|w| !w.starts_with(BEYOND_VOUCHING));
    vouch(e);
    Ok(())
}

const BEYOND_VOUCHING: &str = "beyond what the model can vouch for";

/// Mark what the model cannot vouch for.
fn vouch(e: &mut Evaluation) {
    let beyond = beyond_vouching(e);
    e.vouched = beyond.is_empty();
    if !e.vouched {
        e.warnings.push(format!(
            "{BEYOND_VOUCHING}: {} (a real melt would crystallise from defects or impurities long before)",
            beyond.join(", ")
        ));
    }
}

impl Evaluation {
    /// Every number the evaluation reports (what it serialises to), with
    /// its key: a field's name, or "map.entry" for the per-phase maps and
    /// the composition. `tests` checks the list against the serialised form.
    pub fn numbers(&self) -> impl Iterator<Item = (NumberKey<'_>, f64)> + '_ {
        let one = |k: &'static str, v: f64| (NumberKey::Field(k), v);
        let opt = |k: &'static str, v: Option<f64>| v.map(|v| (NumberKey::Field(k), v));
        fn map<'a>(
            k: &'static str,
            m: &'a BTreeMap<String, f64>,
        ) -> impl Iterator<Item = (NumberKey<'a>, f64)> + 'a {
            m.iter()
                .map(move |(n, v)| (NumberKey::Entry(k, n.as_str()), *v))
        }
        [
            one("liquidus_k", self.liquidus_k),
            one("liquidus_c", self.liquidus_c),
            one("glass_transition_k", self.glass_transition_k),
            one("glass_transition_c", self.glass_transition_c),
            one("fragility", self.fragility),
            one("freeze_temperature_k", self.freeze_temperature_k),
            one("nose_temperature_k", self.nose_temperature_k),
            one("nose_temperature_c", self.nose_temperature_c),
            one("nose_time_s", self.nose_time_s),
            one("nose_rate_k_per_s", self.nose_rate_k_per_s),
            one("nose_rate_k_per_min", self.nose_rate_k_per_min),
            one("critical_rate_k_per_s", self.critical_rate_k_per_s),
            one("critical_rate_k_per_min", self.critical_rate_k_per_min),
            one(
                "nose_nucleation_rate_per_m3_s",
                self.nose_nucleation_rate_per_m3_s,
            ),
            one("nose_growth_rate_m_per_s", self.nose_growth_rate_m_per_s),
            one("turnbull_alpha", self.turnbull_alpha),
            one("interface_energy_j_per_m2", self.interface_energy_j_per_m2),
            one("detectable_fraction", self.detectable_fraction),
            one(
                "heterogeneous_nuclei_per_m3",
                self.heterogeneous_nuclei_per_m3,
            ),
            one("wall_contact_angle_deg", self.wall_contact_angle_deg),
            one("sample_thickness_m", self.sample_thickness_m),
            one("quench_surface_k", self.quench_surface_k),
            one(
                "melt_thermal_diffusivity_m2_per_s",
                self.melt_thermal_diffusivity_m2_per_s,
            ),
        ]
        .into_iter()
        .chain(
            [
                opt("melting_temperature_k", self.melting_temperature_k),
                opt("melting_temperature_c", self.melting_temperature_c),
                opt("melting_viscosity_pa_s", self.melting_viscosity_pa_s),
                opt("working_point_k", self.working_point_k),
                opt("working_point_c", self.working_point_c),
                opt("softening_point_k", self.softening_point_k),
                opt("softening_point_c", self.softening_point_c),
                opt("strain_point_k", self.strain_point_k),
                opt("strain_point_c", self.strain_point_c),
                opt("reduced_glass_transition", self.reduced_glass_transition),
                opt("max_glassy_thickness_mm", self.max_glassy_thickness_mm),
            ]
            .into_iter()
            .flatten(),
        )
        .chain(map("liquidus_by_phase_k", &self.liquidus_by_phase_k))
        .chain(map(
            "critical_rate_by_phase_k_per_s",
            &self.critical_rate_by_phase_k_per_s,
        ))
        .chain(
            self.composition_mol_pct
                .iter()
                .flat_map(move |m| map("composition_mol_pct", m)),
        )
    }
}

/// The key of a number of an [`Evaluation`].
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum NumberKey<'a> {
    /// A field.
    Field(&'static str),
    /// An entry of a map field (a phase, an oxide).
    Entry(&'static str, &'a str),
}

impl std::fmt::Display for NumberKey<'_> {
    fn fmt(&self, f: &mut std::fmt::Formatter<'_>) -> std::fmt::Result {
        match self {
            NumberKey::Field(k) => f.write_str(k),
            NumberKey::Entry(k, n) => write!(f, "{k}.{n}"),
        }
    }
}

/// Every number of an evaluation is finite.
///
/// # Errors
/// The first key whose value is not a finite number.
fn ensure_finite(e: &Evaluation) -> Result<(), KineticsError> {
    match e.numbers().find(|(_, v)| !v.is_finite()) {
        Some((key, _)) => Err(KineticsError::NotFiniteResult {
            key: key.to_string(),
        }),
        None => Ok(()),
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
    let (melt, calibrated_against) = calibrate(melt.clone(), opts, cal)?;
    let (s, thickness, warnings) = kinetic_part(&melt, opts, slab)?;
    let mut e = base(s, melt, opts, slab, thickness, calibrated_against);
    if !e.kinetics_calibrated {
        e.warnings.push(UNCALIBRATED.to_string());
    }
    e.warnings.extend(warnings);
    vouch(&mut e);
    ensure_finite(&e)?;
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
    let melt = composition_melt(models, &props)?;
    let phase = &models.phases[props.primary_phase];
    let (melt, calibrated_against) = calibrate(melt, opts, cal)?;
    let (s, thickness, kin_warnings) = kinetic_part(&melt, opts, slab)?;
    // Without a calibration asked for, the limiting phase's own record counts.
    let calibrated_against = calibrated_against.or_else(|| {
        let limiting = &melt.phases[s.limiting_phase().index].name;
        models
            .phases
            .iter()
            .find(|p| &p.name == limiting)
            .and_then(|p| p.calibrated_against.clone())
    });
    let mut e = base(s, melt, opts, slab, thickness, calibrated_against);
    e.liquidus_by_phase_k = models
        .phases
        .iter()
        .zip(&props.liquidus_by_phase)
        .map(|(p, l)| (p.name.clone(), l.liquidus_k))
        .collect();
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
    // Every fixpoint in °C too (the config and the lab speak °C).
    e.melting_temperature_c = Some(props.melting_temperature.to_celsius().0);
    e.melting_viscosity_pa_s = Some(models.melting_viscosity_pa_s);
    e.working_point_c = Some(props.working_point.to_celsius().0);
    e.softening_point_c = Some(props.softening_point.to_celsius().0);
    e.strain_point_c = Some(props.strain_point.to_celsius().0);
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
    if let Some(k) = &models.kinetics_fit {
        let (fitted, now) = (
            k.heterogeneous_nuclei_per_m3,
            opts.heterogeneous_nuclei_per_m3,
        );
        if (fitted - now).abs() > 1e-6 * fitted.abs().max(now.abs()) {
            e.warnings.push(format!(
                "the α of model set '{}' were fitted with {fitted:e} pre-existing nuclei per m³, this evaluation counts {now:e}: R_c is not the calibrated one",
                models.about.name
            ));
        }
    }
    e.warnings.extend(kin_warnings);
    vouch(&mut e);
    ensure_finite(&e)?;
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
        // By hand from the demo file's coefficients: the wollastonite surface is
        // 1296 − 4·72 − 10·14 + 40·10 − 6·4 = 1244 K, the highest of the five.
        assert!((e.liquidus_k - 1244.0).abs() < 1e-9, "{}", e.liquidus_k);
        assert_eq!(e.primary_phase.as_deref(), Some("wollastonite"));
        // VFT by hand (mole fractions): B = 0.72·6464 − 0.14·3840 − 0.10·2402
        // + 0.04·8847 = 4230.16 K, C = 0.72·539 − 0.14·257 + 0.10·1497 + 0.04·890
        // = 537.40 K, A = −2.45; η = 10 Pa·s at C + B/(1 − A) = 1763.533 K.
        let tm = e.melting_temperature_k.unwrap();
        assert!((tm - 1763.5333).abs() < 1e-3, "{tm}");
        // The phases add as fourth powers (no nuclei), and the limiting phase
        // has the largest own rate.
        let sum: f64 = e
            .critical_rate_by_phase_k_per_s
            .values()
            .map(|r| r.powi(4))
            .sum();
        assert!((e.critical_rate_k_per_s / sum.powf(0.25) - 1.0).abs() < 1e-12);
        let fastest = e
            .critical_rate_by_phase_k_per_s
            .iter()
            .max_by(|a, b| a.1.total_cmp(b.1))
            .unwrap()
            .0;
        assert_eq!(&e.limiting_phase, fastest);
        assert!(e.nose_rate_k_per_s > e.critical_rate_k_per_s);
        assert!(!e.kinetics_calibrated);
    }

    /// The numbers `ensure_finite` checks are exactly the numbers an
    /// evaluation serialises to (every optional one present here).
    #[test]
    fn numbers_are_the_serialised_numbers() {
        fn walk(v: &serde_json::Value, key: &str, out: &mut Vec<(String, f64)>) {
            match v {
                serde_json::Value::Number(n) => out.push((key.to_string(), n.as_f64().unwrap())),
                serde_json::Value::Object(m) => {
                    for (k, v) in m {
                        let k = if key.is_empty() {
                            k.clone()
                        } else {
                            format!("{key}.{k}")
                        };
                        walk(v, &k, out);
                    }
                }
                _ => {}
            }
        }
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
        assert!(e.max_glassy_thickness_mm.is_some() && e.strain_point_k.is_some());
        let mut json = Vec::new();
        walk(&serde_json::to_value(&e).unwrap(), "", &mut json);
        let mut typed: Vec<(String, f64)> = e.numbers().map(|(k, v)| (k.to_string(), v)).collect();
        json.sort_by(|a, b| a.0.cmp(&b.0));
        typed.sort_by(|a, b| a.0.cmp(&b.0));
        assert_eq!(json, typed);
    }
}
