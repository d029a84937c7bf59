//! Local refinement of a seed: sequential quadratic programming
//! ([`super::sqp`]) on the free coordinates. The oxide limits, the balance
//! oxide and the linear constraints are the rows of the composition
//! [`Polytope`], kept exactly; the user's nonlinear limits (R_c, melting
//! temperature, liquidus, cost, property ranges) and the models' validity
//! boxes are inequality constraints, not penalties.
//!
//! [`ScreenModel`] is the screen seen as a constrained problem; it is public
//! so that benchmarks can hand the same problem to other solvers.

use super::candidate::{
    domain_distance, evaluate_candidate, gauges, measure, objective, uses_margin, vouch_gauges,
    Candidate, Pass,
};
use super::polytope::Polytope;
use super::problem::{ScreenProblem, Search};
use super::simplex::Simplex;
use super::sqp::{self, ConstrainedModel, Point};
use crate::assess::{add_glassy_thickness, SlabQuench};
use crate::composition::N_OXIDES;

/// Why a seed cannot be refined.
#[derive(Debug, Clone, PartialEq, thiserror::Error)]
pub enum RefineError {
    #[error("the seed lies outside the composition limits (by {0:.3e} mol%)")]
    SeedOutside(f64),
}

impl crate::error::Diagnostic for RefineError {}

/// Validity boxes count 10 mol% as one unit of constraint.
const DOMAIN_UNIT_MOL_PCT: f64 = 10.0;

/// A screen problem as a constrained model over the free coordinates: the
/// objective of [`evaluate_candidate`], the scaled gauges of every nonlinear
/// limit (≤ 0: met) and, unless extrapolation is allowed, the signed distance
/// to the models' validity boxes.
pub struct ScreenModel<'a> {
    pub problem: &'a ScreenProblem,
    pub simplex: &'a Simplex,
    /// Recipes to stay at least the shortlist's distance away from (the
    /// shortlist picked so far): one constraint each, 1 − |x − p|²/d² ≤ 0.
    pub away_from: &'a [[f64; N_OXIDES]],
}

impl ScreenModel<'_> {
    /// The composition of free coordinates.
    pub fn compose(&self, y: &[f64]) -> [f64; N_OXIDES] {
        self.simplex.compose(y)
    }
}

impl ConstrainedModel for ScreenModel<'_> {
    fn eval(&self, y: &[f64]) -> Option<Point> {
        let problem = self.problem;
        let x = self.simplex.compose(y);
        let m = measure(problem, &x, None).ok()?;
        let cost = match m.cost {
            Some(Ok(v)) => Some(v),
            Some(Err(_)) => return None,
            None => None,
        };
        let mut e = m.evaluation;
        let mut g: Vec<f64> = gauges(problem, &e, cost).iter().map(|g| g.value).collect();
        if uses_margin(problem) {
            // Recipes the model cannot vouch for rank last: their bounds are
            // constraints here (the slab is computed at every point for this).
            if e.max_glassy_thickness_mm.is_none() {
                add_glassy_thickness(&mut e, SlabQuench::default()).ok()?;
            }
            g.extend(vouch_gauges(&e).iter().map(|g| g.value));
        }
        let mut admissible = true;
        if !problem.allow_extrapolation {
            let (dist, _) = domain_distance(problem, &x, e.primary_phase.as_deref(), 0.0);
            g.push(dist / DOMAIN_UNIT_MOL_PCT);
            // Flagged although inside the boxes: a liquidus surface clipped
            // at its phase's melting point, which has no distance to follow.
            if (e.viscosity_extrapolated || e.liquidus_extrapolated) && dist < -1e-9 {
                admissible = false;
            }
        }
        let d2 = problem.min_distance_mol_pct * problem.min_distance_mol_pct;
        if d2 > 0.0 {
            for p in self.away_from {
                g.push(1.0 - super::simplex::dist2(&x, p) / d2);
            }
        }
        let feasible = g.iter().all(|v| *v <= 0.0);
        if uses_margin(problem) {
            // Vouching is a constraint here: the objective leaves out the
            // jump that ranks unvouched recipes last (it would wreck the
            // finite differences next to the bound).
            e.vouched = true;
        }
        let f = objective(problem, &mut e, cost, feasible);
        Some(Point { f, g, admissible })
    }
}

/// The SQP settings a search asks for.
pub fn settings(search: &Search) -> sqp::Settings {
    sqp::Settings {
        max_iterations: search.refine_iterations,
        ..Default::default()
    }
}

/// Refine one seed, staying at least the shortlist's distance from every
/// recipe in `away_from`; returns the best point found, evaluated, and the
/// number of evaluations the refinement used.
///
/// # Errors
/// The seed lies outside the composition limits.
pub fn refine(
    problem: &ScreenProblem,
    search: &Search,
    simplex: &Simplex,
    seed_no: usize,
    seed: &[f64; N_OXIDES],
    away_from: &[[f64; N_OXIDES]],
) -> Result<(Candidate, usize), RefineError> {
    let polytope = Polytope::new(problem, simplex);
    let y0 = simplex.free_of(seed);
    let worst = polytope.slacks(&y0).iter().fold(0.0f64, |s, v| s.max(-v));
    if worst > 1e-6 {
        return Err(RefineError::SeedOutside(worst));
    }
    let model = ScreenModel {
        problem,
        simplex,
        away_from,
    };
    let out = sqp::minimise(&model, &polytope, &y0, &settings(search));
    // Rounding leaves a coordinate on its bound off by ~1e-15: put it on it.
    let y: Vec<f64> = out
        .y
        .iter()
        .zip(&simplex.free)
        .map(|(v, &(_, lo, hi))| {
            if (v - lo).abs() < 1e-9 {
                lo
            } else if (v - hi).abs() < 1e-9 {
                hi
            } else {
                *v
            }
        })
        .collect();
    let x = simplex.compose(&y);
    Ok((
        evaluate_candidate(
            problem,
            1_000_000 * (seed_no as u64 + 1),
            Pass::Refinement,
            x,
        ),
        out.evaluations + 1,
    ))
}
