//! The melt the kinetics work on (viscosity curve, liquidus, crystal data of
//! the crystallising phase) and the options of a kinetic calculation, both
//! validated on construction. See docs/science.md, "Nucleation and growth".

use super::KineticsError;
use crate::error::{finite, positive, ValueError};
use crate::properties::{GrowthMode, Interface, ViscosityCurve, GLASS_TRANSITION_LOG_VISCOSITY};
use crate::units::{Kelvin, AVOGADRO, GAS_CONSTANT};

/// Viscosity at which kinetics are taken as frozen by default, log10(η/Pa·s).
pub const DEFAULT_FREEZE_LOG_VISCOSITY: f64 = 15.0;
/// Detectable crystallised volume fraction (Uhlmann 1972).
pub const DEFAULT_DETECTABLE_FRACTION: f64 = 1e-6;

/// Form of the thermodynamic driving force for crystallisation.
#[derive(Debug, Clone, Copy, PartialEq, Eq, serde::Serialize, serde::Deserialize)]
#[serde(rename_all = "snake_case")]
pub enum DrivingForce {
    /// Turnbull: ΔG = ΔH_m (T_L − T)/T_L.
    Turnbull,
    /// Hoffman: ΔG = ΔH_m (T_L − T) T / T_L².
    Hoffman,
}

/// The melt and its crystallising phase, in SI units.
#[derive(Debug, Clone, Copy, PartialEq, serde::Serialize)]
pub struct Melt {
    pub viscosity: ViscosityCurve,
    pub liquidus: Kelvin,
    /// ΔH_m in J per mol of formula units.
    pub enthalpy_of_fusion_j_per_mol: f64,
    /// V_m in m³ per mol of formula units.
    pub molar_volume_m3_per_mol: f64,
    pub interface: Interface,
    pub growth: GrowthMode,
}

impl Melt {
    /// Validate and build a melt.
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
        positive("liquidus_k", liquidus.0, "K")?;
        positive(
            "enthalpy_of_fusion_j_per_mol",
            enthalpy_of_fusion_j_per_mol,
            "J/mol",
        )?;
        positive("molar_volume_m3_per_mol", molar_volume_m3_per_mol, "m3/mol")?;
        match interface {
            Interface::TurnbullAlpha(a) => {
                positive("turnbull_alpha", a, "")?;
            }
            Interface::EnergyJPerM2(s) => {
                positive("interface_energy_j_per_m2", s, "J/m2")?;
            }
        }
        if let ViscosityCurve::Vft { c_k, .. } = viscosity {
            if liquidus.0 <= c_k {
                return Err(KineticsError::LiquidusBelowDivergence {
                    liquidus: liquidus.0,
                    c: c_k,
                });
            }
        }
        Ok(Melt {
            viscosity,
            liquidus,
            enthalpy_of_fusion_j_per_mol,
            molar_volume_m3_per_mol,
            interface,
            growth,
        })
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

    /// The same melt with another interface specification.
    pub fn with_interface(&self, interface: Interface) -> Melt {
        Melt { interface, ..*self }
    }

    /// Jackson's α-factor ΔS_m/R = ΔH_m/(R T_L) (with T_L standing for T_m).
    pub fn entropy_of_fusion_over_r(&self) -> f64 {
        self.enthalpy_of_fusion_j_per_mol / (GAS_CONSTANT * self.liquidus.0)
    }
}

/// Options of the kinetic calculation.
#[derive(Debug, Clone, Copy, PartialEq, serde::Serialize)]
pub struct KineticOptions {
    /// X_c, the crystallised volume fraction taken as detectable.
    pub detectable_fraction: f64,
    pub driving_force: DrivingForce,
    /// Pre-existing (athermal) heterogeneous nuclei per m³.
    pub heterogeneous_nuclei_per_m3: f64,
    /// Contact angle θ in degrees for heterogeneous nucleation on a substrate;
    /// 180° is homogeneous nucleation (f(θ) = 1).
    pub contact_angle_deg: f64,
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
            freeze_log_viscosity: DEFAULT_FREEZE_LOG_VISCOSITY,
        }
    }
}

impl KineticOptions {
    /// Check the options.
    ///
    /// # Errors
    /// X_c outside (0, 1), negative nuclei, θ outside (0, 180], a freeze
    /// viscosity below 12.
    pub fn validate(&self) -> Result<(), KineticsError> {
        let xc = finite("detectable_fraction", self.detectable_fraction)?;
        if !(xc > 0.0 && xc < 1.0) {
            return Err(ValueError::OutOfRange {
                name: "detectable_fraction",
                value: xc,
                range: "(0, 1)",
            }
            .into());
        }
        let nh = finite(
            "heterogeneous_nuclei_per_m3",
            self.heterogeneous_nuclei_per_m3,
        )?;
        if nh < 0.0 {
            return Err(ValueError::OutOfRange {
                name: "heterogeneous_nuclei_per_m3",
                value: nh,
                range: "[0, inf)",
            }
            .into());
        }
        let th = finite("contact_angle_deg", self.contact_angle_deg)?;
        if !(th > 0.0 && th <= 180.0) {
            return Err(ValueError::OutOfRange {
                name: "contact_angle_deg",
                value: th,
                range: "(0, 180]",
            }
            .into());
        }
        let fr = finite("freeze_log_viscosity", self.freeze_log_viscosity)?;
        if fr < GLASS_TRANSITION_LOG_VISCOSITY {
            return Err(ValueError::OutOfRange {
                name: "freeze_log_viscosity",
                value: fr,
                range: "[12, inf)",
            }
            .into());
        }
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
        o
    }
}
