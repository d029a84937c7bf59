//! Snapping the shortlist to amounts a person can weigh (docs/science.md,
//! "Snapping the shortlist"). The optimiser's recipes carry amounts like
//! 70.01610741597935 mol% and trace oxides of 0.006 mol%; a lab weighs a
//! batch to a grid and leaves out what is too little to matter.
//!
//! The rule, for each shortlisted recipe:
//! 1. every varying oxide but the balance one goes to a neighbouring point
//!    of the grid (`resolution_mol_pct`; the one below or the one above its
//!    amount), and an amount below `min_amount_mol_pct` to zero; an oxide
//!    with a fixed amount (min = max) keeps it;
//! 2. the balance oxide takes the rest, so the sum stays 100 mol% (100 is a
//!    whole multiple of the grid, so it lands on the grid too);
//! 3. of these neighbours, nearest first (Euclidean, mol%), the first that
//!    meets every limit of the screen again (oxide ranges and linear
//!    constraints included), evaluated with the same models, replaces the
//!    recipe; with `[uncertainty]` its probability of a glass is drawn again
//!    and must reach the least probability asked for; with a margin
//!    objective a recipe the model vouched for must stay vouched;
//! 4. a neighbour that is a recipe already kept, or lies closer than the
//!    shortlist distance to one, is passed over; a recipe none of whose
//!    neighbours passes is dropped, with the reason;
//! 5. the places dropped are refilled from the next-ranked candidates (at
//!    least the shortlist distance from every recipe already listed), each
//!    snapped and checked by the same rule, until the shortlist is full or
//!    the candidates run out;
//! 6. the recipes kept are ranked again in the stage's order.
//!
//! No I/O here.

use super::candidate::{evaluate_candidate_with, uses_margin, Pass, Row};
use super::probability::{filled, recipe_propagation};
use super::problem::{ObjectiveKind, ScreenProblem};
use super::run::Shortlisted;
use super::select::{objective_key, rank};
use super::simplex::{dist2, Simplex};
use crate::assess::SlabQuench;
use crate::composition::{Composition, N_OXIDES};
use crate::error::Error;

/// The most grid neighbours tried per recipe (two per free oxide: 2^12);
/// a screen with more free oxides tries the nearest grid point only.
const MAX_NEIGHBOURS: usize = 4096;

/// A shortlisted recipe that snapping dropped.
#[derive(Debug, Clone, PartialEq)]
pub struct SnapDrop {
    /// Its place in the shortlist before snapping (1 = best).
    pub place: usize,
    /// Its composition before snapping, mol%.
    pub mol_pct: [f64; N_OXIDES],
    /// Why, in words.
    pub reason: String,
}

/// What snapping did.
#[derive(Debug, Clone, PartialEq)]
pub struct SnapOutcome {
    /// Recipes in the shortlist before snapping.
    pub before: usize,
    /// Those dropped, in shortlist order.
    pub dropped: Vec<SnapDrop>,
    /// Snapped recipes evaluated (refills included).
    pub evaluations: usize,
    /// Next-ranked candidates that took dropped places, in the order found.
    pub refilled: Vec<SnapRefill>,
    /// Next-ranked candidates tried to refill dropped places.
    pub refill_tried: usize,
    /// The candidates ran out before the shortlist was full again.
    pub refill_ran_out: bool,
}

/// The grid of a resolution: 100 mol% in `n` steps (None: no grid).
fn grid_steps(resolution: f64) -> Option<i64> {
    (resolution > 0.0).then(|| (100.0 / resolution).round() as i64)
}

/// `k` steps of a grid of `n` steps to 100 mol%, as the double nearest to
/// the exact value (0.5 mol% steps give 71.5, not 71.49999999999999).
fn on_grid(k: i64, n: i64) -> f64 {
    // k ≤ n ≤ 10⁵ (the config refuses resolutions below 0.001 mol%), so
    // k·100 is far from overflowing; saturate rather than wrap regardless.
    k.saturating_mul(100) as f64 / n as f64
}

/// The snapped neighbours of a composition, nearest first (ties: in the
/// order the free oxides' choices are generated, lower first). Each sums to
/// 100 mol%; whether it is inside the screen's limits is for the caller.
pub fn snapped_neighbours(problem: &ScreenProblem, x: &[f64; N_OXIDES]) -> Vec<[f64; N_OXIDES]> {
    let Some(snap) = problem.snapping else {
        return vec![*x];
    };
    let simplex = Simplex::new(problem);
    let grid = grid_steps(snap.resolution_mol_pct);
    let min = snap.min_amount_mol_pct;
    let choices: Vec<Vec<f64>> = simplex
        .free
        .iter()
        .map(|&(o, lo, hi)| {
            let v = x[o.index()];
            if lo == hi {
                return vec![v];
            }
            let mut out: Vec<f64> = match grid {
                Some(n) => {
                    let f = v * n as f64 / 100.0;
                    let near = f.round();
                    let ks: Vec<i64> = if (f - near).abs() < 1e-9 {
                        vec![near as i64]
                    } else {
                        vec![f.floor() as i64, f.ceil() as i64]
                    };
                    ks.into_iter().map(|k| on_grid(k, n)).collect()
                }
                None => vec![v],
            };
            for a in &mut out {
                if *a < min {
                    *a = 0.0;
                }
            }
            out.dedup();
            out
        })
        .collect();
    let total: usize = choices
        .iter()
        .map(Vec::len)
        .try_fold(1usize, |a, n| a.checked_mul(n))
        .unwrap_or(usize::MAX);
    let combos: Vec<Vec<f64>> = if total > MAX_NEIGHBOURS {
        // The nearest choice of each oxide alone.
        vec![choices
            .iter()
            .zip(&simplex.free)
            .map(|(c, (o, ..))| {
                let v = x[o.index()];
                *c.iter()
                    .min_by(|a, b| (*a - v).abs().total_cmp(&(*b - v).abs()))
                    .unwrap_or(&v)
            })
            .collect()]
    } else {
        let mut all: Vec<Vec<f64>> = vec![Vec::new()];
        for c in &choices {
            all = all
                .into_iter()
                .flat_map(|p| {
                    c.iter().map(move |v| {
                        let mut q = p.clone();
                        q.push(*v);
                        q
                    })
                })
                .collect();
        }
        all
    };
    let mut points: Vec<[f64; N_OXIDES]> = combos
        .iter()
        .map(|free| {
            let mut p = simplex.compose(free);
            let b = simplex.balance.0.index();
            if let Some(n) = grid {
                // The free amounts are on the grid, so the rest is too: put
                // it exactly there.
                let k = (p[b] * n as f64 / 100.0).round() as i64;
                if (on_grid(k, n) - p[b]).abs() < 1e-6 {
                    p[b] = on_grid(k, n);
                }
            }
            p
        })
        .collect();
    // A stable sort: equally near points keep the order they were made in.
    points.sort_by(|a, b| dist2(a, x).total_cmp(&dist2(b, x)));
    points
}

/// The most next-ranked candidates tried to refill the places snapping
/// dropped, per place of the shortlist (each is snapped and checked like a
/// shortlisted recipe, up to [`MAX_NEIGHBOURS`] evaluations each).
const REFILL_TRIES_PER_PLACE: usize = 8;

/// The next-ranked candidate for a place snapping dropped: given the
/// compositions to keep the shortlist distance from and those to pass over
/// (see [`snap_shortlist`]).
pub type NextCandidate<'a> = dyn FnMut(&[[f64; N_OXIDES]], &[[f64; N_OXIDES]]) -> Option<Row> + 'a;

/// A candidate that took a place snapping dropped.
#[derive(Debug, Clone, PartialEq)]
pub struct SnapRefill {
    /// Its composition before snapping, mol%.
    pub mol_pct: [f64; N_OXIDES],
    /// Next-ranked candidates tried before it (and after the last refill)
    /// whose snapped recipes did not pass.
    pub passed_over: usize,
}

/// Why a recipe's snapped neighbours did not give a recipe to keep.
struct NoSnap {
    tried: usize,
    reason: String,
}

impl NoSnap {
    fn text(&self) -> String {
        format!(
            "{} ({})",
            if self.tried == 1 {
                "its snapped recipe does not pass".to_string()
            } else {
                format!(
                    "none of the {} snapped recipes around it passes",
                    self.tried
                )
            },
            self.reason
        )
    }
}

/// Snap one recipe: the nearest snapped neighbour that passes every check
/// (see the module's rule), or why none does. `kept`: the recipes kept so
/// far, with their places (a neighbour that is one of them is passed over).
fn snap_one(
    problem: &ScreenProblem,
    from: &Row,
    kept: &[(usize, Shortlisted)],
    evaluations: &mut usize,
) -> Result<Result<Shortlisted, NoSnap>, Error> {
    let min_p = problem.uncertainty.and_then(|u| u.min_probability);
    let x = from.composition();
    let points = snapped_neighbours(problem, &x);
    let tried = points.len();
    let mut nearest_reason: Option<String> = None;
    let d2 = problem.min_distance_mol_pct.powi(2);
    for p in points {
        if let Some((k, _)) = kept.iter().find(|(_, k)| k.row.composition() == p) {
            nearest_reason
                .get_or_insert_with(|| format!("snaps onto the recipe of place {}", k + 1));
            continue;
        }
        // The shortlist distance holds between snapped recipes too.
        if let Some((k, _)) = kept
            .iter()
            .find(|(_, k)| dist2(&k.row.composition(), &p) < d2)
        {
            nearest_reason.get_or_insert_with(|| {
                format!(
                    "its nearest snapped recipe lies within {} mol% of the recipe of place {}",
                    problem.min_distance_mol_pct,
                    k + 1
                )
            });
            continue;
        }
        *evaluations += 1;
        let pass = if from.refined {
            Pass::Refinement
        } else {
            Pass::SpaceFilling
        };
        let candidate =
            evaluate_candidate_with(problem, from.index, pass, p, Some(SlabQuench::default()));
        let mut row = Row::new(&candidate, problem);
        row.evaluations = from.evaluations;
        if !candidate.feasible() {
            nearest_reason.get_or_insert_with(|| {
                let broken: Vec<&str> = candidate
                    .violations
                    .iter()
                    .map(|(l, _)| l.label())
                    .collect();
                format!("the nearest snapped recipe breaks: {}", broken.join(", "))
            });
            continue;
        }
        // A margin objective ranks what the model cannot vouch for last:
        // a vouched recipe must stay vouched.
        if uses_margin(problem) && from.vouched == Some(true) && row.vouched != Some(true) {
            nearest_reason.get_or_insert_with(|| {
                "the nearest snapped recipe is beyond what the model can vouch for".to_string()
            });
            continue;
        }
        if problem.uncertainty.is_some() {
            let comp = Composition::from_mol_percent_array(&p, 1e-6)?;
            match recipe_propagation(problem, &comp) {
                Ok(prop) => row = filled(&row, &prop),
                Err(e) => {
                    nearest_reason.get_or_insert_with(|| {
                        format!("the nearest snapped recipe could not be drawn: {e}")
                    });
                    continue;
                }
            }
            if let Some(m) = min_p {
                let got = row.probability_glassy.unwrap_or(0.0);
                if got < m {
                    nearest_reason.get_or_insert_with(|| {
                        format!("the nearest snapped recipe has P(glassy) = {got:.3}, below {m}")
                    });
                    continue;
                }
            }
        }
        return Ok(Ok(Shortlisted { row, candidate }));
    }
    Ok(Err(NoSnap {
        tried,
        reason: nearest_reason.unwrap_or_else(|| "no recipe tried".into()),
    }))
}

/// Snap every shortlisted recipe (see the module's rule) and keep those that
/// still pass; then, when some were dropped, refill their places from the
/// next-ranked candidates: `next(away, except)` gives the best candidate at
/// least the shortlist distance from every composition in `away` (the
/// recipes kept, as snapped) that is none of `except` (the recipes
/// shortlisted before snapping and the candidates tried), and each is
/// snapped and checked the same way, until the
/// shortlist holds `shortlist_size` recipes, the candidates run out, or
/// [`REFILL_TRIES_PER_PLACE`] per place were tried. The recipes kept are
/// then ranked again in the stage's order: by the objective, or with
/// `kind = "probability"` by P(glassy) (ties as `select::rank`). No snapped
/// recipe lies closer than the shortlist distance to one kept before it.
///
/// # Errors
/// A snapped recipe is not a composition (cannot happen for a recipe that
/// met the composition limits).
pub fn snap_shortlist(
    problem: &ScreenProblem,
    shortlist: Vec<Shortlisted>,
    next: &mut NextCandidate<'_>,
) -> Result<(Vec<Shortlisted>, SnapOutcome), Error> {
    let before = shortlist.len();
    let mut kept: Vec<(usize, Shortlisted)> = Vec::new();
    let mut dropped = Vec::new();
    let mut evaluations = 0;
    let mut except: Vec<[f64; N_OXIDES]> = shortlist.iter().map(|s| s.row.composition()).collect();
    for (place, s) in shortlist.into_iter().enumerate() {
        match snap_one(problem, &s.row, &kept, &mut evaluations)? {
            Ok(f) => kept.push((place, f)),
            Err(no) => dropped.push(SnapDrop {
                place: place + 1,
                mol_pct: s.row.composition(),
                reason: no.text(),
            }),
        }
    }
    let mut refilled = Vec::new();
    let mut refill_tried = 0;
    let mut ran_out = false;
    if !dropped.is_empty() {
        let target = problem.shortlist_size.max(before);
        let max_tries = REFILL_TRIES_PER_PLACE * target;
        let mut passed_over = 0;
        let mut away: Vec<[f64; N_OXIDES]> =
            kept.iter().map(|(_, k)| k.row.composition()).collect();
        while kept.len() < target {
            if refill_tried >= max_tries {
                break;
            }
            let Some(r) = next(&away, &except) else {
                ran_out = true;
                break;
            };
            refill_tried += 1;
            except.push(r.composition());
            match snap_one(problem, &r, &kept, &mut evaluations)? {
                Ok(f) => {
                    away.push(f.row.composition());
                    refilled.push(SnapRefill {
                        mol_pct: r.composition(),
                        passed_over,
                    });
                    passed_over = 0;
                    kept.push((before + refilled.len() - 1, f));
                }
                Err(_) => passed_over += 1,
            }
        }
    }
    let mut kept: Vec<Shortlisted> = kept.into_iter().map(|(_, s)| s).collect();
    // Snapping moves costs, margins and (drawn again) probabilities: rank
    // again in the stage's own order.
    if problem.objective == ObjectiveKind::Probability {
        let p = |s: &Shortlisted| s.row.probability_glassy.unwrap_or(f64::NEG_INFINITY);
        kept.sort_by(|a, b| {
            p(b).total_cmp(&p(a))
                .then_with(|| rank(&a.row, &b.row, |_| 0.0))
        });
    } else {
        kept.sort_by(|a, b| rank(&a.row, &b.row, objective_key));
    }
    Ok((
        kept,
        SnapOutcome {
            before,
            dropped,
            evaluations,
            refilled,
            refill_tried,
            refill_ran_out: ran_out,
        },
    ))
}
