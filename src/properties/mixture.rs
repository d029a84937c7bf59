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
    /// The factor from mole fractions to this basis: 1 or 100.
    pub fn scale(self) -> f64 {
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

    /// Whether any term of the model depends on oxide `o`.
    pub fn uses(&self, o: Oxide) -> bool {
        let i = o.index();
        self.linear[i] != 0.0
            || self.pairs.iter().any(|&(a, b, _)| a == i || b == i)
            || self
                .products
                .iter()
                .any(|t| t.groups.iter().any(|g| g[i] != 0.0))
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

/// One coefficient of a mixture model, as fits and their covariance name it:
/// `constant`, an oxide (`SiO2`, a linear term) or a pair (`Na2O*CaO`).
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Term {
    Constant,
    Linear(Oxide),
    Pair(Oxide, Oxide),
}

impl std::fmt::Display for Term {
    fn fmt(&self, f: &mut std::fmt::Formatter<'_>) -> std::fmt::Result {
        match self {
            Term::Constant => f.write_str("constant"),
            Term::Linear(o) => write!(f, "{o}"),
            Term::Pair(a, b) => write!(f, "{a}*{b}"),
        }
    }
}

impl std::str::FromStr for Term {
    type Err = String;
    fn from_str(s: &str) -> Result<Self, String> {
        let s = s.trim();
        if s == "constant" {
            return Ok(Term::Constant);
        }
        let oxide = |t: &str| {
            t.trim()
                .parse::<Oxide>()
                .map_err(|_| format!("unknown oxide '{}' in the term '{s}'", t.trim()))
        };
        match s.split_once('*') {
            Some((a, b)) => Ok(Term::Pair(oxide(a)?, oxide(b)?)),
            None => Ok(Term::Linear(oxide(s)?)),
        }
    }
}

impl MixtureModel {
    /// The value a term multiplies at mole fractions `x`, in the model's basis
    /// (1, s·x_i, or s·x_i · s·x_j).
    pub fn term_value(&self, t: Term, x: &[f64; N_OXIDES]) -> f64 {
        let s = self.basis.scale();
        match t {
            Term::Constant => 1.0,
            Term::Linear(o) => s * x[o.index()],
            Term::Pair(a, b) => s * x[a.index()] * s * x[b.index()],
        }
    }

    /// The coefficient of a term (a linear term the model lacks is zero; a
    /// pair it lacks is None).
    pub fn coefficient(&self, t: Term) -> Option<f64> {
        match t {
            Term::Constant => Some(self.constant),
            Term::Linear(o) => Some(self.linear[o.index()]),
            Term::Pair(a, b) => self
                .pairs
                .iter()
                .find(|(i, j, _)| (*i, *j) == (a.index(), b.index()))
                .map(|p| p.2),
        }
    }

    /// Set the coefficient of a term, adding a pair term if the model lacks it.
    pub fn set_coefficient(&mut self, t: Term, value: f64) {
        match t {
            Term::Constant => self.constant = value,
            Term::Linear(o) => self.linear[o.index()] = value,
            Term::Pair(a, b) => {
                let key = (a.index(), b.index());
                match self.pairs.iter_mut().find(|(i, j, _)| (*i, *j) == key) {
                    Some(p) => p.2 = value,
                    None => self.pairs.push((key.0, key.1, value)),
                }
            }
        }
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
    /// Whether the model was made for oxide `o` at all: an oxide whose range
    /// is [0, 0] is not covered, and any amount of it is an extrapolation
    /// (docs/science.md, "Oxides a model does not cover").
    pub fn covers(&self, o: Oxide) -> bool {
        self.max[o.index()] > 0.0
    }

    /// The range of each oxide over a set of compositions (mole fractions):
    /// an oxide none of them contains gets [0, 0].
    pub fn of_data<'a>(xs: impl IntoIterator<Item = &'a [f64; N_OXIDES]>) -> Domain {
        let mut d = Domain {
            min: [f64::INFINITY; N_OXIDES],
            max: [0.0; N_OXIDES],
        };
        for x in xs {
            for (i, xi) in x.iter().enumerate() {
                d.min[i] = d.min[i].min(100.0 * xi);
                d.max[i] = d.max[i].max(100.0 * xi);
            }
        }
        for i in 0..N_OXIDES {
            if !d.min[i].is_finite() {
                d.min[i] = 0.0;
            }
        }
        d
    }

    /// The oxides outside the domain, as readable phrases.
    pub fn violations(&self, c: &Composition) -> Vec<String> {
        let pct = c.mol_percent();
        let mut out = Vec::new();
        for o in Oxide::ALL {
            let (v, lo, hi) = (pct[o.index()], self.min[o.index()], self.max[o.index()]);
            // A hair of slack so a value on the boundary is inside.
            if !self.covers(o) && v > 1e-9 {
                out.push(format!(
                    "{o} {v:.2} mol%, an oxide the model does not cover"
                ));
            } else if v > hi + 1e-9 {
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
    fn terms_read_write_and_address_coefficients() {
        for text in ["constant", "SiO2", "Na2O*CaO"] {
            assert_eq!(text.parse::<Term>().unwrap().to_string(), text);
        }
        assert!("SiO3".parse::<Term>().is_err());
        let mut m = MixtureModel::constant(2.0);
        let pair = Term::Pair(Oxide::Na2O, Oxide::CaO);
        assert_eq!(m.coefficient(pair), None);
        m.set_coefficient(pair, 3.0);
        m.set_coefficient(Term::Linear(Oxide::SiO2), 5.0);
        assert_eq!(m.coefficient(pair), Some(3.0));
        let c = Composition::from_mol_percent(&[
            (Oxide::SiO2, 70.0),
            (Oxide::Na2O, 20.0),
            (Oxide::CaO, 10.0),
        ])
        .unwrap();
        let x = c.fractions();
        // 2 + 5·0.7 + 3·0.2·0.1 = 5.56, by hand; and the sum of terms × values.
        let by_terms: f64 = [Term::Constant, Term::Linear(Oxide::SiO2), pair]
            .iter()
            .map(|t| m.coefficient(*t).unwrap() * m.term_value(*t, x))
            .sum();
        assert!((m.eval(x) - 5.56).abs() < 1e-12);
        assert!((by_terms - 5.56).abs() < 1e-12);
        let d = Domain::of_data([x]);
        assert_eq!(
            (d.min[Oxide::K2O.index()], d.max[Oxide::K2O.index()]),
            (0.0, 0.0)
        );
        assert!((d.max[Oxide::SiO2.index()] - 70.0).abs() < 1e-9);
    }

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
