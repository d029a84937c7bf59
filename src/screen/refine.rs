//! Local refinement of a seed with Nelder–Mead (argmin) on the free
//! coordinates, every broken limit a finite penalty.
//!
//! References
//! - J. A. Nelder, R. Mead, Comput. J. 7 (1965) 308–313, doi:10.1093/comjnl/7.4.308.

use super::candidate::{evaluate_candidate, Candidate, Pass};
use super::problem::{ScreenProblem, Search};
use super::simplex::Simplex;
use crate::composition::N_OXIDES;
use argmin::core::{CostFunction, Error as ArgminError, Executor, State};
use argmin::solver::neldermead::NelderMead;

struct RefineProblem<'a> {
    problem: &'a ScreenProblem,
    simplex: &'a Simplex,
    evaluations: std::sync::atomic::AtomicUsize,
}

impl CostFunction for RefineProblem<'_> {
    type Param = Vec<f64>;
    type Output = f64;
    fn cost(&self, p: &Vec<f64>) -> Result<f64, ArgminError> {
        self.evaluations
            .fetch_add(1, std::sync::atomic::Ordering::Relaxed);
        let x = self.simplex.compose(p);
        Ok(evaluate_candidate(self.problem, 0, Pass::Refinement, x).penalised())
    }
}

/// Refine one seed with Nelder–Mead; returns the best point found, evaluated,
/// and the number of evaluations the refinement used.
///
/// # Errors
/// argmin refuses the start simplex (never for a valid problem).
pub fn refine(
    problem: &ScreenProblem,
    search: &Search,
    simplex: &Simplex,
    seed_no: usize,
    seed: &[f64; N_OXIDES],
) -> Result<(Candidate, usize), ArgminError> {
    let x0 = simplex.free_of(seed);
    // Start simplex: the seed and one step of 1 mol% (or 1/4 of the range) per free oxide.
    let mut verts = vec![x0.clone()];
    for (d, &(_, lo, hi)) in simplex.free.iter().enumerate() {
        let step = (0.25 * (hi - lo)).clamp(1e-3, 1.0);
        let mut v = x0.clone();
        v[d] = if v[d] + step <= hi {
            v[d] + step
        } else {
            v[d] - step
        };
        verts.push(v);
    }
    let solver = NelderMead::new(verts).with_sd_tolerance(1e-6)?;
    let cost = RefineProblem {
        problem,
        simplex,
        evaluations: 0.into(),
    };
    let res = Executor::new(cost, solver)
        .configure(|s| s.max_iters(search.refine_iterations))
        .run()?;
    let evaluations = res
        .problem
        .problem
        .as_ref()
        .map(|p| p.evaluations.load(std::sync::atomic::Ordering::Relaxed))
        .unwrap_or(0);
    let best = res.state().get_best_param().cloned().unwrap_or(x0);
    let x = simplex.compose(&best);
    Ok((
        evaluate_candidate(
            problem,
            1_000_000 * (seed_no as u64 + 1),
            Pass::Refinement,
            x,
        ),
        evaluations + 1,
    ))
}
