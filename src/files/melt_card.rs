//! Melt cards (TOML): a melt measured by the user (VFT viscosity, liquidus,
//! crystal data, optional kinetic options) turned into a validated melt, with
//! the line of any bad value. Table rows of melt cards share [`MeltValues`].

use super::source::{DataError, Source};
use crate::error::Diagnostic;
use crate::kinetics::{DrivingForce, KineticOptions, KineticOverrides, KineticsError, Melt};
use crate::properties::{GrowthMode, Interface, ViscosityCurve, ViscosityError};
use crate::units::Kelvin;
use serde::Deserialize;
use toml::Spanned;

#[derive(Deserialize)]
#[serde(deny_unknown_fields)]
struct CardFile {
    viscosity: CardViscosity,
    crystal: CardCrystal,
    #[serde(default)]
    kinetics: Option<CardKinetics>,
}

#[derive(Deserialize)]
#[serde(deny_unknown_fields)]
struct CardViscosity {
    a: Spanned<f64>,
    b_k: Spanned<f64>,
    c_k: Spanned<f64>,
}

#[derive(Deserialize)]
#[serde(deny_unknown_fields)]
struct CardCrystal {
    liquidus_k: Spanned<f64>,
    enthalpy_of_fusion_j_per_mol: Spanned<f64>,
    molar_volume_m3_per_mol: Spanned<f64>,
    turnbull_alpha: Option<Spanned<f64>>,
    interface_energy_j_per_m2: Option<Spanned<f64>>,
    growth: Spanned<GrowthMode>,
}

#[derive(Deserialize)]
#[serde(deny_unknown_fields)]
struct CardKinetics {
    detectable_fraction: Option<Spanned<f64>>,
    driving_force: Option<DrivingForce>,
    heterogeneous_nuclei_per_m3: Option<Spanned<f64>>,
    contact_angle_deg: Option<Spanned<f64>>,
}

/// The values of a melt card or a table row, before validation.
#[derive(Debug, Clone, PartialEq)]
pub struct MeltValues {
    pub a: f64,
    pub b_k: f64,
    pub c_k: f64,
    pub liquidus_k: f64,
    pub enthalpy_of_fusion_j_per_mol: f64,
    pub molar_volume_m3_per_mol: f64,
    pub turnbull_alpha: Option<f64>,
    pub interface_energy_j_per_m2: Option<f64>,
    pub growth: GrowthMode,
    /// The card's `[kinetics]` values, where given.
    pub kinetics: KineticOverrides,
}

/// Why a set of melt values was refused.
#[derive(Debug, Clone, PartialEq, thiserror::Error)]
pub enum MeltValueError {
    #[error("give exactly one of turnbull_alpha and interface_energy_j_per_m2")]
    InterfaceChoice,
    #[error(transparent)]
    Kinetics(#[from] KineticsError),
}

impl Diagnostic for MeltValueError {
    fn hint(&self) -> Option<String> {
        match self {
            MeltValueError::InterfaceChoice => None,
            MeltValueError::Kinetics(e) => e.hint(),
        }
    }
}

impl MeltValues {
    /// Validate into a melt and its kinetic options (starting from `base` options).
    ///
    /// # Errors
    /// Both or neither interface values; anything [`Melt::new`] or
    /// [`KineticOptions::validate`] refuses.
    pub fn build(&self, base: &KineticOptions) -> Result<(Melt, KineticOptions), MeltValueError> {
        let interface = match (self.turnbull_alpha, self.interface_energy_j_per_m2) {
            (Some(a), None) => Interface::TurnbullAlpha(a),
            (None, Some(s)) => Interface::EnergyJPerM2(s),
            _ => return Err(MeltValueError::InterfaceChoice),
        };
        let melt = Melt::new(
            ViscosityCurve::vft(self.a, self.b_k, self.c_k).map_err(KineticsError::from)?,
            Kelvin(self.liquidus_k),
            self.enthalpy_of_fusion_j_per_mol,
            self.molar_volume_m3_per_mol,
            interface,
            self.growth,
        )?;
        let opts = self.kinetics.apply(*base);
        opts.validate()?;
        Ok((melt, opts))
    }
}

/// Parse a melt card.
///
/// # Errors
/// Syntax, missing or unknown keys, values the kinetics refuse — with the line.
pub fn parse_melt_card(
    src: &Source,
    base: &KineticOptions,
) -> Result<(Melt, KineticOptions), DataError> {
    let hint = "a melt card has [viscosity] a, b_k, c_k; [crystal] liquidus_k, enthalpy_of_fusion_j_per_mol, molar_volume_m3_per_mol, turnbull_alpha (or interface_energy_j_per_m2), growth; optional [kinetics]";
    let card: CardFile = src.parse(hint)?;
    let k = card.kinetics.as_ref();
    let values = MeltValues {
        a: *card.viscosity.a.get_ref(),
        b_k: *card.viscosity.b_k.get_ref(),
        c_k: *card.viscosity.c_k.get_ref(),
        liquidus_k: *card.crystal.liquidus_k.get_ref(),
        enthalpy_of_fusion_j_per_mol: *card.crystal.enthalpy_of_fusion_j_per_mol.get_ref(),
        molar_volume_m3_per_mol: *card.crystal.molar_volume_m3_per_mol.get_ref(),
        turnbull_alpha: card.crystal.turnbull_alpha.as_ref().map(|v| *v.get_ref()),
        interface_energy_j_per_m2: card
            .crystal
            .interface_energy_j_per_m2
            .as_ref()
            .map(|v| *v.get_ref()),
        growth: *card.crystal.growth.get_ref(),
        kinetics: KineticOverrides {
            detectable_fraction: k
                .and_then(|k| k.detectable_fraction.as_ref().map(|v| *v.get_ref())),
            driving_force: k.and_then(|k| k.driving_force),
            heterogeneous_nuclei_per_m3: k
                .and_then(|k| k.heterogeneous_nuclei_per_m3.as_ref().map(|v| *v.get_ref())),
            contact_angle_deg: k.and_then(|k| k.contact_angle_deg.as_ref().map(|v| *v.get_ref())),
        },
    };
    values.build(base).map_err(|e| {
        // Point at the key the error is about.
        let span = match &e {
            MeltValueError::InterfaceChoice => card.crystal.growth.span(),
            MeltValueError::Kinetics(ke) => {
                let name = match ke {
                    KineticsError::Value(v)
                    | KineticsError::Viscosity(ViscosityError::Value(v)) => v.name(),
                    KineticsError::LiquidusBelowDivergence { .. } => "liquidus_k",
                    _ => "",
                };
                let pick = |o: Option<&Spanned<f64>>| o.map(|s| s.span());
                match name {
                    "a" => Some(card.viscosity.a.span()),
                    "b_k" => Some(card.viscosity.b_k.span()),
                    "c_k" => Some(card.viscosity.c_k.span()),
                    "liquidus_k" => Some(card.crystal.liquidus_k.span()),
                    "enthalpy_of_fusion_j_per_mol" => {
                        Some(card.crystal.enthalpy_of_fusion_j_per_mol.span())
                    }
                    "molar_volume_m3_per_mol" => Some(card.crystal.molar_volume_m3_per_mol.span()),
                    "turnbull_alpha" => pick(card.crystal.turnbull_alpha.as_ref()),
                    "interface_energy_j_per_m2" => {
                        pick(card.crystal.interface_energy_j_per_m2.as_ref())
                    }
                    "detectable_fraction" => pick(k.and_then(|k| k.detectable_fraction.as_ref())),
                    "heterogeneous_nuclei_per_m3" => {
                        pick(k.and_then(|k| k.heterogeneous_nuclei_per_m3.as_ref()))
                    }
                    "contact_angle_deg" => pick(k.and_then(|k| k.contact_angle_deg.as_ref())),
                    _ => None,
                }
                .unwrap_or(0..0)
            }
        };
        src.error(
            vec![src.problem(span, e.to_string())],
            e.hint().or(Some(hint.to_string())),
        )
    })
}
