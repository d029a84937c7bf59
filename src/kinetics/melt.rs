//! The melt the kinetics work on (a viscosity curve and every crystal phase
//! that can form, each with its own liquidus and crystal data) and the
//! options of a kinetic calculation (detectable fraction, driving force,
//! nucleation on walls and pre-existing nuclei, transport near T_g), all
//! validated on construction. See docs/science.md, "Nucleation and growth".

use super::KineticsError;
use crate::error::{finite, positive, ValueError};
use crate::properties::{GrowthMode, Interface, ViscosityCurve, GLASS_TRANSITION_LOG_VISCOSITY};
use crate::units::{Kelvin, AVOGADRO, GAS_CONSTANT};

/// Viscosity at which kinetics are taken as frozen by default, log10(η/Pa·s).
pub const DEFAULT_FREEZE_LOG_VISCOSITY: f64 = 15.0;
/// Detectable crystallised volume fraction (Uhlmann 1972).
pub const DEFAULT_DETECTABLE_FRACTION: f64 = 1e-6;
/// Thickness of the sample whose walls nucleate, m: a 10 mm crucible melt or
/// cast block (the size the trade calls "bulk"; common practice).
pub const DEFAULT_SAMPLE_THICKNESS_M: f64 = 0.01;
/// Below this multiple of T_g diffusion decouples from viscosity (Nascimento &
/// Zanotto 2006; see docs/science.md, "Transport near the glass transition").
pub const DEFAULT_DECOUPLING_RATIO: f64 = 1.2;

/// Form of the thermodynamic driving force for crystallisation.
#[derive(Debug, Clone, Copy, PartialEq, Eq, serde::Serialize, serde::Deserialize)]
#[serde(rename_all = "snake_case")]
pub enum DrivingForce {
    /// Turnbull: ΔG = ΔH_m ΔT/T_L − ΔC_p [ΔT − T ln(T_L/T)], ΔT = T_L − T;
    /// with no ΔC_p given, the linear ΔH_m ΔT/T_L.
    Turnbull,
    /// Hoffman: ΔG = ΔH_m (T_L − T) T / T_L².
    Hoffman,
}

/// One crystal phase that can form in the melt, in SI units.
#[derive(Debug, Clone, PartialEq, serde::Serialize)]
pub struct CrystalPhase {
    pub name: String,
    /// Where this phase starts to crystallise on cooling (its liquidus in this melt).
    pub liquidus: Kelvin,
    /// ΔH_m in J per mol of formula units.
    pub enthalpy_of_fusion_j_per_mol: f64,
    /// V_m in m³ per mol of formula units.
    pub molar_volume_m3_per_mol: f64,
    pub interface: Interface,
    pub growth: GrowthMode,
    /// ΔC_p = C_p(liquid) − C_p(crystal) in J/(mol K), where known (0: not used).
    pub heat_capacity_change_j_per_mol_k: f64,
    /// Melting point of the pure phase, where known (Jackson's criterion uses it).
    pub melting_point: Option<Kelvin>,
    /// Pre-existing nuclei of this phase per m³, replacing the options' value.
    pub nuclei_per_m3: Option<f64>,
}

impl CrystalPhase {
    /// A phase with no ΔC_p, melting point or nuclei of its own.
    pub fn new(
        name: impl Into<String>,
        liquidus: Kelvin,
        enthalpy_of_fusion_j_per_mol: f64,
        molar_volume_m3_per_mol: f64,
        interface: Interface,
        growth: GrowthMode,
    ) -> Self {
        CrystalPhase {
            name: name.into(),
            liquidus,
            enthalpy_of_fusion_j_per_mol,
            molar_volume_m3_per_mol,
            interface,
            growth,
            heat_capacity_change_j_per_mol_k: 0.0,
            melting_point: None,
            nuclei_per_m3: None,
        }
    }

    fn validate(&self, viscosity: &ViscosityCurve) -> Result<(), KineticsError> {
        positive("liquidus_k", self.liquidus.0, "K")?;
        positive(
            "enthalpy_of_fusion_j_per_mol",
            self.enthalpy_of_fusion_j_per_mol,
            "J/mol",
        )?;
        positive(
            "molar_volume_m3_per_mol",
            self.molar_volume_m3_per_mol,
            "m3/mol",
        )?;
        match self.interface {
            Interface::TurnbullAlpha(a) => {
                positive("turnbull_alpha", a, "")?;
            }
            Interface::EnergyJPerM2(s) => {
                positive("interface_energy_j_per_m2", s, "J/m2")?;
            }
        }
        let cp = finite(
            "heat_capacity_change_j_per_mol_k",
            self.heat_capacity_change_j_per_mol_k,
        )?;
        if cp < 0.0 {
            return Err(ValueError::OutOfRange {
                name: "heat_capacity_change_j_per_mol_k",
                value: cp,
                range: "[0, inf)",
            }
            .into());
        }
        if let Some(t) = self.melting_point {
            positive("melting_point_k", t.0, "K")?;
        }
        if let Some(n) = self.nuclei_per_m3 {
            let n = finite("heterogeneous_nuclei_per_m3", n)?;
            if n < 0.0 {
                return Err(ValueError::OutOfRange {
                    name: "heterogeneous_nuclei_per_m3",
                    value: n,
                    range: "[0, inf)",
                }
                .into());
            }
        }
        if let ViscosityCurve::Vft { c_k, .. } = *viscosity {
            if self.liquidus.0 <= c_k {
                return Err(KineticsError::LiquidusBelowDivergence {
                    liquidus: self.liquidus.0,
                    c: c_k,
                });
            }
        }
        Ok(())
    }

    /// σ in J/m² (Turnbull 1950 when given as α).
    pub fn interface_energy_j_per_m2(&self) -> f64 {
        match self.interface {
            Interface::EnergyJPerM2(s) => s,
            Interface::TurnbullAlpha(a) => {
                a * self.enthalpy_of_fusion_j_per_mol
                    / (AVOGADRO.cbrt() * self.molar_volume_m3_per_mol.powf(2.0 / 3.0))
            }
        }
    }

    /// Turnbull's α, given or implied by σ.
    pub fn turnbull_alpha(&self) -> f64 {
        match self.interface {
            Interface::TurnbullAlpha(a) => a,
            Interface::EnergyJPerM2(s) => {
                s * AVOGADRO.cbrt() * self.molar_volume_m3_per_mol.powf(2.0 / 3.0)
                    / self.enthalpy_of_fusion_j_per_mol
            }
        }
    }

    /// Jackson's factor ΔS_m/R = ΔH_m/(R T_m), with the phase's melting point
    /// where known, else its liquidus in this melt.
    pub fn entropy_of_fusion_over_r(&self) -> f64 {
        let tm = self.melting_point.unwrap_or(self.liquidus).0;
        self.enthalpy_of_fusion_j_per_mol / (GAS_CONSTANT * tm)
    }
}

/// A melt: its viscosity curve and the crystal phases that can form in it.
#[derive(Debug, Clone, PartialEq, serde::Serialize)]
pub struct Melt {
    pub viscosity: ViscosityCurve,
    /// At least one phase.
    pub phases: Vec<CrystalPhase>,
}

impl Melt {
    /// A melt with one crystal phase (named "crystal").
    ///
    /// # Errors
    /// Non-finite or non-positive ΔH_m, V_m, liquidus or interface value; a
    /// liquidus at or below the VFT divergence.
    pub fn new(
        viscosity: ViscosityCurve,
        liquidus: Kelvin,
        enthalpy_of_fusion_j_per_mol: f64,
        molar_volume_m3_per_mol: f64,
        interface: Interface,
        growth: GrowthMode,
    ) -> Result<Self, KineticsError> {
        Melt::with_phases(
            viscosity,
            vec![CrystalPhase::new(
                "crystal",
                liquidus,
                enthalpy_of_fusion_j_per_mol,
                molar_volume_m3_per_mol,
                interface,
                growth,
            )],
        )
    }

    /// A melt in which several phases can form.
    ///
    /// # Errors
    /// No phase; two phases with one name; any value [`Melt::new`] refuses.
    pub fn with_phases(
        viscosity: ViscosityCurve,
        phases: Vec<CrystalPhase>,
    ) -> Result<Self, KineticsError> {
        if phases.is_empty() {
            return Err(KineticsError::NoPhase);
        }
        for (i, p) in phases.iter().enumerate() {
            p.validate(&viscosity)?;
            if phases[..i].iter().any(|q| q.name == p.name) {
                return Err(KineticsError::DuplicatePhase(p.name.clone()));
            }
        }
        Ok(Melt { viscosity, phases })
    }

    /// The liquidus of the melt: the highest of its phases'.
    pub fn liquidus(&self) -> Kelvin {
        Kelvin(
            self.phases
                .iter()
                .map(|p| p.liquidus.0)
                .fold(f64::NEG_INFINITY, f64::max),
        )
    }

    /// The index of the phase with the highest liquidus (the first on ties).
    pub fn primary(&self) -> usize {
        let tl = self.liquidus().0;
        self.phases
            .iter()
            .position(|p| p.liquidus.0 == tl)
            .unwrap_or(0)
    }

    /// The same melt with phase `k`'s interface replaced.
    pub fn with_interface(&self, k: usize, interface: Interface) -> Melt {
        let mut m = self.clone();
        if let Some(p) = m.phases.get_mut(k) {
            p.interface = interface;
        }
        m
    }
}

/// How diffusion that controls nucleation and growth follows viscosity.
#[derive(Debug, Clone, Copy, PartialEq, serde::Serialize)]
#[serde(tag = "law", rename_all = "snake_case")]
pub enum Transport {
    /// D = k_B T/(3π λ η) at every temperature.
    StokesEinstein,
    /// Stokes–Einstein above T_d = ratio × T_g; below it D ∝ (T/η)^exponent,
    /// continuous at T_d (fractional Stokes–Einstein).
    Fractional { exponent: f64 },
}

/// Options of the kinetic calculation.
#[derive(Debug, Clone, Copy, PartialEq, serde::Serialize)]
pub struct KineticOptions {
    /// X_c, the crystallised volume fraction taken as detectable.
    pub detectable_fraction: f64,
    pub driving_force: DrivingForce,
    /// Pre-existing (athermal) nuclei of each phase per m³.
    pub heterogeneous_nuclei_per_m3: f64,
    /// Contact angle θ in degrees of crystals nucleating on the walls of the
    /// sample (crucible, mould, impurity surfaces): 180° means no wall
    /// nucleation; smaller angles add a per-area rate with the barrier × f(θ).
    pub contact_angle_deg: f64,
    /// Thickness d of the sample, m: the walls offer 2/d m² per m³.
    pub sample_thickness_m: f64,
    /// Transport law below the decoupling temperature.
    pub transport: Transport,
    /// T_d/T_g: where diffusion decouples from viscosity (and below which a
    /// TTT nose is flagged).
    pub decoupling_ratio: f64,
    /// log10(η/Pa·s) below which (in T) kinetics are taken as frozen: the lower
    /// end T_e of the integrals.
    pub freeze_log_viscosity: f64,
}

impl Default for KineticOptions {
    fn default() -> Self {
        KineticOptions {
            detectable_fraction: DEFAULT_DETECTABLE_FRACTION,
            driving_force: DrivingForce::Turnbull,
            heterogeneous_nuclei_per_m3: 0.0,
            contact_angle_deg: 180.0,
            sample_thickness_m: DEFAULT_SAMPLE_THICKNESS_M,
            transport: Transport::StokesEinstein,
            decoupling_ratio: DEFAULT_DECOUPLING_RATIO,
            freeze_log_viscosity: DEFAULT_FREEZE_LOG_VISCOSITY,
        }
    }
}

impl KineticOptions {
    /// Check the options.
    ///
    /// # Errors
    /// X_c outside (0, 1), negative nuclei, θ outside (0, 180], a sample
    /// thickness that is not positive, a decoupling ratio below 1, an exponent
    /// outside (0, 1], a freeze viscosity below 12.
    pub fn validate(&self) -> Result<(), KineticsError> {
        let range = |name, value: f64, ok: bool, range| -> Result<(), KineticsError> {
            finite(name, value)?;
            if ok {
                Ok(())
            } else {
                Err(ValueError::OutOfRange { name, value, range }.into())
            }
        };
        let xc = self.detectable_fraction;
        range("detectable_fraction", xc, xc > 0.0 && xc < 1.0, "(0, 1)")?;
        let nh = self.heterogeneous_nuclei_per_m3;
        range("heterogeneous_nuclei_per_m3", nh, nh >= 0.0, "[0, inf)")?;
        let th = self.contact_angle_deg;
        range("contact_angle_deg", th, th > 0.0 && th <= 180.0, "(0, 180]")?;
        positive("sample_thickness_m", self.sample_thickness_m, "m")?;
        let r = self.decoupling_ratio;
        range("decoupling_ratio", r, r >= 1.0, "[1, inf)")?;
        if let Transport::Fractional { exponent } = self.transport {
            range(
                "fractional_exponent",
                exponent,
                exponent > 0.0 && exponent <= 1.0,
                "(0, 1]",
            )?;
        }
        let fr = self.freeze_log_viscosity;
        range(
            "freeze_log_viscosity",
            fr,
            fr >= GLASS_TRANSITION_LOG_VISCOSITY,
            "[12, inf)",
        )?;
        Ok(())
    }
}

/// Heterogeneous nucleation factor f(θ) = (2 + cos θ)(1 − cos θ)²/4.
pub fn wetting_factor(contact_angle_deg: f64) -> f64 {
    let c = contact_angle_deg.to_radians().cos();
    (2.0 + c) * (1.0 - c) * (1.0 - c) / 4.0
}

/// Values that replace those of a [`KineticOptions`] where given: a melt
/// card's `[kinetics]`, a screen config's `[kinetics]`, command-line options.
/// One definition, so every input offers the same choices.
#[derive(Debug, Clone, Copy, Default, PartialEq)]
pub struct KineticOverrides {
    pub detectable_fraction: Option<f64>,
    pub driving_force: Option<DrivingForce>,
    pub heterogeneous_nuclei_per_m3: Option<f64>,
    pub contact_angle_deg: Option<f64>,
    pub sample_thickness_m: Option<f64>,
    pub transport: Option<Transport>,
    pub decoupling_ratio: Option<f64>,
}

impl KineticOverrides {
    /// `base` with every given value replaced (not validated: call
    /// [`KineticOptions::validate`]).
    pub fn apply(&self, base: KineticOptions) -> KineticOptions {
        let mut o = base;
        if let Some(v) = self.detectable_fraction {
            o.detectable_fraction = v;
        }
        if let Some(v) = self.driving_force {
            o.driving_force = v;
        }
        if let Some(v) = self.heterogeneous_nuclei_per_m3 {
            o.heterogeneous_nuclei_per_m3 = v;
        }
        if let Some(v) = self.contact_angle_deg {
            o.contact_angle_deg = v;
        }
        if let Some(v) = self.sample_thickness_m {
            o.sample_thickness_m = v;
        }
        if let Some(v) = self.transport {
            o.transport = v;
        }
        if let Some(v) = self.decoupling_ratio {
            o.decoupling_ratio = v;
        }
        o
    }

    /// The overrides of `self`, then of `later` where it gives a value.
    #[must_use]
    pub fn then(self, later: KineticOverrides) -> KineticOverrides {
        KineticOverrides {
            detectable_fraction: later.detectable_fraction.or(self.detectable_fraction),
            driving_force: later.driving_force.or(self.driving_force),
            heterogeneous_nuclei_per_m3: later
                .heterogeneous_nuclei_per_m3
                .or(self.heterogeneous_nuclei_per_m3),
            contact_angle_deg: later.contact_angle_deg.or(self.contact_angle_deg),
            sample_thickness_m: later.sample_thickness_m.or(self.sample_thickness_m),
            transport: later.transport.or(self.transport),
            decoupling_ratio: later.decoupling_ratio.or(self.decoupling_ratio),
        }
    }
}
