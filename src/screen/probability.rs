//! The Monte Carlo stage of a screen: the probability that a recipe comes out
//! glassy at the equipment rate, P(R_c ≤ R), from the same seeded draws of
//! the model set's uncertain inputs for every recipe (`uncertainty`), for the
//! recipes the point-estimate search kept — and only for those that could
//! still make the shortlist.
//!
//! The rule (docs/science.md, "Uncertainty in the screen"): where every
//! uncertain input moves R_c one way (each α raises the barrier: R_c falls;
//! more pre-existing nuclei: R_c rises), a draw that is on the crystalline
//! side of a corner point θ^c in every coordinate has an R_c at least that
//! of the corner. So one evaluation at the corner bounds the probability:
//! if R_c(θ^c) > R, P ≤ 1 − W(θ^c)/N, W the number of draws the corner
//! dominates. A recipe is drawn unless that bound puts it strictly below
//! the probability of the last shortlisted recipe (or below
//! `min_probability`); the bounds are checked again against the final
//! shortlist, so the result is the one drawing every recipe gives.
//! No I/O.

use super::candidate::Row;
use super::problem::{ObjectiveKind, ScreenProblem, ScreenUncertainty};
use super::select::{objective_key, rank};
use super::simplex::dist2;
use crate::assess::{evaluate_composition, Calibration, SlabQuench};
use crate::composition::{Composition, N_OXIDES};
use crate::error::Error;
use crate::uncertainty::melt::{
    composition_critical_rate, inputs_of, model_set_inputs, Target, Uncertain,
};
use crate::uncertainty::{
    probability_lower95, share_glassy, Drawn, Propagation, Settings, UncertaintyError,
};
use rayon::prelude::*;

/// A corner's R_c must exceed the equipment rate by this much (decades)
/// before the bound is used: far above the error of the critical-rate
/// solve, so a numerically non-monotone last digit cannot break the bound.
pub const CORNER_MARGIN_DECADES: f64 = 0.01;

/// Which recipes the stage draws.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Default)]
pub enum Preselection {
    /// Only those the bound cannot rule out (the default).
    #[default]
    Bounded,
    /// Every feasible recipe kept (to check the bound; slow).
    Full,
}

/// What the stage found.
#[derive(Debug, Clone, Default)]
pub struct ProbabilityOutcome {
    /// The shortlist, best first, with the probability columns filled.
    pub picks: Vec<Row>,
    /// Every recipe with a probability (drawn, or certain), in the point
    /// estimate's rank order.
    pub drawn: Vec<Row>,
    /// Feasible recipes the stage looked at.
    pub considered: usize,
    /// Recipes known to fall below `min_probability` (drawn, or bounded).
    pub below_min: usize,
    /// Recipes left undrawn because their bound keeps them off the shortlist.
    pub bounded_out: usize,
    /// Recipes left undrawn because the least glass-friendly corner is
    /// glassy, so every draw is (P = 1; in `drawn` without a band).
    pub certain: usize,
    /// Evaluations at corners spent on bounds.
    pub corner_evaluations: usize,
    /// Whether every input moves R_c one way, so that bounds apply.
    pub monotone: bool,
    /// Draws that failed, and the first reason (the recipe is then not glassy
    /// enough to count, see `uncertainty::MAX_FAILED_SHARE`).
    pub failures: Vec<String>,
    /// Ranked by probability: the largest bound on the probability of a
    /// feasible recipe the search let go before this stage (None: it let
    /// none go).
    pub let_go_bound: Option<f64>,
    /// Ranked by probability: whether every recipe let go is bounded off
    /// the shortlist, so that the shortlist is the one drawing every
    /// feasible recipe of the screen gives (None for other rankings).
    pub pool_exact: Option<bool>,
    /// Ranked by the objective (not by probability): whether the search let
    /// go feasible recipes before this stage (its pool holds the best by the
    /// objective only).
    pub objective_let_go: bool,
    /// Ranked by the objective: the pool the search kept could not prove the
    /// shortlist (fewer than K picks, or the last pick ranks after a recipe
    /// let go), so the stage walked every feasible recipe of the screen
    /// again (`screen::run`).
    pub walked_every_feasible: bool,
}

/// The screen's draws, made once for a run (docs/science.md, "Uncertainty
/// in the screen"): the model set's uncertain inputs, their N seeded draws
/// (the same for every recipe), the centre, and — where every input moves
/// R_c one way — the diagonal corners of the draws. They serve both the
/// bound that orders the pool the stage picks from when ranked by
/// probability ([`ScreenDraws::bounds`]) and the stage itself ([`select`]),
/// and every recipe drawn runs on them.
///
/// The bound of a feasible recipe is the tightest diagonal-corner bound:
/// R_c at corner j falls as j rises (each corner is more glass-friendly
/// than the one before), so bisection over j finds the last corner whose
/// R_c exceeds the equipment rate by [`CORNER_MARGIN_DECADES`] in about
/// log2 N critical-rate solves; its 1 − W(j)/N bounds P. A recipe glassy at
/// the least glass-friendly corner gets 1. Without monotone inputs every
/// bound is 1 (the pool is then ordered by cost).
pub(crate) struct ScreenDraws {
    uncertainty: ScreenUncertainty,
    unc: Vec<Uncertain>,
    drawn: Drawn,
    centre: Vec<Vec<f64>>,
    corners: Option<Corners>,
}

impl ScreenDraws {
    /// The inputs, draws and corners of a problem's `[uncertainty]`.
    ///
    /// # Errors
    /// No `[uncertainty]`, or inputs that are no distributions.
    pub(crate) fn new(problem: &ScreenProblem) -> Result<ScreenDraws, Error> {
        let uncertainty = problem.uncertainty.ok_or_else(|| {
            Error::internal("the screen's Monte Carlo needs the config's [uncertainty] table")
        })?;
        let (unc, _) = model_set_inputs(
            &problem.models,
            &problem.kinetic_options,
            uncertainty.nuclei_range_per_m3,
        )?;
        let inputs = inputs_of(&unc);
        let drawn = Drawn::new(
            &inputs,
            Settings {
                draws: uncertainty.draws,
                seed: uncertainty.seed,
            },
        )?;
        let centre: Vec<Vec<f64>> = inputs.iter().map(|i| i.distribution.centre()).collect();
        let corners = monotone_coordinates(&unc).map(|c| Corners::new(c, drawn.values()));
        Ok(ScreenDraws {
            uncertainty,
            unc,
            drawn,
            centre,
            corners,
        })
    }

    /// The bound of every feasible row (None for the others), in parallel.
    pub(crate) fn bounds(&self, problem: &ScreenProblem, rows: &[Row]) -> Vec<Option<f64>> {
        rows.par_iter()
            .map(|r| r.feasible.then(|| self.bound(problem, r)))
            .collect()
    }

    fn bound(&self, problem: &ScreenProblem, r: &Row) -> f64 {
        let Some(corners) = &self.corners else {
            return 1.0;
        };
        let Ok(comp) = Composition::from_mol_percent_array(&r.composition(), 1e-6) else {
            return 1.0;
        };
        let limit = problem.equipment.rate.0.log10() + CORNER_MARGIN_DECADES;
        let above = |j: usize| {
            self.corner_rate(problem, &comp, &corners.values(j, &self.centre))
                .is_ok_and(|rc| rc.log10() > limit)
        };
        let n = corners.dominated.len();
        if !above(0) {
            return 1.0;
        }
        // above(lo) holds; above(hi) fails or hi is past the last corner.
        let (mut lo, mut hi) = (0, n);
        while hi - lo > 1 {
            let mid = lo + (hi - lo) / 2;
            if above(mid) {
                lo = mid;
            } else {
                hi = mid;
            }
        }
        corners.bound(lo)
    }

    /// R_c (K/s) of a composition at the input values of a corner.
    fn corner_rate(
        &self,
        problem: &ScreenProblem,
        comp: &Composition,
        corner: &[Vec<f64>],
    ) -> Result<f64, String> {
        composition_critical_rate(
            &problem.models,
            comp,
            &problem.kinetic_options,
            &self.unc,
            corner,
        )
    }

    /// The Monte Carlo of one composition on the screen's draws, P(R_c ≤
    /// the equipment rate).
    fn propagation(
        &self,
        problem: &ScreenProblem,
        comp: &Composition,
    ) -> Result<Propagation, UncertaintyError> {
        let mut p = self.drawn.propagate(Some(problem.equipment.rate.0), |v| {
            composition_critical_rate(
                &problem.models,
                comp,
                &problem.kinetic_options,
                &self.unc,
                v,
            )
        })?;
        // Every quench option from the same draws (the deciding one first).
        p.probability_glassy_at = problem
            .equipment_options()
            .map(|q| share_glassy(&p.log10_rates, p.draws, q.rate.0).0)
            .collect();
        Ok(p)
    }
}

/// The draws' coordinates that move R_c one way: (input, coordinate, sign),
/// sign +1 when a larger value makes a glass more likely.
fn monotone_coordinates(inputs: &[Uncertain]) -> Option<Vec<(usize, usize, f64)>> {
    let mut out = Vec::new();
    for (k, u) in inputs.iter().enumerate() {
        match &u.target {
            Target::Alpha(_) | Target::InterfaceEnergy(_) => out.push((k, 0, 1.0)),
            Target::Nuclei => out.push((k, 0, -1.0)),
            Target::KineticsFit(map) => {
                for (c, slot) in map.iter().enumerate() {
                    out.push((k, c, if slot.is_some() { 1.0 } else { -1.0 }));
                }
            }
            Target::Viscosity(_) | Target::Liquidus { .. } => return None,
        }
    }
    Some(out)
}

/// The diagonal corners of the draws: corner j takes, in every monotone
/// coordinate, the (j+1)-th least glass-friendly drawn value; `dominated[j]`
/// counts the draws no more glass-friendly than corner j in every coordinate.
struct Corners {
    coordinates: Vec<(usize, usize, f64)>,
    /// sorted[c]: the drawn values of coordinate c, least glass-friendly first.
    sorted: Vec<Vec<f64>>,
    dominated: Vec<usize>,
}

impl Corners {
    fn new(coordinates: Vec<(usize, usize, f64)>, values: &[Vec<Vec<f64>>]) -> Corners {
        let n = values.len();
        let sorted: Vec<Vec<f64>> = coordinates
            .iter()
            .map(|&(k, c, s)| {
                let mut v: Vec<f64> = values.iter().map(|d| d[k][c]).collect();
                v.sort_by(|a, b| (s * a).total_cmp(&(s * b)));
                v
            })
            .collect();
        // rank[c][d]: the position of draw d's value in sorted[c]; draw d is
        // dominated by corner j when every rank is ≤ j, so W(j) counts the
        // draws whose largest rank is ≤ j.
        let mut worst = vec![0usize; n];
        for (ci, &(k, c, s)) in coordinates.iter().enumerate() {
            for (d, w) in worst.iter_mut().enumerate() {
                let x = s * values[d][k][c];
                // The first position holding this value: ties (a fixed
                // coordinate) are dominated by every corner.
                let r = sorted[ci].partition_point(|v| s * v < x);
                *w = (*w).max(r);
            }
        }
        let mut dominated = vec![0usize; n];
        for w in worst {
            dominated[w] += 1;
        }
        for j in 1..n {
            dominated[j] += dominated[j - 1];
        }
        Corners {
            coordinates,
            sorted,
            dominated,
        }
    }

    /// The least glass-friendly corner whose bound 1 − W/N lies strictly
    /// below `tau`, and that bound.
    fn level_below(&self, tau: f64) -> Option<(usize, f64)> {
        let n = self.dominated.len() as f64;
        self.dominated
            .iter()
            .position(|&w| 1.0 - w as f64 / n < tau)
            .map(|j| (j, 1.0 - self.dominated[j] as f64 / n))
    }

    /// The bound 1 − W/N corner j gives.
    fn bound(&self, j: usize) -> f64 {
        1.0 - self.dominated[j] as f64 / self.dominated.len() as f64
    }

    /// The input values of corner j: the centre (any value) where no
    /// monotone coordinate sets it.
    fn values(&self, j: usize, centre: &[Vec<f64>]) -> Vec<Vec<f64>> {
        let mut v = centre.to_vec();
        for (ci, &(k, c, _)) in self.coordinates.iter().enumerate() {
            v[k][c] = self.sorted[ci][j];
        }
        v
    }
}

/// What is known of one recipe.
// One per recipe considered, most of them drawn: boxing the large variant
// would only add an allocation per drawn recipe.
#[allow(clippy::large_enum_variant)]
#[derive(Debug, Clone)]
enum Known {
    Unknown,
    Drawn(Result<Propagation, String>),
    /// P ≤ this bound.
    Bounded(f64),
    /// Every draw glassy (the least glass-friendly corner is): P = 1 unless
    /// a draw fails.
    Certain,
}

/// The Monte Carlo stage over the feasible rows the point-estimate search
/// kept: draw the recipes that could still make the shortlist, and pick the
/// shortlist — by probability for `kind = "probability"`, else by the
/// objective among the recipes that reach `min_probability`. Every recipe
/// drawn runs on `draws` (made once for the run by [`ScreenDraws::new`]).
///
/// `let_go` is, ranked by probability, the best-ranked feasible row the
/// search let go (by [`crate::screen::select`]'s bound order) with its
/// bound; the outcome says whether it, and so every row let go, is bounded
/// off the shortlist.
pub(crate) fn select(
    problem: &ScreenProblem,
    draws: &ScreenDraws,
    pool: &[Row],
    let_go: Option<&(f64, Row)>,
    objective_let_go: Option<&Row>,
) -> ProbabilityOutcome {
    let u = draws.uncertainty;
    let monotone = draws.corners.is_some();
    let mut rows: Vec<Row> = pool.iter().filter(|r| r.feasible).cloned().collect();
    rows.sort_by(|a, b| rank(a, b, objective_key));
    let stage = Stage { problem, draws };
    let mut known = vec![Known::Unknown; rows.len()];
    let mut corner_evaluations = 0;
    let full = u.preselection == Preselection::Full;
    let k = problem.shortlist_size;
    let picks: Vec<usize> = if problem.objective == ObjectiveKind::Probability {
        if full {
            let all: Vec<usize> = (0..rows.len()).collect();
            stage.draw(&rows, &all, &mut known);
        } else {
            // One evaluation at the least glass-friendly corner: below R,
            // every draw is glassy (P = 1 unless a draw fails, which only
            // drawing shows: a pick is always drawn); above R, P ≤ 1 − W/N.
            if let Some(c) = &draws.corners {
                let all: Vec<usize> = (0..rows.len()).collect();
                let rates = stage.corner_rates(&rows, &all, 0);
                corner_evaluations += all.len();
                let log_r = problem.equipment.rate.0.log10();
                let bound0 = c.bound(0);
                for (i, r) in rates.into_iter().enumerate() {
                    match r.map(f64::log10) {
                        Some(l) if l < log_r - CORNER_MARGIN_DECADES => known[i] = Known::Certain,
                        Some(l) if l > log_r + CORNER_MARGIN_DECADES => {
                            known[i] = Known::Bounded(bound0)
                        }
                        _ => {}
                    }
                }
            }
            // Then the point estimate's own distinct best.
            let first = greedy(problem, &rows, k);
            stage.draw(&rows, &first, &mut known);
            loop {
                let picks = greedy_by_probability(problem, &rows, &known);
                // A pick known glassy in every draw is drawn for its band
                // (and to see whether a draw fails).
                let certain: Vec<usize> = picks
                    .iter()
                    .copied()
                    .filter(|&i| matches!(known[i], Known::Certain))
                    .collect();
                if !certain.is_empty() {
                    stage.draw(&rows, &certain, &mut known);
                    continue;
                }
                let tau = threshold(&picks, &known, k, u.min_probability);
                let open: Vec<usize> = (0..rows.len())
                    .filter(|&i| match known[i] {
                        Known::Unknown => true,
                        Known::Bounded(b) => b >= tau,
                        Known::Drawn(_) | Known::Certain => false,
                    })
                    .collect();
                if open.is_empty() {
                    break;
                }
                let to_draw = stage.bound(&rows, &open, tau, &mut known, &mut corner_evaluations);
                stage.draw(&rows, &to_draw, &mut known);
            }
        }
        greedy_by_probability(problem, &rows, &known)
    } else {
        // Ranked by the objective: walk the point ranking, drawing only the
        // rows that are not blocked by a pick and not bounded below
        // min_probability, until the shortlist is full.
        let mut picks: Vec<usize> = Vec::new();
        if full {
            let all: Vec<usize> = (0..rows.len()).collect();
            stage.draw(&rows, &all, &mut known);
        }
        let d2 = problem.min_distance_mol_pct.powi(2);
        for i in 0..rows.len() {
            if picks.len() >= k {
                break;
            }
            let x = rows[i].composition();
            if picks
                .iter()
                .any(|&p| dist2(&rows[p].composition(), &x) < d2)
            {
                continue;
            }
            if matches!(known[i], Known::Unknown) {
                let to_draw = match u.min_probability {
                    Some(p) => stage.bound(&rows, &[i], p, &mut known, &mut corner_evaluations),
                    None => vec![i],
                };
                stage.draw(&rows, &to_draw, &mut known);
            }
            if usable(&known[i], u.min_probability) {
                picks.push(i);
            }
        }
        picks
    };
    let pool_exact = if problem.objective != ObjectiveKind::Probability {
        // Ranked by the objective, the walk takes rows in the objective's
        // order: it is the walk over every feasible recipe when every row
        // up to the last pick was kept, that is when the shortlist is full
        // and the best row let go ranks after its last pick.
        Some(match objective_let_go {
            None => true,
            Some(d) => {
                picks.len() >= k
                    && picks.last().is_some_and(|&l| {
                        rank(d, &rows[l], objective_key) == std::cmp::Ordering::Greater
                    })
            }
        })
    } else {
        Some(()).map(|_| {
            let Some((u_d, d)) = let_go else {
                return true;
            };
            // Every row let go ranks at or after d: a bound below that of the
            // last pick (or equal to it and after it in the tie order) keeps it
            // after the last pick in the full walk; while fewer than K are
            // picked, below min_probability keeps it off.
            match picks.last() {
                Some(&l) if picks.len() >= k => {
                    let tau = match &known[l] {
                        Known::Drawn(Ok(p)) => probability(p),
                        _ => 1.0,
                    };
                    *u_d < tau
                        || (*u_d == tau
                            && rank(d, &rows[l], |_| 0.0) == std::cmp::Ordering::Greater)
                }
                _ => u.min_probability.is_some_and(|m| *u_d < m),
            }
        })
    };
    let mut out = ProbabilityOutcome {
        considered: rows.len(),
        corner_evaluations,
        monotone,
        let_go_bound: let_go.map(|(b, _)| *b),
        pool_exact,
        objective_let_go: objective_let_go.is_some(),
        ..Default::default()
    };
    for (i, r) in rows.iter().enumerate() {
        match &known[i] {
            Known::Drawn(Ok(p)) => {
                if u.min_probability.is_some_and(|m| probability(p) < m) {
                    out.below_min += 1;
                }
                out.drawn.push(filled(r, p));
            }
            Known::Drawn(Err(e)) => {
                out.failures.push(format!("recipe {}: {e}", r.index));
                if u.min_probability.is_some() {
                    out.below_min += 1;
                }
            }
            Known::Bounded(b) => {
                out.bounded_out += 1;
                if u.min_probability.is_some_and(|m| *b < m) {
                    out.below_min += 1;
                }
            }
            Known::Certain => {
                out.certain += 1;
                out.drawn.push(certain(problem, r, u.draws));
            }
            Known::Unknown => {}
        }
    }
    judge_slab(problem, &mut out.drawn);
    out.picks = picks
        .iter()
        .filter_map(|&i| match &known[i] {
            Known::Drawn(Ok(p)) => Some(filled(&rows[i], p)),
            _ => None,
        })
        .collect();
    out
}

/// The screen's Monte Carlo for one recipe outside a screen (`eval
/// --against`, a snapped recipe): the same seeded draws of the same inputs
/// as [`select`] ([`ScreenDraws::new`]).
///
/// # Errors
/// No `[uncertainty]` in the problem, inputs that cannot be drawn, or too
/// many failed draws.
pub fn recipe_propagation(
    problem: &ScreenProblem,
    comp: &Composition,
) -> Result<Propagation, Error> {
    ScreenDraws::new(problem)?
        .propagation(problem, comp)
        .map_err(|e| Error::bad_input(e.to_string()))
}

/// A row glassy at the least glass-friendly corner of the draws, so in
/// every draw: P = 1, reported with its rule-of-three bound 1 − 3/N; a
/// quench option at least as fast as the deciding one is glassy in every
/// draw too, a slower one is not known (None).
fn certain(problem: &ScreenProblem, r: &Row, draws: usize) -> Row {
    let mut r = r.clone();
    r.probability_glassy = Some(1.0);
    r.probability_glassy_lower95 = Some(probability_lower95(draws, draws));
    r.probability_from = Some("corner".into());
    r.probability_glassy_with = problem
        .equipment_options()
        .map(|q| (q.rate.0 >= problem.equipment.rate.0).then_some(1.0))
        .collect();
    r
}

/// The row with the probability columns of its draws.
pub(crate) fn filled(r: &Row, p: &Propagation) -> Row {
    let mut r = r.clone();
    r.probability_glassy = p.probability_glassy;
    r.probability_glassy_lower95 = p.probability_glassy_lower95;
    r.probability_glassy_with = p.probability_glassy_at.iter().map(|&v| Some(v)).collect();
    r.critical_rate_p05_k_per_s = Some(p.critical_rate_p05_k_per_s);
    r.critical_rate_p95_k_per_s = Some(p.critical_rate_p95_k_per_s);
    // The 5 % end lies on the glassy side of the point estimate: where the
    // point estimate is beyond what the model can vouch for (a glassy slab
    // above 100 mm, a nose after a day, a rate below the bound), so is that end.
    let point_vouched = r.vouched != Some(false);
    r.band_vouched = Some(p.band_vouched() && point_vouched);
    r.probability_from = Some("draws".into());
    let mut beyond = p.beyond_vouching();
    if !point_vouched && p.critical_rate_p05_vouched {
        beyond.push(glassy_side_of_unvouched(p.critical_rate_p05_k_per_s));
    }
    if !beyond.is_empty() {
        if !r.warnings.is_empty() {
            r.warnings.push_str("; ");
        }
        r.warnings.push_str(&format!(
            "band beyond what the model can vouch for: {}",
            beyond.join(", ")
        ));
    }
    r
}

/// Judge the recipes of `drawn-recipes.csv` as the shortlist is judged:
/// the search's point evaluation leaves out the glassy slab, so every row
/// it vouched for is evaluated again with the slab of the shortlist
/// (`SlabQuench::default()`, in parallel, rows in order). Where the slab
/// puts the point estimate beyond vouching, `vouched` turns false, and so
/// does `band_vouched` (its 5 % end lies on the glassy side), with the
/// evaluation's note and, for a band, the note the shortlist gives. A row
/// whose evaluation fails again keeps what the search found.
fn judge_slab(problem: &ScreenProblem, rows: &mut [Row]) {
    let beyond: Vec<Option<String>> = rows
        .par_iter()
        .map(|r| {
            if r.vouched != Some(true) {
                return None;
            }
            let comp = Composition::from_mol_percent_array(&r.composition(), 1e-6).ok()?;
            let e = evaluate_composition(
                &problem.models,
                &comp,
                &problem.kinetic_options,
                Some(SlabQuench::default()),
                &Calibration::None,
            )
            .ok()?;
            if e.vouched {
                return None;
            }
            Some(
                e.warnings
                    .iter()
                    .find(|w| w.starts_with("beyond what the model can vouch for"))
                    .cloned()
                    .unwrap_or_else(|| "beyond what the model can vouch for".to_string()),
            )
        })
        .collect();
    for (r, note) in rows.iter_mut().zip(beyond) {
        let Some(note) = note else { continue };
        r.vouched = Some(false);
        let mut notes = vec![note];
        if r.band_vouched == Some(true) {
            if let Some(lo) = r.critical_rate_p05_k_per_s {
                notes.push(format!(
                    "band beyond what the model can vouch for: {}",
                    glassy_side_of_unvouched(lo)
                ));
            }
        }
        r.band_vouched = r.band_vouched.map(|_| false);
        for n in notes {
            if !r.warnings.is_empty() {
                r.warnings.push_str("; ");
            }
            r.warnings.push_str(&n);
        }
    }
}

/// Why a band's 5 % end is beyond vouching when its point estimate is: it
/// lies on the glassy side of it (R_c monotone in every drawn input).
pub(crate) fn glassy_side_of_unvouched(p05_k_per_s: f64) -> String {
    format!(
        "a 5 % quantile of R_c of {p05_k_per_s:.1e} K/s, on the glassy side of a point estimate the model cannot vouch for"
    )
}

fn probability(p: &Propagation) -> f64 {
    p.probability_glassy.unwrap_or(0.0)
}

/// Drawn, and at least the least probability asked for.
fn usable(k: &Known, min: Option<f64>) -> bool {
    match k {
        Known::Drawn(Ok(p)) => min.is_none_or(|m| probability(p) >= m),
        Known::Certain => true,
        _ => false,
    }
}

/// The probability a recipe must beat strictly to be left undrawn: that of
/// the last of a full shortlist, else the least probability asked for (0
/// without one: then every recipe is drawn).
fn threshold(picks: &[usize], known: &[Known], k: usize, min: Option<f64>) -> f64 {
    let floor = min.unwrap_or(0.0);
    if picks.len() < k {
        return floor;
    }
    match picks.last().map(|&i| &known[i]) {
        Some(Known::Drawn(Ok(p))) => probability(p).max(floor),
        _ => floor,
    }
}

/// Up to `k` rows, best first by the point ranking, no two closer than the
/// shortlist distance.
fn greedy(problem: &ScreenProblem, rows: &[Row], k: usize) -> Vec<usize> {
    let d2 = problem.min_distance_mol_pct.powi(2);
    let mut out: Vec<usize> = Vec::new();
    for i in 0..rows.len() {
        if out.len() >= k {
            break;
        }
        let x = rows[i].composition();
        if out.iter().all(|&p| dist2(&rows[p].composition(), &x) >= d2) {
            out.push(i);
        }
    }
    out
}

/// The shortlist by probability among the drawn rows: highest first, ties
/// broken as every ranking is (`select::rank`), no two closer than the
/// shortlist distance, none below `min_probability`.
fn greedy_by_probability(problem: &ScreenProblem, rows: &[Row], known: &[Known]) -> Vec<usize> {
    let min = problem.uncertainty.and_then(|u| u.min_probability);
    let p_of = |i: usize| match &known[i] {
        Known::Drawn(Ok(p)) => probability(p),
        Known::Certain => 1.0,
        _ => f64::NEG_INFINITY,
    };
    let mut order: Vec<usize> = (0..rows.len())
        .filter(|&i| usable(&known[i], min))
        .collect();
    order.sort_by(|&a, &b| {
        p_of(b)
            .total_cmp(&p_of(a))
            .then_with(|| rank(&rows[a], &rows[b], |_| 0.0))
    });
    let d2 = problem.min_distance_mol_pct.powi(2);
    let mut out: Vec<usize> = Vec::new();
    for i in order {
        if out.len() >= problem.shortlist_size {
            break;
        }
        let x = rows[i].composition();
        if out.iter().all(|&p| dist2(&rows[p].composition(), &x) >= d2) {
            out.push(i);
        }
    }
    out
}

/// What every draw and bound needs.
struct Stage<'a> {
    problem: &'a ScreenProblem,
    draws: &'a ScreenDraws,
}

impl Stage<'_> {
    fn composition(&self, r: &Row) -> Result<Composition, String> {
        let x: [f64; N_OXIDES] = r.composition();
        Composition::from_mol_percent_array(&x, 1e-6).map_err(|e| e.to_string())
    }

    /// Draw the rows `which` (each recipe's draws run in parallel; rows in order).
    fn draw(&self, rows: &[Row], which: &[usize], known: &mut [Known]) {
        for &i in which {
            if matches!(known[i], Known::Drawn(_)) {
                continue;
            }
            let result = self.composition(&rows[i]).and_then(|comp| {
                self.draws
                    .propagation(self.problem, &comp)
                    .map_err(|e| e.to_string())
            });
            known[i] = Known::Drawn(result);
        }
    }

    /// R_c (K/s) of the rows `which` at corner j (in parallel; None where
    /// the chain fails).
    fn corner_rates(&self, rows: &[Row], which: &[usize], j: usize) -> Vec<Option<f64>> {
        let Some(corners) = &self.draws.corners else {
            return vec![None; which.len()];
        };
        let corner = corners.values(j, &self.draws.centre);
        which
            .par_iter()
            .map(|&i| {
                self.composition(&rows[i])
                    .and_then(|comp| self.draws.corner_rate(self.problem, &comp, &corner))
                    .ok()
            })
            .collect()
    }

    /// Try to bound the rows `which` strictly below `tau` with one corner
    /// evaluation each (in parallel); those bounded are marked, the rest
    /// returned to be drawn.
    fn bound(
        &self,
        rows: &[Row],
        which: &[usize],
        tau: f64,
        known: &mut [Known],
        spent: &mut usize,
    ) -> Vec<usize> {
        let Some((j, bound)) = self.draws.corners.as_ref().and_then(|c| c.level_below(tau)) else {
            return which.to_vec();
        };
        let limit = self.problem.equipment.rate.0.log10() + CORNER_MARGIN_DECADES;
        let above: Vec<bool> = self
            .corner_rates(rows, which, j)
            .into_iter()
            .map(|r| r.is_some_and(|r| r.log10() > limit))
            .collect();
        *spent += which.len();
        let mut rest = Vec::new();
        for (&i, up) in which.iter().zip(above) {
            if up {
                known[i] = Known::Bounded(bound);
            } else {
                rest.push(i);
            }
        }
        rest
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::uncertainty::sampling::latin_hypercube;

    #[test]
    fn a_corner_dominates_exactly_the_draws_at_or_below_it_in_every_coordinate() {
        // Source: in one coordinate with distinct values, exactly j + 1
        // values lie at or below the (j + 1)-th order statistic (definition
        // of order statistics).
        let one: Vec<Vec<Vec<f64>>> = (0..50)
            .map(|i| vec![vec![((i * 37) % 50) as f64]])
            .collect();
        let c = Corners::new(vec![(0, 0, 1.0)], &one);
        for j in 0..50 {
            assert_eq!(c.dominated[j], j + 1);
        }
        // Two coordinates, one glass-friendly upwards (an α) and one
        // downwards (a nuclei density): against a count by definition.
        let two: Vec<Vec<Vec<f64>>> = latin_hypercube(60, 2, 5)
            .into_iter()
            .map(|r| vec![vec![r[0]], vec![r[1]]])
            .collect();
        let c = Corners::new(vec![(0, 0, 1.0), (1, 0, -1.0)], &two);
        let centre = vec![vec![0.5], vec![0.5]];
        for j in 0..60 {
            let corner = c.values(j, &centre);
            let count = two
                .iter()
                .filter(|d| d[0][0] <= corner[0][0] && d[1][0] >= corner[1][0])
                .count();
            assert_eq!(c.dominated[j], count, "corner {j}");
            assert!((c.bound(j) - (1.0 - count as f64 / 60.0)).abs() < 1e-15);
        }
        assert_eq!(c.dominated[59], 60);
        // The least glass-friendly corner whose bound lies below 0.5.
        let (j, b) = c.level_below(0.5).unwrap();
        assert!(b < 0.5 && (j == 0 || c.bound(j - 1) >= 0.5));
        assert!(c.level_below(0.0).is_none());
    }
}
