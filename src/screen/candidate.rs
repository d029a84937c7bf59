//! One candidate: a composition evaluated through the chain and checked
//! against every limit of the problem, with its objective; and the flat
//! [`Row`] it is stored as (checkpoints, tables).

use super::limits::{Limit, LimitSet};
use super::problem::{ObjectiveKind, ScreenProblem};
use super::simplex::composition_violation;
use crate::assess::{
    add_glassy_thickness, evaluate_composition, Calibration, Evaluation, SlabQuench,
};
use crate::composition::{Composition, N_OXIDES};
use crate::error::Error;

/// Which pass produced a candidate.
#[derive(Debug, Clone, Copy, PartialEq, Eq, serde::Serialize)]
#[serde(rename_all = "snake_case")]
pub enum Pass {
    SpaceFilling,
    Refinement,
}

/// One evaluated composition.
#[derive(Debug, Clone, PartialEq, serde::Serialize)]
pub struct Candidate {
    /// Sobol index (space-filling) or seed number × 1e6 + step (refinement).
    pub index: u64,
    pub pass: Pass,
    pub mol_pct: [f64; N_OXIDES],
    pub evaluation: Option<Evaluation>,
    pub cost_per_kg: Option<f64>,
    /// Broken limits with a normalised amount (0 = just at the limit).
    pub violations: Vec<(Limit, f64)>,
    /// Objective value, lower is better (only meaningful when feasible).
    pub objective: f64,
    pub error: Option<String>,
}

impl Candidate {
    /// No limit broken.
    pub fn feasible(&self) -> bool {
        self.violations.is_empty()
    }

    /// log10(R_equipment / R_c) in decades.
    pub fn margin_decades(&self, problem: &ScreenProblem) -> Option<f64> {
        self.evaluation
            .as_ref()
            .map(|e| (problem.equipment.rate.0 / e.critical_rate_k_per_s).log10())
    }

    /// Objective plus finite penalties: what the optimiser minimises.
    pub fn penalised(&self) -> f64 {
        let p: f64 = self.violations.iter().map(|(_, a)| 1.0 + a.min(1e3)).sum();
        let base = if self.objective.is_finite() {
            self.objective
        } else {
            0.0
        };
        base + 1e3 * p
    }
}

/// Evaluate one composition against every limit of the problem.
pub fn evaluate_candidate(
    problem: &ScreenProblem,
    index: u64,
    pass: Pass,
    x: [f64; N_OXIDES],
) -> Candidate {
    evaluate_candidate_with(problem, index, pass, x, None)
}

/// As [`evaluate_candidate`], with the glassy-slab estimate for a plate
/// quench (what the shortlist's sheets and the report show).
pub fn evaluate_candidate_with(
    problem: &ScreenProblem,
    index: u64,
    pass: Pass,
    x: [f64; N_OXIDES],
    slab: Option<SlabQuench>,
) -> Candidate {
    let mut c = Candidate {
        index,
        pass,
        mol_pct: x,
        evaluation: None,
        cost_per_kg: None,
        violations: Vec::new(),
        objective: f64::INFINITY,
        error: None,
    };
    let off = composition_violation(problem, &x);
    if off > 1e-9 {
        c.violations.push((Limit::CompositionLimits, off));
        return c;
    }
    let comp = match Composition::from_mol_percent_array(&x, 1e-6) {
        Ok(c) => c,
        Err(e) => {
            c.violations.push((Limit::CompositionLimits, 1.0));
            c.error = Some(e.to_string());
            return c;
        }
    };
    let e = match evaluate_composition(
        &problem.models,
        &comp,
        &problem.kinetic_options,
        slab,
        &Calibration::None,
    ) {
        Ok(e) => e,
        Err(err) => {
            c.violations.push((Limit::Evaluation, 1.0));
            c.error = Some(Error::from(err).message().to_string());
            return c;
        }
    };
    if !problem.allow_extrapolation && (e.viscosity_extrapolated || e.liquidus_extrapolated) {
        c.violations.push((Limit::ModelDomain, 0.5));
    }
    let allowed = problem.allowed_rate().0;
    if e.critical_rate_k_per_s > allowed {
        c.violations.push((
            Limit::CoolingRate,
            (e.critical_rate_k_per_s / allowed).log10(),
        ));
    }
    let tm = e.melting_temperature_k.unwrap_or(f64::INFINITY);
    if tm > problem.melting_max.0 {
        c.violations.push((
            Limit::MeltingTemperature,
            (tm - problem.melting_max.0) / 100.0,
        ));
    }
    if e.liquidus_k > problem.liquidus_max.0 {
        c.violations.push((
            Limit::Liquidus,
            (e.liquidus_k - problem.liquidus_max.0) / 100.0,
        ));
    }
    if let Some((lo, hi)) = problem.glass_transition_bounds {
        let t = e.glass_transition_k;
        if t < lo.0 || t > hi.0 {
            c.violations
                .push((Limit::GlassTransition, ((lo.0 - t).max(t - hi.0)) / 100.0));
        }
    }
    if let Some((lo, hi)) = problem.working_range_bounds_k {
        let w = e.working_point_k.unwrap_or(0.0) - e.softening_point_k.unwrap_or(0.0);
        if w < lo || w > hi {
            c.violations
                .push((Limit::WorkingRange, ((lo - w).max(w - hi)) / 100.0));
        }
    }
    if let Some(limit) = &problem.cost {
        let max = limit.max_per_kg;
        match limit.model.cost_per_kg_glass(&comp) {
            Ok(cost) => {
                c.cost_per_kg = Some(cost);
                if cost > max {
                    c.violations.push((Limit::Cost, (cost - max) / max));
                }
            }
            Err(err) => {
                c.violations.push((Limit::Cost, 1.0));
                c.error = Some(err.message().to_string());
            }
        }
    }
    let mut e = e;
    let uses_margin = match problem.objective {
        ObjectiveKind::Margin => true,
        ObjectiveKind::Blend => problem.weights.margin != 0.0,
        _ => false,
    };
    if uses_margin && c.violations.is_empty() && e.max_glassy_thickness_mm.is_none() {
        // Whether the model can vouch for a feasible recipe decides its rank.
        if let Err(err) = add_glassy_thickness(&mut e, SlabQuench::default()) {
            e.warnings
                .push(format!("glassy thickness not computed: {err}"));
        }
    }
    let cap = problem.margin_cap_decades;
    let margin = (problem.equipment.rate.0 / e.critical_rate_k_per_s)
        .log10()
        .min(cap);
    // Recipes the model cannot vouch for rank after every recipe it can.
    let unvouched = if e.vouched { 0.0 } else { cap + 1.0 };
    let w = problem.weights;
    c.objective = match problem.objective {
        ObjectiveKind::Margin => -margin + unvouched,
        ObjectiveKind::Cost => c.cost_per_kg.unwrap_or(f64::INFINITY),
        ObjectiveKind::MeltingTemperature => tm,
        ObjectiveKind::Blend => {
            -w.margin * (margin - unvouched)
                + w.cost * c.cost_per_kg.unwrap_or(0.0)
                + w.melting_temperature * tm / 100.0
        }
    };
    c.evaluation = Some(e);
    c
}

/// A candidate flattened for storage (checkpoints, tables): non-finite numbers
/// become `None`, so the JSON checkpoint round-trips exactly.
#[derive(Debug, Clone, PartialEq, serde::Serialize, serde::Deserialize)]
pub struct Row {
    pub index: u64,
    pub refined: bool,
    pub mol_pct: Vec<f64>,
    pub feasible: bool,
    /// The limits it breaks.
    pub broken: LimitSet,
    /// Objective value plus penalties (lower is better).
    pub penalised: Option<f64>,
    pub objective: Option<f64>,
    pub critical_rate_k_per_s: Option<f64>,
    pub nose_rate_k_per_s: Option<f64>,
    pub margin_decades: Option<f64>,
    pub melting_temperature_k: Option<f64>,
    pub liquidus_k: Option<f64>,
    pub primary_phase: Option<String>,
    /// The phase with the largest share of the crystallised volume at R_c.
    pub limiting_phase: Option<String>,
    /// R_c, nose time and glassy thickness are within what the model can vouch for.
    pub vouched: Option<bool>,
    pub glass_transition_k: Option<f64>,
    pub working_point_k: Option<f64>,
    pub softening_point_k: Option<f64>,
    pub cost_per_kg: Option<f64>,
    pub warnings: String,
    pub error: Option<String>,
    /// Evaluations this row stands for (1, or a refinement's count).
    pub evaluations: usize,
}

fn finite(x: f64) -> Option<f64> {
    x.is_finite().then_some(x)
}

impl Row {
    /// Flatten a candidate.
    pub fn new(c: &Candidate, problem: &ScreenProblem) -> Row {
        let e = c.evaluation.as_ref();
        Row {
            index: c.index,
            refined: c.pass == Pass::Refinement,
            mol_pct: c.mol_pct.to_vec(),
            feasible: c.feasible(),
            broken: c.violations.iter().map(|v| v.0).collect(),
            penalised: finite(c.penalised()),
            objective: finite(c.objective),
            critical_rate_k_per_s: e.and_then(|e| finite(e.critical_rate_k_per_s)),
            nose_rate_k_per_s: e.and_then(|e| finite(e.nose_rate_k_per_s)),
            margin_decades: c.margin_decades(problem).and_then(finite),
            melting_temperature_k: e.and_then(|e| e.melting_temperature_k).and_then(finite),
            liquidus_k: e.and_then(|e| finite(e.liquidus_k)),
            primary_phase: e.and_then(|e| e.primary_phase.clone()),
            limiting_phase: e.map(|e| e.limiting_phase.clone()),
            vouched: e.map(|e| e.vouched),
            glass_transition_k: e.and_then(|e| finite(e.glass_transition_k)),
            working_point_k: e.and_then(|e| e.working_point_k).and_then(finite),
            softening_point_k: e.and_then(|e| e.softening_point_k).and_then(finite),
            cost_per_kg: c.cost_per_kg.and_then(finite),
            warnings: e.map(|e| e.warnings.join("; ")).unwrap_or_default(),
            error: c.error.clone(),
            evaluations: 1,
        }
    }

    /// The composition as an array.
    pub fn composition(&self) -> [f64; N_OXIDES] {
        std::array::from_fn(|i| self.mol_pct.get(i).copied().unwrap_or(0.0))
    }
}
