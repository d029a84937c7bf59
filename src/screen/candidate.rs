//! One candidate: a composition evaluated through the chain and checked
//! against every limit of the problem, with its objective; and the flat
//! [`Row`] it is stored as (checkpoints, tables).

use super::limits::{Limit, LimitSet};
use super::polytope::ACTIVE_TOL_MOL_PCT;
use super::problem::{ObjectiveKind, ScreenProblem};
use super::simplex::composition_violation;
use crate::assess::{
    add_glassy_thickness, evaluate_composition, Calibration, Evaluation, SlabQuench,
    VOUCH_CRITICAL_RATE_K_PER_S, VOUCH_NOSE_TIME_S, VOUCH_THICKNESS_MM,
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
    /// The limits a feasible candidate sits on ("SiO2 min", "Na2O + K2O
    /// cap", "liquidus"); empty for infeasible candidates.
    pub binding: Vec<String>,
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

/// One nonlinear limit at a composition: its value scaled so that 0 is just at
/// the limit and one unit is a decade of R_c, 100 K, or the whole cost
/// ceiling (≤ 0: met), and the name a scientist reads when it binds.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Gauge {
    pub limit: Limit,
    pub label: &'static str,
    pub value: f64,
}

/// A composition through the chain, before any limit is judged.
pub(crate) struct Measured {
    pub evaluation: Evaluation,
    /// Cost per kg of glass when the problem prices glasses (Err: no batch).
    pub cost: Option<Result<f64, String>>,
}

/// Why a composition could not be measured.
pub(crate) enum Unmeasured {
    /// Not a composition (e.g. a negative amount).
    Composition(String),
    /// The chain failed.
    Evaluation(String),
}

/// Run the chain on a composition, whatever the composition limits say.
pub(crate) fn measure(
    problem: &ScreenProblem,
    x: &[f64; N_OXIDES],
    slab: Option<SlabQuench>,
) -> Result<Measured, Unmeasured> {
    let comp = Composition::from_mol_percent_array(x, 1e-6)
        .map_err(|e| Unmeasured::Composition(e.to_string()))?;
    let evaluation = evaluate_composition(
        &problem.models,
        &comp,
        &problem.kinetic_options,
        slab,
        &Calibration::None,
    )
    .map_err(|err| Unmeasured::Evaluation(Error::from(err).message().to_string()))?;
    let cost = problem.cost.as_ref().map(|limit| {
        limit
            .model
            .cost_per_kg_glass(&comp)
            .map_err(|err| err.message().to_string())
    });
    Ok(Measured { evaluation, cost })
}

/// The nonlinear limits of a problem at an evaluation, always the same ones
/// in the same order for a problem (the cost gauge is `None`-valued, i.e.
/// missing, when the batch cannot be made).
pub(crate) fn gauges(problem: &ScreenProblem, e: &Evaluation, cost: Option<f64>) -> Vec<Gauge> {
    let mut g = Vec::with_capacity(8);
    // With a least probability of a glass the Monte Carlo stage judges the
    // critical rate, not the safety factor (screen::probability).
    if !problem.probability_decides() {
        let allowed = problem.allowed_rate().0;
        g.push(Gauge {
            limit: Limit::CoolingRate,
            label: "critical rate",
            value: (e.critical_rate_k_per_s / allowed).log10(),
        });
    }
    let tm = e.melting_temperature_k.unwrap_or(f64::INFINITY);
    g.push(Gauge {
        limit: Limit::MeltingTemperature,
        label: "melting temperature",
        value: (tm - problem.melting_max.0) / 100.0,
    });
    g.push(Gauge {
        limit: Limit::Liquidus,
        label: "liquidus",
        value: (e.liquidus_k - problem.liquidus_max.0) / 100.0,
    });
    if let Some((lo, hi)) = problem.glass_transition_bounds {
        let t = e.glass_transition_k;
        g.push(Gauge {
            limit: Limit::GlassTransition,
            label: "T_g min",
            value: (lo.0 - t) / 100.0,
        });
        g.push(Gauge {
            limit: Limit::GlassTransition,
            label: "T_g max",
            value: (t - hi.0) / 100.0,
        });
    }
    if let Some((lo, hi)) = problem.working_range_bounds_k {
        let w = e.working_point_k.unwrap_or(0.0) - e.softening_point_k.unwrap_or(0.0);
        g.push(Gauge {
            limit: Limit::WorkingRange,
            label: "working range min",
            value: (lo - w) / 100.0,
        });
        g.push(Gauge {
            limit: Limit::WorkingRange,
            label: "working range max",
            value: (w - hi) / 100.0,
        });
    }
    if let Some(limit) = &problem.cost {
        let max = limit.max_per_kg;
        g.push(Gauge {
            limit: Limit::Cost,
            label: "cost ceiling",
            value: cost.map(|c| (c - max) / max).unwrap_or(f64::INFINITY),
        });
    }
    g
}

/// Whether an evaluation breaks the model-domain limit: the models are
/// extrapolated and the problem does not allow it.
pub(crate) fn outside_domain(problem: &ScreenProblem, e: &Evaluation) -> bool {
    !problem.allow_extrapolation && (e.viscosity_extrapolated || e.liquidus_extrapolated)
}

/// Whether the objective ranks recipes by their margin (and so ranks those
/// the model cannot vouch for last).
pub(crate) fn uses_margin(problem: &ScreenProblem) -> bool {
    match problem.objective {
        ObjectiveKind::Margin => true,
        ObjectiveKind::Blend => problem.weights.margin != 0.0,
        _ => false,
    }
}

/// What the model can vouch for (see `assess::VOUCH_NOSE_TIME_S`) as gauges
/// in decades (≤ 0: vouched): nose time, glassy slab (when computed) and the
/// lowest critical rate. With a margin objective the best recipes often sit
/// on one of these, so the refinement treats them as constraints.
pub(crate) fn vouch_gauges(e: &Evaluation) -> Vec<Gauge> {
    let slab = e.max_glassy_thickness_mm.unwrap_or(0.0);
    vec![
        Gauge {
            limit: Limit::Evaluation,
            label: "vouched nose time (1 day)",
            value: (e.nose_time_s / VOUCH_NOSE_TIME_S).log10(),
        },
        Gauge {
            limit: Limit::Evaluation,
            label: "vouched glassy slab (100 mm)",
            value: if slab > 0.0 {
                (slab / VOUCH_THICKNESS_MM).log10()
            } else {
                -10.0
            },
        },
        Gauge {
            limit: Limit::Evaluation,
            label: "vouched critical rate (1e-3 K/s)",
            value: (VOUCH_CRITICAL_RATE_K_PER_S / e.critical_rate_k_per_s).log10(),
        },
    ]
}

/// The validity boxes of the viscosity model and of the primary phase's
/// liquidus surface at a composition: the signed distance to their nearest
/// face in mol% (< 0 inside, > 0 outside) and the faces within `tol` mol%
/// ("Na2O max of the wollastonite liquidus").
pub(crate) fn domain_distance(
    problem: &ScreenProblem,
    x: &[f64; N_OXIDES],
    primary_phase: Option<&str>,
    tol: f64,
) -> (f64, Vec<String>) {
    let mut boxes = vec![(
        &problem.models.viscosity.domain,
        "viscosity model".to_string(),
    )];
    if let Some(p) = primary_phase.and_then(|n| problem.models.phases.iter().find(|p| p.name == n))
    {
        boxes.push((&p.domain, format!("{} liquidus", p.name)));
    }
    let mut worst = f64::NEG_INFINITY;
    let mut faces = Vec::new();
    for (d, what) in boxes {
        for o in crate::composition::Oxide::ALL {
            let i = o.index();
            for (v, side) in [(d.min[i] - x[i], "min"), (x[i] - d.max[i], "max")] {
                // Faces at 0 or 100 mol% are no model limit worth naming, nor
                // is a model's "none of this oxide" ([0, 0], as a fitted
                // model gives the oxides its data lack) for a recipe without it.
                let trivial = (side == "min" && d.min[i] <= 0.0)
                    || (side == "max" && d.max[i] >= 100.0)
                    || (side == "max" && d.max[i] <= 0.0 && x[i] <= 0.0);
                if trivial {
                    continue;
                }
                worst = worst.max(v);
                if v >= -tol {
                    faces.push(format!("{o} {side} of the {what}"));
                }
            }
        }
    }
    (worst, faces)
}

/// Tolerance below which a nonlinear gauge counts as binding (scaled units:
/// 10⁻³ decade of R_c, 0.1 K, 0.1 % of the cost ceiling).
pub const BINDING_GAUGE_TOL: f64 = 1e-3;

/// The limits a composition sits on: oxide limits and linear constraints
/// within [`ACTIVE_TOL_MOL_PCT`], model validity faces within the same, and
/// nonlinear gauges within [`BINDING_GAUGE_TOL`] of their limit.
pub(crate) fn binding_labels(
    problem: &ScreenProblem,
    x: &[f64; N_OXIDES],
    gauges: &[Gauge],
    domain_faces: &[String],
) -> Vec<String> {
    let tol = ACTIVE_TOL_MOL_PCT;
    let mut out = Vec::new();
    for &(o, lo, hi) in &problem.oxides {
        let v = x[o.index()];
        if lo < hi {
            if v - lo <= tol {
                out.push(format!("{o} min"));
            }
            if hi - v <= tol {
                out.push(format!("{o} max"));
            }
        }
    }
    for c in &problem.constraints {
        let s: f64 = c.weights.iter().zip(x).map(|(w, x)| w * x).sum();
        if c.min.is_some_and(|m| s - m <= tol) {
            out.push(format!("{} min", c.text));
        }
        if c.max.is_some_and(|m| m - s <= tol) {
            out.push(format!("{} cap", c.text));
        }
    }
    for g in gauges {
        if g.value >= -BINDING_GAUGE_TOL && g.value <= BINDING_GAUGE_TOL {
            out.push(g.label.to_string());
        }
    }
    if !problem.allow_extrapolation {
        out.extend(domain_faces.iter().cloned());
    }
    out
}

/// The objective of an evaluation (lower is better). With a margin objective
/// and `judge_vouching`, the glassy slab is added first so whether the model
/// can vouch for the recipe decides its rank.
pub(crate) fn objective(
    problem: &ScreenProblem,
    e: &mut Evaluation,
    cost: Option<f64>,
    judge_vouching: bool,
) -> f64 {
    if uses_margin(problem) && judge_vouching && e.max_glassy_thickness_mm.is_none() {
        if let Err(err) = add_glassy_thickness(e, SlabQuench::default()) {
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
    let tm = e.melting_temperature_k.unwrap_or(f64::INFINITY);
    let w = problem.weights;
    match problem.objective {
        ObjectiveKind::Margin => -margin + unvouched,
        ObjectiveKind::Cost => cost.unwrap_or(f64::INFINITY),
        ObjectiveKind::MeltingTemperature => tm,
        ObjectiveKind::Blend => {
            -w.margin * (margin - unvouched)
                + w.cost * cost.unwrap_or(0.0)
                + w.melting_temperature * tm / 100.0
        }
        // The point estimate's margin, uncapped, orders the search; the
        // Monte Carlo stage ranks the recipes it keeps by their probability.
        ObjectiveKind::Probability => -(problem.equipment.rate.0 / e.critical_rate_k_per_s).log10(),
    }
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
        binding: Vec::new(),
    };
    let off = composition_violation(problem, &x);
    if off > 1e-9 {
        c.violations.push((Limit::CompositionLimits, off));
        return c;
    }
    let Measured {
        evaluation: mut e,
        cost,
        ..
    } = match measure(problem, &x, slab) {
        Ok(m) => m,
        Err(Unmeasured::Composition(err)) => {
            c.violations.push((Limit::CompositionLimits, 1.0));
            c.error = Some(err);
            return c;
        }
        Err(Unmeasured::Evaluation(err)) => {
            c.violations.push((Limit::Evaluation, 1.0));
            c.error = Some(err);
            return c;
        }
    };
    if outside_domain(problem, &e) {
        c.violations.push((Limit::ModelDomain, 0.5));
    }
    let cost_value = match cost {
        Some(Ok(v)) => {
            c.cost_per_kg = Some(v);
            Some(v)
        }
        Some(Err(err)) => {
            c.error = Some(err);
            None
        }
        None => None,
    };
    let gs = gauges(problem, &e, cost_value);
    for g in &gs {
        if g.value > 0.0 {
            // Each limit once (a range gives two gauges, one at most broken).
            let amount = if g.limit == Limit::Cost && cost_value.is_none() {
                1.0
            } else {
                g.value
            };
            c.violations.push((g.limit, amount));
        }
    }
    c.objective = objective(problem, &mut e, cost_value, c.violations.is_empty());
    if c.violations.is_empty() {
        let (_, faces) =
            domain_distance(problem, &x, e.primary_phase.as_deref(), ACTIVE_TOL_MOL_PCT);
        let mut gs = gs;
        if uses_margin(problem) && e.vouched {
            gs.extend(vouch_gauges(&e));
        }
        c.binding = binding_labels(problem, &x, &gs, &faces);
    }
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
    /// The limits a feasible recipe sits on, joined with ", ".
    #[serde(default)]
    pub binding: String,
    /// P(glassy at the equipment rate), for the recipes the Monte Carlo
    /// stage drew (screen::probability); None for the others.
    #[serde(default)]
    pub probability_glassy: Option<f64>,
    /// The 5 % quantile of the drawn critical rates, K/s.
    #[serde(default)]
    pub critical_rate_p05_k_per_s: Option<f64>,
    /// The 95 % quantile of the drawn critical rates, K/s.
    #[serde(default)]
    pub critical_rate_p95_k_per_s: Option<f64>,
    /// Both ends of the 5–95 % band lie within what the model can vouch for
    /// (`assess::VOUCH_CRITICAL_RATE_K_PER_S`).
    #[serde(default)]
    pub band_vouched: Option<bool>,
    /// How the probability was obtained: "draws" (the Monte Carlo) or
    /// "corner" (the least glass-friendly corner of the draws is glassy, so
    /// every draw is: P = 1 without drawing).
    #[serde(default)]
    pub probability_from: Option<String>,
    /// A one-sided 95 % lower bound on `probability_glassy`
    /// (`uncertainty::probability_lower95`: 1 − 3/N where every draw is
    /// glassy, else Wilson's score bound).
    #[serde(default)]
    pub probability_glassy_lower95: Option<f64>,
    /// P(R_c ≤ rate) of every quench option from the same draws, the
    /// deciding one first, then as listed (`ScreenProblem::equipment_options`);
    /// None for an option the draws say nothing of; empty for a recipe not
    /// drawn.
    #[serde(default)]
    pub probability_glassy_with: Vec<Option<f64>>,
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
            binding: c.binding.join(", "),
            probability_glassy: None,
            critical_rate_p05_k_per_s: None,
            critical_rate_p95_k_per_s: None,
            band_vouched: None,
            probability_from: None,
            probability_glassy_lower95: None,
            probability_glassy_with: Vec::new(),
        }
    }

    /// The composition as an array.
    pub fn composition(&self) -> [f64; N_OXIDES] {
        std::array::from_fn(|i| self.mol_pct.get(i).copied().unwrap_or(0.0))
    }
}
