//! The screen: search the bounded composition simplex for recipes that vitrify
//! with the user's quench, melt in their furnace and fit their budget.
//!
//! Two passes, both deterministic and addressable by index so a run can be
//! split into chunks (for checkpoints now, for a cluster's job array later):
//! 1. a space-filling pass: Sobol points (Joe & Kuo direction numbers) mapped
//!    into the oxide limits, the balance oxide closing the sum to 100 mol%;
//!    points that break a limit or a linear constraint are counted and skipped;
//! 2. local refinement with Nelder–Mead (argmin) from the best distinct seeds,
//!    on the free oxides, with finite penalties for every violated limit.
//!
//! Then a shortlist of distinct feasible recipes ranked by the objective.
//! No I/O here: `screen_run` stores chunks, shows progress and writes outputs.
//!
//! References
//! - I. M. Sobol', USSR Comput. Math. Math. Phys. 7 (1967) 86–112,
//!   doi:10.1016/0041-5553(67)90144-9; S. Joe, F. Y. Kuo, SIAM J. Sci. Comput.
//!   30 (2008) 2635–2654, doi:10.1137/070709359.
//! - J. A. Nelder, R. Mead, Comput. J. 7 (1965) 308–313, doi:10.1093/comjnl/7.4.308.

use crate::composition::{Composition, Oxide, N_OXIDES};
use crate::config::{ObjectiveKind, RunPlan};
use crate::evaluate::{evaluate_composition, Calibration, Evaluation};
use argmin::core::{CostFunction, Error as ArgminError, Executor, State};
use argmin::solver::neldermead::NelderMead;
use sobol::params::JoeKuoD6;
use sobol::Sobol;

/// The limits a candidate can break.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Hash, PartialOrd, Ord, serde::Serialize)]
#[serde(rename_all = "snake_case")]
pub enum Limit {
    /// The balance oxide or a linear constraint is out of its range.
    CompositionLimits,
    /// The models are used outside their validity domain.
    ModelDomain,
    /// The chain could not be evaluated (e.g. nose below T_g).
    Evaluation,
    /// R_c above equipment rate / safety factor.
    CoolingRate,
    /// Melting temperature (10 Pa·s) above the furnace maximum.
    MeltingTemperature,
    /// Liquidus above furnace maximum − margin.
    Liquidus,
    /// No feasible batch, or cost above the ceiling.
    Cost,
    /// T_g outside the requested range.
    GlassTransition,
    /// Working range outside the requested range.
    WorkingRange,
}

impl Limit {
    /// Every limit, in report order.
    pub const ALL: [Limit; 9] = [
        Limit::CompositionLimits,
        Limit::ModelDomain,
        Limit::Evaluation,
        Limit::CoolingRate,
        Limit::MeltingTemperature,
        Limit::Liquidus,
        Limit::Cost,
        Limit::GlassTransition,
        Limit::WorkingRange,
    ];

    /// A short label.
    pub fn label(self) -> &'static str {
        match self {
            Limit::CompositionLimits => "composition limits",
            Limit::ModelDomain => "model validity domain",
            Limit::Evaluation => "kinetics could not be evaluated",
            Limit::CoolingRate => "critical rate above equipment rate / safety factor",
            Limit::MeltingTemperature => "melting temperature above furnace maximum",
            Limit::Liquidus => "liquidus above furnace maximum minus margin",
            Limit::Cost => "cost above ceiling (or no feasible batch)",
            Limit::GlassTransition => "glass transition outside range",
            Limit::WorkingRange => "working range outside range",
        }
    }
}

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
    pub fn margin_decades(&self, plan: &RunPlan) -> Option<f64> {
        self.evaluation
            .as_ref()
            .map(|e| (plan.equipment_rate.0 / e.critical_rate_k_per_s).log10())
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

/// Free coordinates (all varying oxides but the balance one) ↔ composition.
#[derive(Debug, Clone)]
pub struct Simplex {
    /// (oxide, min, max) of the free oxides.
    pub free: Vec<(Oxide, f64, f64)>,
    /// The oxide that closes the sum, with its limits.
    pub balance: (Oxide, f64, f64),
}

impl Simplex {
    /// The balance oxide is the one with the widest range (ties: the first).
    pub fn new(plan: &RunPlan) -> Self {
        let (bi, _) =
            plan.oxides
                .iter()
                .enumerate()
                .fold((0, f64::NEG_INFINITY), |(bi, bw), (i, o)| {
                    if o.2 - o.1 > bw {
                        (i, o.2 - o.1)
                    } else {
                        (bi, bw)
                    }
                });
        let balance = plan.oxides[bi];
        let free = plan
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
pub fn composition_violation(plan: &RunPlan, x: &[f64; N_OXIDES]) -> f64 {
    let mut v = 0.0;
    for &(o, lo, hi) in &plan.oxides {
        let xi = x[o.index()];
        v += (lo - xi).max(0.0) + (xi - hi).max(0.0);
    }
    for c in &plan.constraints {
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

/// Evaluate one composition against every limit of the plan.
pub fn evaluate_candidate(plan: &RunPlan, index: u64, pass: Pass, x: [f64; N_OXIDES]) -> Candidate {
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
    let off = composition_violation(plan, &x);
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
        &plan.models,
        &comp,
        &plan.kinetic_options,
        None,
        &Calibration::None,
    ) {
        Ok(e) => e,
        Err(err) => {
            c.violations.push((Limit::Evaluation, 1.0));
            c.error = Some(crate::report::first_line(&err.to_string()));
            return c;
        }
    };
    if !plan.allow_extrapolation && (e.viscosity_extrapolated || e.liquidus_extrapolated) {
        c.violations.push((Limit::ModelDomain, 0.5));
    }
    let allowed = plan.allowed_rate().0;
    if e.critical_rate_k_per_s > allowed {
        c.violations.push((
            Limit::CoolingRate,
            (e.critical_rate_k_per_s / allowed).log10(),
        ));
    }
    let tm = e.melting_temperature_k.unwrap_or(f64::INFINITY);
    if tm > plan.furnace_max.0 {
        c.violations
            .push((Limit::MeltingTemperature, (tm - plan.furnace_max.0) / 100.0));
    }
    if e.liquidus_k > plan.liquidus_max.0 {
        c.violations.push((
            Limit::Liquidus,
            (e.liquidus_k - plan.liquidus_max.0) / 100.0,
        ));
    }
    if let Some((lo, hi)) = plan.glass_transition_bounds {
        let t = e.glass_transition_k;
        if t < lo.0 || t > hi.0 {
            c.violations
                .push((Limit::GlassTransition, ((lo.0 - t).max(t - hi.0)) / 100.0));
        }
    }
    if let Some((lo, hi)) = plan.working_range_bounds_k {
        let w = e.working_point_k.unwrap_or(0.0) - e.softening_point_k.unwrap_or(0.0);
        if w < lo || w > hi {
            c.violations
                .push((Limit::WorkingRange, ((lo - w).max(w - hi)) / 100.0));
        }
    }
    if let Some((model, max, _)) = &plan.cost {
        match model.cost_per_kg_glass(&comp) {
            Ok(cost) => {
                c.cost_per_kg = Some(cost);
                if cost > *max {
                    c.violations.push((Limit::Cost, (cost - max) / max));
                }
            }
            Err(err) => {
                c.violations.push((Limit::Cost, 1.0));
                c.error = Some(crate::report::first_line(&err.to_string()));
            }
        }
    }
    let margin = (plan.equipment_rate.0 / e.critical_rate_k_per_s).log10();
    let w = plan.weights;
    c.objective = match plan.objective {
        ObjectiveKind::Margin => -margin,
        ObjectiveKind::Cost => c.cost_per_kg.unwrap_or(f64::INFINITY),
        ObjectiveKind::MeltingTemperature => tm,
        ObjectiveKind::Blend => {
            -w.margin * margin
                + w.cost * c.cost_per_kg.unwrap_or(0.0)
                + w.melting_temperature * tm / 100.0
        }
    };
    c.evaluation = Some(e);
    c
}

/// SplitMix64 (Steele, Lea & Flood 2014): a seed → well-mixed 64-bit numbers.
fn splitmix64(mut z: u64) -> u64 {
    z = z.wrapping_add(0x9e3779b97f4a7c15);
    z = (z ^ (z >> 30)).wrapping_mul(0xbf58476d1ce4e5b9);
    z = (z ^ (z >> 27)).wrapping_mul(0x94d049bb133111eb);
    z ^ (z >> 31)
}

/// The unit-cube points of one chunk of the space-filling pass: a Sobol sequence
/// randomised by the seed with a Cranley–Patterson rotation (u + s mod 1, one
/// shift s per dimension; Cranley & Patterson 1976, SIAM J. Numer. Anal. 13, 904).
pub fn sobol_points(dims: usize, seed: u64, start: usize, count: usize) -> Vec<Vec<f64>> {
    let shift: Vec<f64> = (0..dims)
        .map(|d| (splitmix64(seed ^ splitmix64(d as u64)) >> 11) as f64 / (1u64 << 53) as f64)
        .collect();
    Sobol::<f64>::new(dims.max(1), &JoeKuoD6::minimal())
        .skip(start)
        .take(count)
        .map(|u| u.iter().zip(&shift).map(|(u, s)| (u + s).fract()).collect())
        .collect()
}

/// Evaluate chunk `k` of the space-filling pass (points k·size … (k+1)·size − 1).
pub fn space_filling_chunk(plan: &RunPlan, simplex: &Simplex, k: usize) -> Vec<Candidate> {
    use rayon::prelude::*;
    let start = k * plan.chunk_size;
    let count = plan
        .chunk_size
        .min(plan.first_pass_points.saturating_sub(start));
    let pts = sobol_points(simplex.dims(), plan.seed, start, count);
    pts.par_iter()
        .enumerate()
        .map(|(j, u)| {
            let x = simplex.compose(&simplex.from_unit(u));
            evaluate_candidate(plan, (start + j) as u64, Pass::SpaceFilling, x)
        })
        .collect()
}

/// Number of chunks in the space-filling pass.
pub fn chunk_count(plan: &RunPlan) -> usize {
    plan.first_pass_points.div_ceil(plan.chunk_size)
}

/// Squared Euclidean distance of two compositions in mol%.
pub fn dist2(a: &[f64; N_OXIDES], b: &[f64; N_OXIDES]) -> f64 {
    a.iter().zip(b).map(|(x, y)| (x - y) * (x - y)).sum()
}

struct RefineProblem<'a> {
    plan: &'a RunPlan,
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
        Ok(evaluate_candidate(self.plan, 0, Pass::Refinement, x).penalised())
    }
}

/// Refine one seed with Nelder–Mead; returns the best point found, evaluated,
/// and the number of evaluations the refinement used.
///
/// # Errors
/// argmin refuses the start simplex (never for a valid plan).
pub fn refine(
    plan: &RunPlan,
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
    let problem = RefineProblem {
        plan,
        simplex,
        evaluations: 0.into(),
    };
    let res = Executor::new(problem, solver)
        .configure(|s| s.max_iters(plan.refine_iterations))
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
        evaluate_candidate(plan, 1_000_000 * (seed_no as u64 + 1), Pass::Refinement, x),
        evaluations + 1,
    ))
}

/// How many candidates broke each limit, and how many broke only that one.
#[derive(Debug, Clone, Default, PartialEq, serde::Serialize)]
pub struct LimitSummary {
    /// Distinct candidates kept (first-pass points and refined optima).
    pub evaluated: usize,
    /// Chain evaluations spent, refinement steps included.
    pub evaluations: usize,
    pub feasible: usize,
    /// (limit, candidates breaking it, candidates breaking only it)
    pub by_limit: Vec<(Limit, usize, usize)>,
}

/// A candidate flattened for storage (checkpoints, tables): non-finite numbers
/// become `None`, so the JSON checkpoint round-trips exactly.
#[derive(Debug, Clone, PartialEq, serde::Serialize, serde::Deserialize)]
pub struct Row {
    pub index: u64,
    pub refined: bool,
    pub mol_pct: Vec<f64>,
    pub feasible: bool,
    /// Broken limits, `;`-separated labels.
    pub broken: String,
    /// Objective value plus penalties (lower is better).
    pub penalised: Option<f64>,
    pub objective: Option<f64>,
    pub critical_rate_k_per_s: Option<f64>,
    pub nose_rate_k_per_s: Option<f64>,
    pub margin_decades: Option<f64>,
    pub melting_temperature_k: Option<f64>,
    pub liquidus_k: Option<f64>,
    pub primary_phase: Option<String>,
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
    pub fn new(c: &Candidate, plan: &RunPlan) -> Row {
        let e = c.evaluation.as_ref();
        Row {
            index: c.index,
            refined: c.pass == Pass::Refinement,
            mol_pct: c.mol_pct.to_vec(),
            feasible: c.feasible(),
            broken: c
                .violations
                .iter()
                .map(|v| v.0.label())
                .collect::<Vec<_>>()
                .join("; "),
            penalised: finite(c.penalised()),
            objective: finite(c.objective),
            critical_rate_k_per_s: e.and_then(|e| finite(e.critical_rate_k_per_s)),
            nose_rate_k_per_s: e.and_then(|e| finite(e.nose_rate_k_per_s)),
            margin_decades: c.margin_decades(plan).and_then(finite),
            melting_temperature_k: e.and_then(|e| e.melting_temperature_k).and_then(finite),
            liquidus_k: e.and_then(|e| finite(e.liquidus_k)),
            primary_phase: e.and_then(|e| e.primary_phase.clone()),
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

/// Pick up to `n` rows, best first by `key`, no two closer than `min_dist` mol%.
pub fn distinct_rows(
    rows: &[Row],
    n: usize,
    min_dist: f64,
    usable: impl Fn(&Row) -> bool,
    key: impl Fn(&Row) -> f64,
) -> Vec<&Row> {
    let mut order: Vec<&Row> = rows.iter().filter(|r| usable(r)).collect();
    order.sort_by(|a, b| {
        key(a)
            .total_cmp(&key(b))
            .then(a.refined.cmp(&b.refined))
            .then(a.index.cmp(&b.index))
    });
    let mut out: Vec<&Row> = Vec::new();
    for r in order {
        if out.len() >= n {
            break;
        }
        let x = r.composition();
        if out
            .iter()
            .all(|o| dist2(&o.composition(), &x) >= min_dist * min_dist)
        {
            out.push(r);
        }
    }
    out
}

impl LimitSummary {
    /// Count one stored row: evaluated, feasible, and each limit it breaks
    /// (alone or with others). Limits stay in [`Limit::ALL`] order.
    pub fn add(&mut self, r: &Row) {
        self.evaluated += 1;
        self.evaluations += r.evaluations;
        if r.feasible {
            self.feasible += 1;
        }
        for l in Limit::ALL {
            let label = l.label();
            if !r.broken.split("; ").any(|b| b == label) {
                continue;
            }
            let only = usize::from(r.broken == label);
            match self.by_limit.iter_mut().find(|e| e.0 == l) {
                Some(e) => {
                    e.1 += 1;
                    e.2 += only;
                }
                None => {
                    self.by_limit.push((l, 1, only));
                    self.by_limit.sort_by_key(|e| e.0);
                }
            }
        }
    }
}
