//! Selection: the one ranking order every step uses (it decides what resume
//! and thread counts must reproduce), the pick of distinct rows, and the
//! bounded pools that keep only what selection needs while candidates stream
//! past, so memory stays flat however many candidates are evaluated.

use super::candidate::Row;
use super::limits::{Limit, LimitSummary};
use super::problem::{ScreenProblem, Search};
use super::simplex::dist2;
use std::cmp::Ordering;

/// The ranking of two rows by a key (lower first), ties broken by cost, then
/// by melting temperature (lower first), then first-pass rows before refined
/// ones, then by index: a total order, so the result does not depend on the
/// order rows arrive in.
pub(crate) fn rank(a: &Row, b: &Row, key: impl Fn(&Row) -> f64) -> Ordering {
    let worst = |v: Option<f64>| v.unwrap_or(f64::INFINITY);
    key(a)
        .total_cmp(&key(b))
        .then(worst(a.cost_per_kg).total_cmp(&worst(b.cost_per_kg)))
        .then(worst(a.melting_temperature_k).total_cmp(&worst(b.melting_temperature_k)))
        .then(a.refined.cmp(&b.refined))
        .then(a.index.cmp(&b.index))
}

/// The objective of a row (lower is better; missing counts as worst).
pub(crate) fn objective_key(r: &Row) -> f64 {
    r.objective.unwrap_or(f64::INFINITY)
}

/// The penalised objective of a row (lower is better; missing counts as worst).
pub(crate) fn penalised_key(r: &Row) -> f64 {
    r.penalised.unwrap_or(f64::INFINITY)
}

/// Pick up to `n` rows, best first by `key`, no two closer than `min_dist` mol%.
pub(crate) fn distinct_rows(
    rows: &[Row],
    n: usize,
    min_dist: f64,
    usable: impl Fn(&Row) -> bool,
    key: impl Fn(&Row) -> f64,
) -> Vec<&Row> {
    let mut order: Vec<&Row> = rows.iter().filter(|r| usable(r)).collect();
    order.sort_by(|a, b| rank(a, b, &key));
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

/// The best usable row by `key` at least `d` mol% from every composition in
/// `away`.
fn best_away<'a>(
    rows: &'a [Row],
    away: &[[f64; crate::composition::N_OXIDES]],
    d: f64,
    usable: impl Fn(&Row) -> bool,
    key: impl Fn(&Row) -> f64,
) -> Option<&'a Row> {
    rows.iter()
        .filter(|r| usable(r))
        .filter(|r| {
            let x = r.composition();
            away.iter().all(|p| dist2(p, &x) >= d * d)
        })
        .min_by(|a, b| rank(a, b, &key))
}

/// What selection needs from a stream of candidates, in bounded memory: the
/// best rows by objective (feasible) and by penalised objective (seeds for
/// refinement), and the tally of broken limits.
pub(crate) struct Pools {
    keep: usize,
    by_objective: Vec<Row>,
    by_penalty: Vec<Row>,
    /// Ranked by probability: the feasible rows by an upper bound on their
    /// probability, highest first, then as every ranking breaks ties
    /// (`probability::ScreenDraws`); every feasible row when the stage draws
    /// them all.
    by_bound: Option<Vec<(f64, Row)>>,
    /// The best-ranked row `by_bound` let go, with its bound: every row
    /// let go ranks at or after it.
    first_dropped: Option<(f64, Row)>,
    /// `by_bound` and `by_objective` keep every row (the full Monte Carlo).
    keep_all: bool,
    /// The best-ranked feasible row `by_objective` let go (by the
    /// objective): every row let go ranks at or after it.
    objective_dropped: Option<Row>,
    tally: LimitSummary,
}

/// The order of the probability pool: the larger bound first, then as
/// [`rank`] breaks ties (cost, melting temperature, pass, index).
pub(crate) fn rank_by_bound(a: &(f64, Row), b: &(f64, Row)) -> Ordering {
    b.0.total_cmp(&a.0).then_with(|| rank(&a.1, &b.1, |_| 0.0))
}

impl Pools {
    /// Empty pools sized for a problem and a search.
    pub(crate) fn new(problem: &ScreenProblem, search: &Search) -> Self {
        // Greedy distinct selection looks far down the ranking when many good
        // points sit close together; 200 per pick is ample for min distances of
        // a few mol%.
        let keep = 200 * (problem.shortlist_size.max(search.refine_from) + 1);
        let by_probability = problem.objective == super::problem::ObjectiveKind::Probability
            && problem.uncertainty.is_some();
        Pools {
            keep,
            by_objective: Vec::new(),
            by_penalty: Vec::new(),
            by_bound: by_probability.then(Vec::new),
            first_dropped: None,
            keep_all: problem
                .uncertainty
                .is_some_and(|u| u.preselection == super::probability::Preselection::Full),
            objective_dropped: None,
            tally: Default::default(),
        }
    }

    /// Whether rows need their probability bound ([`Pools::add_bounded`]).
    pub(crate) fn wants_bounds(&self) -> bool {
        self.by_bound.is_some()
    }

    /// [`Pools::add`], with the row's upper bound on its probability (for
    /// the probability pool; feasible rows only).
    pub(crate) fn add_bounded(&mut self, r: Row, bound: Option<f64>) {
        if let (Some(v), Some(b), true) = (self.by_bound.as_mut(), bound, r.feasible) {
            let mut kept = r.clone();
            kept.warnings = String::new();
            v.push((b, kept));
            if !self.keep_all && v.len() > 2 * self.keep {
                let d = truncate_by_bound(v, self.keep);
                self.note_dropped(d);
            }
        }
        self.add(r);
    }

    fn note_dropped(&mut self, d: Option<(f64, Row)>) {
        if let Some(d) = d {
            let better = self
                .first_dropped
                .as_ref()
                .is_none_or(|f| rank_by_bound(&d, f) == Ordering::Less);
            if better {
                self.first_dropped = Some(d);
            }
        }
    }

    /// The feasible rows the Monte Carlo stage picks from: those kept by
    /// objective and, ranked by probability, those kept by the bound; and
    /// the best-ranked row the bound pool let go, with its bound (`None`
    /// when it let none go).
    pub(crate) fn probability_pool(&mut self) -> (Vec<Row>, Option<(f64, Row)>) {
        let mut out: Vec<Row> = self.by_objective.clone();
        if let Some(mut v) = self.by_bound.take() {
            if !self.keep_all && v.len() > self.keep {
                let d = truncate_by_bound(&mut v, self.keep);
                self.note_dropped(d);
            }
            let mut seen: std::collections::HashSet<(bool, u64)> =
                out.iter().map(|r| (r.refined, r.index)).collect();
            for (_, r) in v {
                if seen.insert((r.refined, r.index)) {
                    out.push(r);
                }
            }
        }
        (out, self.first_dropped.clone())
    }

    /// Count a row and keep it if it may still be selected.
    pub(crate) fn add(&mut self, mut r: Row) {
        self.tally.add(r.broken, r.evaluations);
        // Warnings are restored when the selected rows are evaluated again.
        r.warnings = String::new();
        if r.feasible {
            let keep = if self.keep_all {
                usize::MAX / 4
            } else {
                self.keep
            };
            if let Some(d) = push_bounded(&mut self.by_objective, r.clone(), keep, objective_key) {
                let better = self
                    .objective_dropped
                    .as_ref()
                    .is_none_or(|f| rank(&d, f, objective_key) == Ordering::Less);
                if better {
                    self.objective_dropped = Some(d);
                }
            }
        }
        push_bounded(&mut self.by_penalty, r, self.keep, penalised_key);
    }

    /// The best-ranked feasible row the objective pool let go (None: it
    /// kept every feasible row).
    pub(crate) fn objective_let_go(&self) -> Option<&Row> {
        self.objective_dropped.as_ref()
    }

    /// The compositions refinement may start from, in the order it takes
    /// them: up to `count` best distinct rows by penalised objective inside
    /// the composition limits, dealt out by primary phase (the best of each
    /// phase first, then the second best of each, ...), so that the first
    /// seeds already reach into different parts of the liquidus surface.
    pub(crate) fn seeds(
        &self,
        problem: &ScreenProblem,
        count: usize,
    ) -> Vec<[f64; crate::composition::N_OXIDES]> {
        let best = distinct_rows(
            &self.by_penalty,
            count,
            problem.min_distance_mol_pct,
            |r| {
                r.penalised.is_some()
                    && r.error.is_none()
                    && !r.broken.contains(Limit::CompositionLimits)
            },
            penalised_key,
        );
        // Phases in the order of their best row; rows keep their rank within.
        let mut phases: Vec<(Option<&str>, Vec<&Row>)> = Vec::new();
        for r in best {
            let p = r.primary_phase.as_deref();
            match phases.iter_mut().find(|(q, _)| *q == p) {
                Some((_, v)) => v.push(r),
                None => phases.push((p, vec![r])),
            }
        }
        let deepest = phases.iter().map(|(_, v)| v.len()).max().unwrap_or(0);
        let mut out = Vec::new();
        for k in 0..deepest {
            for (_, v) in &phases {
                if let Some(r) = v.get(k) {
                    out.push(r.composition());
                }
            }
        }
        out
    }

    /// The best feasible row at least `d` mol% from every composition in
    /// `away`.
    pub(crate) fn best_feasible_away(
        &self,
        away: &[[f64; crate::composition::N_OXIDES]],
        d: f64,
    ) -> Option<&Row> {
        best_away(&self.by_objective, away, d, |r| r.feasible, objective_key)
    }

    /// As [`Pools::best_feasible_away`], passing over the rows whose
    /// composition is one of `except` (recipes already tried).
    pub(crate) fn best_feasible_away_except(
        &self,
        away: &[[f64; crate::composition::N_OXIDES]],
        d: f64,
        except: &[[f64; crate::composition::N_OXIDES]],
    ) -> Option<&Row> {
        best_away(
            &self.by_objective,
            away,
            d,
            |r| r.feasible && !except.contains(&r.composition()),
            objective_key,
        )
    }

    /// The best seed by penalised objective (inside the composition limits)
    /// at least `d` mol% from every composition in `away`.
    pub(crate) fn best_seed_away(
        &self,
        away: &[[f64; crate::composition::N_OXIDES]],
        d: f64,
    ) -> Option<[f64; crate::composition::N_OXIDES]> {
        best_away(
            &self.by_penalty,
            away,
            d,
            |r| {
                r.penalised.is_some()
                    && r.error.is_none()
                    && !r.broken.contains(Limit::CompositionLimits)
            },
            penalised_key,
        )
        .map(|r| r.composition())
    }

    /// The tally of broken limits so far.
    pub(crate) fn tally(&self) -> &LimitSummary {
        &self.tally
    }
}

/// Keep the `keep` best rows by key (in no particular order: every reader
/// ranks them, and [`rank`] is a total order, so the rows kept are the same
/// whatever order they came in); returns the best row let go. Selecting
/// instead of sorting halves the pools' share of a screen.
fn push_bounded(v: &mut Vec<Row>, r: Row, keep: usize, key: impl Fn(&Row) -> f64) -> Option<Row> {
    v.push(r);
    if v.len() > 2 * keep {
        v.select_nth_unstable_by(keep, |a, b| rank(a, b, &key));
        let first = v.get(keep).cloned();
        v.truncate(keep);
        return first;
    }
    None
}

/// Keep the `keep` best rows by [`rank_by_bound`]; returns the best one let go.
fn truncate_by_bound(v: &mut Vec<(f64, Row)>, keep: usize) -> Option<(f64, Row)> {
    v.sort_by(rank_by_bound);
    let first = v.get(keep).cloned();
    v.truncate(keep);
    first
}
