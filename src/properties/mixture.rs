//! Additive (mixture) models: a property as
//! `P(x) = c + Σ_i a_i x_i + Σ_{i<j} a_ij x_i x_j + Σ_k b_k Π_m (Σ_i g_kmi x_i)`
//! (the last sum holds products of oxide groups, as published models such as
//! Giordano et al. 2008 write their cross terms), with the composition domain
//! it was fitted over. See docs/science.md, "Mixture models".

use crate::composition::{Composition, Oxide, N_OXIDES};

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
