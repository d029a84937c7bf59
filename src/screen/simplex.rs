//! The composition space of a screen: free coordinates (every varying oxide
//! but the balance one, which closes the sum to 100 mol%), and how far a
//! composition is outside the oxide limits and linear constraints.

use super::problem::ScreenProblem;
use crate::composition::{Oxide, N_OXIDES};

/// Free coordinates (all varying oxides but the balance one) ↔ composition.
#[derive(Debug, Clone)]
pub struct Simplex {
    /// (oxide, min, max) of the free oxides.
    pub free: Vec<(Oxide, f64, f64)>,
    /// The oxide that closes the sum, with its limits.
    pub balance: (Oxide, f64, f64),
}

/// Which of the varying oxides (oxide, min, max mol%) closes the sum: the
/// one with the widest range (ties: the first); 0 for an empty list.
pub fn balance_index(oxides: &[(Oxide, f64, f64)]) -> usize {
    oxides
        .iter()
        .enumerate()
        .fold((0, f64::NEG_INFINITY), |(bi, bw), (i, o)| {
            if o.2 - o.1 > bw {
                (i, o.2 - o.1)
            } else {
                (bi, bw)
            }
        })
        .0
}

impl Simplex {
    /// The balance oxide is the one with the widest range (ties: the first).
    pub fn new(problem: &ScreenProblem) -> Self {
        let bi = balance_index(&problem.oxides);
        let balance = problem.oxides[bi];
        let free = problem
            .oxides
            .iter()
            .enumerate()
            .filter(|(i, _)| *i != bi)
            .map(|(_, o)| *o)
            .collect();
        Simplex { free, balance }
    }

    /// Number of free coordinates.
    pub fn dims(&self) -> usize {
        self.free.len()
    }

    /// mol% of every oxide from free coordinates in mol%.
    pub fn compose(&self, free: &[f64]) -> [f64; N_OXIDES] {
        let mut x = [0.0; N_OXIDES];
        let mut sum = 0.0;
        for ((o, ..), v) in self.free.iter().zip(free) {
            x[o.index()] = *v;
            sum += v;
        }
        x[self.balance.0.index()] = 100.0 - sum;
        x
    }

    /// Free coordinates from a unit-cube point.
    pub fn from_unit(&self, u: &[f64]) -> Vec<f64> {
        self.free
            .iter()
            .zip(u)
            .map(|((_, lo, hi), u)| lo + u * (hi - lo))
            .collect()
    }

    /// The free coordinates of a composition.
    pub fn free_of(&self, x: &[f64; N_OXIDES]) -> Vec<f64> {
        self.free.iter().map(|(o, ..)| x[o.index()]).collect()
    }
}

/// How far a composition is outside the oxide limits and linear constraints (mol%).
pub fn composition_violation(problem: &ScreenProblem, x: &[f64; N_OXIDES]) -> f64 {
    let mut v = 0.0;
    for &(o, lo, hi) in &problem.oxides {
        let xi = x[o.index()];
        v += (lo - xi).max(0.0) + (xi - hi).max(0.0);
    }
    for c in &problem.constraints {
        let s: f64 = c.weights.iter().zip(x).map(|(w, x)| w * x).sum();
        if let Some(m) = c.min {
            v += (m - s).max(0.0);
        }
        if let Some(m) = c.max {
            v += (s - m).max(0.0);
        }
    }
    v
}

/// Squared Euclidean distance of two compositions in mol%.
pub fn dist2(a: &[f64; N_OXIDES], b: &[f64; N_OXIDES]) -> f64 {
    a.iter().zip(b).map(|(x, y)| (x - y) * (x - y)).sum()
}
