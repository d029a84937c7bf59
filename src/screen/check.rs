//! A recipe the user already has in mind, checked against every limit of a
//! problem: pass or fail and the margin of each, in the limit's own unit.
//! The verdicts are the screen's own ([`evaluate_candidate_with`] and its
//! gauges): one definition of every limit.

use super::candidate::{evaluate_candidate_with, gauges, measure, Candidate, Measured, Pass};
use super::limits::Limit;
use super::problem::ScreenProblem;
use super::simplex::composition_violation;
use crate::assess::SlabQuench;
use crate::composition::N_OXIDES;

/// One limit at one recipe.
#[derive(Debug, Clone, PartialEq, serde::Serialize)]
pub struct LimitCheck {
    pub limit: Limit,
    /// A column-safe key, e.g. `liquidus` or `tg_min`.
    pub key: &'static str,
    /// How far inside the limit the recipe is, in `unit` (negative: outside);
    /// `None` where the limit has no distance (the model domain) or the
    /// recipe could not be measured.
    pub margin: Option<f64>,
    pub unit: &'static str,
    pub pass: bool,
}

/// A recipe checked against a problem.
#[derive(Debug, Clone)]
pub struct RecipeCheck {
    /// The screen's verdict on the recipe, as a candidate of the screen
    /// (evaluated even when its composition is outside the screen's limits).
    pub candidate: Candidate,
    pub checks: Vec<LimitCheck>,
    /// Where the probability decides, P(R_c ≤ rate) of every quench option
    /// from the screen's draws, the deciding one first (empty otherwise, or
    /// when the recipe could not be drawn).
    pub probability_glassy_with: Vec<Option<f64>>,
}

impl RecipeCheck {
    /// Every limit met.
    pub fn passes(&self) -> bool {
        self.checks.iter().all(|c| c.pass)
    }

    /// The limits broken, by key.
    pub fn failed(&self) -> Vec<&'static str> {
        self.checks
            .iter()
            .filter(|c| !c.pass)
            .map(|c| c.key)
            .collect()
    }
}

/// The key, unit and scale of a gauge (its value × scale is the distance
/// beyond the limit in that unit; see [`super::candidate::Gauge`]: one unit
/// is a decade of R_c, 100 K, or the whole cost ceiling).
fn gauge_key(
    problem: &ScreenProblem,
    label: &str,
    limit: Limit,
) -> (&'static str, &'static str, f64) {
    let cost_scale = problem.cost.as_ref().map_or(1.0, |c| c.max_per_kg);
    match (limit, label) {
        (Limit::CoolingRate, _) => ("critical_rate", "decades", 1.0),
        (Limit::MeltingTemperature, _) => ("melting_temperature", "k", 100.0),
        (Limit::Liquidus, _) => ("liquidus", "k", 100.0),
        (Limit::GlassTransition, "T_g min") => ("tg_min", "k", 100.0),
        (Limit::GlassTransition, _) => ("tg_max", "k", 100.0),
        (Limit::WorkingRange, "working range min") => ("working_range_min", "k", 100.0),
        (Limit::WorkingRange, _) => ("working_range_max", "k", 100.0),
        (Limit::Cost, _) => ("cost", "per_kg", cost_scale),
        _ => ("other", "", 1.0),
    }
}

/// How far inside its nearest oxide limit or linear constraint a
/// composition is, mol% (0 on a limit; the oxides with a fixed amount do not
/// count).
fn composition_slack(problem: &ScreenProblem, x: &[f64; N_OXIDES]) -> f64 {
    let oxides = problem
        .oxides
        .iter()
        .filter(|(_, lo, hi)| lo < hi)
        .map(|&(o, lo, hi)| (x[o.index()] - lo).min(hi - x[o.index()]));
    let constraints = problem.constraints.iter().flat_map(|c| {
        let s: f64 = c.weights.iter().zip(x).map(|(w, x)| w * x).sum();
        [c.min.map(|m| s - m), c.max.map(|m| m - s)]
            .into_iter()
            .flatten()
    });
    oxides
        .chain(constraints)
        .fold(f64::INFINITY, f64::min)
        .max(0.0)
}

/// Check one composition (mol%) against every limit of `problem`.
pub fn check_recipe(
    problem: &ScreenProblem,
    x: [f64; N_OXIDES],
    slab: Option<SlabQuench>,
) -> RecipeCheck {
    let off = composition_violation(problem, &x);
    let mut checks = vec![LimitCheck {
        limit: Limit::CompositionLimits,
        key: "composition_limits",
        margin: Some(if off > 0.0 {
            -off
        } else {
            composition_slack(problem, &x)
        }),
        unit: "mol_pct",
        pass: off <= 1e-9,
    }];
    // The screen's own verdict; outside the composition limits it stops
    // there, so the recipe is measured here for the other limits.
    let mut candidate = evaluate_candidate_with(problem, 0, Pass::SpaceFilling, x, slab);
    if candidate.evaluation.is_none() && candidate.error.is_none() {
        match measure(problem, &x, slab) {
            Ok(Measured { evaluation, cost }) => {
                match cost {
                    Some(Ok(v)) => candidate.cost_per_kg = Some(v),
                    Some(Err(e)) => candidate.error = Some(e),
                    None => {}
                }
                candidate.evaluation = Some(evaluation);
            }
            Err(super::candidate::Unmeasured::Composition(e))
            | Err(super::candidate::Unmeasured::Evaluation(e)) => candidate.error = Some(e),
        }
    }
    let Some(e) = candidate.evaluation.as_ref() else {
        checks.push(LimitCheck {
            limit: Limit::Evaluation,
            key: "evaluation",
            margin: None,
            unit: "",
            pass: false,
        });
        return RecipeCheck {
            candidate,
            checks,
            probability_glassy_with: Vec::new(),
        };
    };
    checks.push(LimitCheck {
        limit: Limit::ModelDomain,
        key: "model_domain",
        margin: None,
        unit: "",
        pass: !super::candidate::outside_domain(problem, e),
    });
    for g in gauges(problem, e, candidate.cost_per_kg) {
        let (key, unit, scale) = gauge_key(problem, g.label, g.limit);
        let margin = -g.value * scale;
        checks.push(LimitCheck {
            limit: g.limit,
            key,
            margin: margin.is_finite().then_some(margin),
            unit,
            // The screen's rule: a gauge above 0 breaks its limit.
            pass: g.value <= 0.0,
        });
    }
    let mut probability_glassy_with = Vec::new();
    // Where the probability decides feasibility the cooling-rate gauge is
    // left out (as in the screen): the recipe gets the screen's draws here.
    if let Some(min) = problem.uncertainty.and_then(|u| u.min_probability) {
        let p = crate::composition::Composition::from_mol_percent_array(&x, 1e-6)
            .map_err(|err| err.to_string())
            .and_then(|c| {
                super::probability::recipe_propagation(problem, &c).map_err(|err| err.to_string())
            });
        let probability = p.as_ref().ok().and_then(|p| p.probability_glassy);
        if let Ok(p) = &p {
            probability_glassy_with = p.probability_glassy_at.iter().map(|&v| Some(v)).collect();
        }
        if let Err(err) = &p {
            candidate.error.get_or_insert_with(|| err.clone());
        }
        checks.push(LimitCheck {
            limit: Limit::Probability,
            key: "probability_glassy",
            margin: probability.map(|v| v - min),
            unit: "probability",
            pass: probability.is_some_and(|v| v >= min),
        });
    }
    RecipeCheck {
        candidate,
        checks,
        probability_glassy_with,
    }
}
