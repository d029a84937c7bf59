//! Liquidus surfaces: where each crystal phase starts to form on cooling, as a
//! function of composition. Two forms: an additive (mixture) model fitted
//! within and a little beyond the phase's primary field, and freezing-point
//! depression (Schröder–van Laar) from the phase's fusion data and its
//! activity in the melt. No surface may exceed the phase's own melting point:
//! a surface above it is clipped there, and the clip is reported. See
//! docs/science.md, "Liquidus".
//!
//! References
//! - I. Schröder, Z. Phys. Chem. 11 (1893) 449; J. J. van Laar, Z. Phys. Chem.
//!   63 (1908) 216 (the freezing-point depression of an ideal solution; from memory).

use super::mixture::MixtureModel;
use crate::composition::N_OXIDES;
use crate::units::GAS_CONSTANT;

/// How a phase's liquidus depends on composition.
#[derive(Debug, Clone, PartialEq)]
pub enum LiquidusSurface {
    /// T_L(x) in K as a mixture model.
    Mixture(MixtureModel),
    /// T_L = 1/(1/T_m − R ln a/ΔH_m), with the activity of the phase's formula
    /// unit from ideal mixing of its oxide components,
    /// ln a = Σ_i ν_i ln(x_i/x_i*) (x* the phase's own composition, so a = 1
    /// there), plus an optional fitted correction to ln a.
    FreezingPointDepression {
        /// Oxide units per formula unit, ν_i (e.g. Na2Si2O5: Na2O 1, SiO2 2).
        stoichiometry: [f64; N_OXIDES],
        /// A mixture model added to ln a.
        correction: Option<MixtureModel>,
    },
}

/// A phase's liquidus at one composition.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct PhaseLiquidus {
    /// What the surface gives, K.
    pub surface_k: f64,
    /// The liquidus used: the surface, clipped at the melting point, K.
    pub liquidus_k: f64,
    /// The surface lay above the melting point.
    pub clipped: bool,
}

impl LiquidusSurface {
    /// The liquidus at mole fractions `x`, for a phase melting at `melting_point_k`
    /// with enthalpy of fusion `dh` J/mol.
    pub fn at(&self, x: &[f64; N_OXIDES], melting_point_k: f64, dh: f64) -> PhaseLiquidus {
        let surface_k = match self {
            LiquidusSurface::Mixture(m) => m.eval(x),
            LiquidusSurface::FreezingPointDepression {
                stoichiometry,
                correction,
            } => {
                let ln_a = ideal_ln_activity(stoichiometry, x)
                    + correction.as_ref().map(|c| c.eval(x)).unwrap_or(0.0);
                // ln a = −∞ (a component absent) gives T_L = 0: the phase cannot form.
                let inv = 1.0 / melting_point_k - GAS_CONSTANT * ln_a / dh;
                if inv.is_infinite() {
                    0.0
                } else {
                    1.0 / inv
                }
            }
        };
        let clipped = surface_k > melting_point_k;
        PhaseLiquidus {
            surface_k,
            liquidus_k: if clipped { melting_point_k } else { surface_k },
            clipped,
        }
    }
}

/// ln a of a formula unit with oxide units ν_i in an ideal mixture of
/// oxides: Σ_i ν_i ln(x_i/x_i*), x_i* = ν_i/Σν. It is at most zero (Gibbs'
/// inequality), so the ideal surface never exceeds the melting point.
pub fn ideal_ln_activity(stoichiometry: &[f64; N_OXIDES], x: &[f64; N_OXIDES]) -> f64 {
    let total: f64 = stoichiometry.iter().sum();
    stoichiometry
        .iter()
        .zip(x)
        .filter(|(nu, _)| **nu > 0.0)
        .map(|(nu, xi)| nu * (xi / (nu / total)).ln())
        .sum()
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::composition::Oxide;

    fn disilicate() -> [f64; N_OXIDES] {
        let mut s = [0.0; N_OXIDES];
        s[Oxide::Na2O.index()] = 1.0;
        s[Oxide::SiO2.index()] = 2.0;
        s
    }

    fn binary(na2o: f64) -> [f64; N_OXIDES] {
        let mut x = [0.0; N_OXIDES];
        x[Oxide::Na2O.index()] = na2o;
        x[Oxide::SiO2.index()] = 1.0 - na2o;
        x
    }

    #[test]
    fn ideal_surface_peaks_at_the_phase_composition() {
        // At its own composition the activity is 1 and T_L = T_m; anywhere else it
        // is lower (Gibbs' inequality). 1147 K and 35.6 kJ/mol are illustrative.
        let s = LiquidusSurface::FreezingPointDepression {
            stoichiometry: disilicate(),
            correction: None,
        };
        let at = |na| s.at(&binary(na), 1147.0, 35_600.0);
        assert!((at(1.0 / 3.0).liquidus_k - 1147.0).abs() < 1e-9);
        for na in [0.2, 0.3, 0.36, 0.45] {
            let p = at(na);
            assert!(p.liquidus_k < 1147.0 && !p.clipped, "{na}: {p:?}");
        }
        // By hand at 25 mol% Na2O: ln a = ln(0.25/(1/3)) + 2 ln(0.75/(2/3))
        // = −0.287682 + 0.235566 = −0.052116; 1/T = 1/1147 + 8.314463 × 0.052116/35600
        // = 8.718396e-4 + 1.217166e-5 = 8.840113e-4 → T = 1131.21 K.
        assert!(
            (at(0.25).liquidus_k - 1131.21).abs() < 0.01,
            "{:?}",
            at(0.25)
        );
        // No Na2O at all: the phase cannot form.
        assert_eq!(at(0.0).liquidus_k, 0.0);
    }

    #[test]
    fn a_mixture_surface_above_the_melting_point_is_clipped() {
        let mut m = MixtureModel::constant(1300.0);
        m.linear[Oxide::Na2O.index()] = 100.0;
        let p = LiquidusSurface::Mixture(m).at(&binary(0.3), 1250.0, 1.0);
        assert_eq!(
            (p.surface_k, p.liquidus_k, p.clipped),
            (1330.0, 1250.0, true)
        );
    }
}
