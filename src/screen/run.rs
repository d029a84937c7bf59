//! The whole search as one loop, free of I/O: the first pass chunk by chunk,
//! refinement of the best distinct seeds, and the shortlist. Where finished
//! work is kept ([`ScreenStore`]) and who watches ([`ScreenObserver`]: progress,
//! a stream of every candidate row, a stop request) are traits the caller
//! passes in, in the manner of argmin's observers; `files::run_folder` keeps
//! checkpoints on disk, tests can keep them in memory.
//!
//! Every chunk is evaluated the same way whatever the thread count, and rows
//! are counted and selected in chunk order, so a resumed run ends with the
//! same shortlist as an uninterrupted one.

use super::candidate::{evaluate_candidate_with, Candidate, Pass, Row};
use super::first_pass::{chunk_count, space_filling_rows};
use super::limits::{Limit, LimitSummary};
use super::polytope::ACTIVE_TOL_MOL_PCT;
use super::probability::{select as select_by_probability, ProbabilityOutcome, ScreenDraws};
use super::problem::{ObjectiveKind, ScreenProblem, Search};
use super::refine::refine;
use super::select::{objective_key, rank, Pools};
use super::simplex::Simplex;
use super::snap::{snap_shortlist, SnapOutcome};
use crate::assess::SlabQuench;
use crate::error::Error;

/// Where finished work is kept so an interrupted run can resume.
pub trait ScreenStore: Send {
    /// Whether chunk `k` of the first pass is kept.
    fn has_chunk(&self, k: usize) -> bool;
    /// The rows of chunk `k`, if kept.
    ///
    /// # Errors
    /// The kept chunk cannot be read.
    fn load_chunk(&mut self, k: usize) -> Result<Option<Vec<Row>>, Error>;
    /// Keep the rows of chunk `k`.
    ///
    /// # Errors
    /// The chunk cannot be kept.
    fn save_chunk(&mut self, k: usize, rows: &[Row]) -> Result<(), Error>;
    /// The refined row of seed `i`, if kept.
    ///
    /// # Errors
    /// The kept row cannot be read.
    fn load_refined(&mut self, i: usize) -> Result<Option<Row>, Error>;
    /// Keep the refined row of seed `i`.
    ///
    /// # Errors
    /// The row cannot be kept.
    fn save_refined(&mut self, i: usize, row: &Row) -> Result<(), Error>;
    /// What the store had to repair since last asked (say, a damaged chunk it
    /// dropped so that the run computes it again), for the user to read.
    fn take_notices(&mut self) -> Vec<String> {
        Vec::new()
    }
}

/// Who watches a run. Every method has a default that does nothing.
pub trait ScreenObserver: Send {
    /// A first-pass chunk was evaluated and kept (`done` of `total` kept now).
    fn chunk_done(&mut self, _done: usize, _total: usize) {}
    /// The first pass is over.
    fn first_pass_done(&mut self) {}
    /// Every candidate row, first pass then refined, in a fixed order.
    ///
    /// # Errors
    /// The observer failed (e.g. writing a table); the run stops with it.
    fn rows(&mut self, _rows: &[Row]) -> Result<(), Error> {
        Ok(())
    }
    /// Whether the run should stop at the next safe point.
    fn stop_requested(&mut self) -> bool {
        false
    }
    /// Something the user should read (a repaired checkpoint, say).
    fn notice(&mut self, _text: &str) {}
}

/// An observer that watches nothing.
pub struct Unobserved;
impl ScreenObserver for Unobserved {}

/// One shortlisted recipe: its stored row and its fresh evaluation (with the
/// glassy-slab estimate), in rank order.
#[derive(Debug, Clone)]
pub struct Shortlisted {
    pub row: Row,
    pub candidate: Candidate,
}

/// The stages of a run, in order.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Stage {
    /// The space-filling pass, chunk by chunk.
    FirstPass,
    /// Refinement of the best distinct seeds.
    Refinement,
    /// Writing the tables, batch sheets and report (outside this module).
    Outputs,
}

impl Stage {
    /// What is counted in this stage, for messages ("12/64 chunks").
    pub fn unit(self) -> &'static str {
        match self {
            Stage::FirstPass => "chunks",
            Stage::Refinement => "refined seeds",
            Stage::Outputs => "output files",
        }
    }
}

/// How a run ended.
#[derive(Debug, Clone)]
pub enum ScreenEnd {
    Finished {
        shortlist: Vec<Shortlisted>,
        summary: LimitSummary,
        /// The Monte Carlo stage, when the problem has one.
        probability: Option<Box<ProbabilityOutcome>>,
        /// What snapping to weighable amounts did, when the problem asks
        /// for it ([`super::snap`]).
        snapping: Option<SnapOutcome>,
    },
    /// Stopped on request during `stage` with `done` of `total` of its units
    /// kept; everything kept so far resumes.
    Interrupted {
        stage: Stage,
        done: usize,
        total: usize,
    },
    /// Only a range of first-pass chunks was asked for ([`run_chunks`]), and
    /// all of them are kept.
    ChunksKept { chunks: std::ops::Range<usize> },
}

/// Evaluate and keep first-pass chunks `range` (a shard of a split run), and
/// nothing else. Chunks already kept are skipped.
///
/// # Errors
/// The store fails.
pub fn run_chunks(
    problem: &ScreenProblem,
    search: &Search,
    range: std::ops::Range<usize>,
    store: &mut dyn ScreenStore,
    observer: &mut dyn ScreenObserver,
) -> Result<ScreenEnd, Error> {
    let simplex = Simplex::new(problem);
    let total = range.len();
    let mut done = range.clone().filter(|&k| store.has_chunk(k)).count();
    let mut ahead: Option<(usize, Vec<Row>)> = None;
    for k in range.clone() {
        if store.has_chunk(k) {
            continue;
        }
        if observer.stop_requested() {
            return Ok(ScreenEnd::Interrupted {
                stage: Stage::FirstPass,
                done,
                total,
            });
        }
        let rows = chunk_or_ahead(problem, search, &simplex, k, &mut ahead);
        let next = (k + 1..range.end).find(|&j| !store.has_chunk(j));
        let (saved, computed) = overlapped(problem, search, &simplex, next, || {
            store.save_chunk(k, &rows)
        });
        ahead = computed;
        saved?;
        done += 1;
        observer.chunk_done(done, total);
    }
    Ok(ScreenEnd::ChunksKept { chunks: range })
}

fn chunk_rows(problem: &ScreenProblem, search: &Search, simplex: &Simplex, k: usize) -> Vec<Row> {
    space_filling_rows(problem, search, simplex, k)
}

/// Chunk `k`'s rows: those computed ahead while the chunk before was
/// written ([`overlapped`]), or computed now.
fn chunk_or_ahead(
    problem: &ScreenProblem,
    search: &Search,
    simplex: &Simplex,
    k: usize,
    ahead: &mut Option<(usize, Vec<Row>)>,
) -> Vec<Row> {
    match ahead.take() {
        Some((j, rows)) if j == k => rows,
        _ => chunk_rows(problem, search, simplex, k),
    }
}

/// `io` on this thread while chunk `next` is computed by the other worker
/// threads of the pool the screen runs in (so `--threads` still bounds it);
/// this thread joins in once `io` is done. Without the overlap the workers
/// waited while each chunk's checkpoint and rows were written (a
/// 10⁶-candidate screen used 1.5 of 2 cores). A chunk's rows do not depend
/// on when they are computed, so the results are the same; a chunk computed
/// ahead of a stop request is simply not kept.
fn overlapped<T>(
    problem: &ScreenProblem,
    search: &Search,
    simplex: &Simplex,
    next: Option<usize>,
    io: impl FnOnce() -> T,
) -> (T, Option<(usize, Vec<Row>)>) {
    let mut computed = None;
    let t = rayon::in_place_scope(|s| {
        if let Some(j) = next {
            let slot = &mut computed;
            s.spawn(move |_| *slot = Some((j, chunk_rows(problem, search, simplex, j))));
        }
        io()
    });
    (t, computed)
}

fn forward_notices(store: &mut dyn ScreenStore, observer: &mut dyn ScreenObserver) {
    for n in store.take_notices() {
        observer.notice(&n);
    }
}

/// Run (or resume) a screen.
///
/// # Errors
/// The store or the observer fails, or a refinement fails.
pub fn run(
    problem: &ScreenProblem,
    search: &Search,
    store: &mut dyn ScreenStore,
    observer: &mut dyn ScreenObserver,
) -> Result<ScreenEnd, Error> {
    let simplex = Simplex::new(problem);
    let chunks = chunk_count(search);
    let mut done = (0..chunks).filter(|&k| store.has_chunk(k)).count();
    let mut pools = Pools::new(problem, search);
    // With [uncertainty], the draws of the Monte Carlo stage, made once:
    // ranked by probability, every feasible row also carries an upper bound
    // on its probability from them, which orders the pool the stage picks
    // from (screen::probability::ScreenDraws).
    let draws = match problem.uncertainty {
        Some(_) => Some(ScreenDraws::new(problem)?),
        None => None,
    };
    let bound = draws.as_ref().filter(|_| pools.wants_bounds());
    let add = |pools: &mut Pools, rows: Vec<Row>| match &bound {
        Some(b) => {
            let bounds = b.bounds(problem, &rows);
            for (r, u) in rows.into_iter().zip(bounds) {
                pools.add_bounded(r, u);
            }
        }
        None => {
            for r in rows {
                pools.add(r);
            }
        }
    };
    let mut ahead: Option<(usize, Vec<Row>)> = None;
    for k in 0..chunks {
        // Stop between any two chunks, kept or not: reading back a long run's
        // chunks takes time too.
        if observer.stop_requested() {
            return Ok(ScreenEnd::Interrupted {
                stage: Stage::FirstPass,
                done,
                total: chunks,
            });
        }
        let kept = store.load_chunk(k);
        forward_notices(store, observer);
        let (rows, computed) = match kept? {
            Some(rows) => (rows, false),
            None => (
                chunk_or_ahead(problem, search, &simplex, k, &mut ahead),
                true,
            ),
        };
        // The next chunk not yet kept is computed while this one is written.
        let next = (k + 1 < chunks && !store.has_chunk(k + 1)).then_some(k + 1);
        let (written, next_rows) = overlapped(
            problem,
            search,
            &simplex,
            next,
            || -> Result<Vec<Row>, Error> {
                if computed {
                    store.save_chunk(k, &rows)?;
                    // A damaged chunk was counted as kept and is computed again.
                    done = (done + 1).min(chunks);
                    observer.chunk_done(done, chunks);
                }
                observer.rows(&rows)?;
                Ok(rows)
            },
        );
        ahead = next_rows;
        add(&mut pools, written?);
    }
    observer.first_pass_done();
    // Refinement of the best distinct seeds by penalised objective, dealt
    // out by primary phase, as many at a time as there are threads (a stop
    // request waits for one round at most).
    let seeds = pools.seeds(problem, search.refine_from);
    let picks_to_refine = problem.shortlist_size.saturating_sub(1);
    let total = seeds.len() + picks_to_refine;
    let mut refined: Vec<Option<Row>> = Vec::with_capacity(seeds.len());
    for i in 0..seeds.len() {
        let kept = store.load_refined(i);
        forward_notices(store, observer);
        refined.push(kept?);
    }
    let todo: Vec<usize> = (0..seeds.len()).filter(|&i| refined[i].is_none()).collect();
    let round = rayon::current_num_threads().max(1);
    for batch in todo.chunks(round) {
        if observer.stop_requested() {
            return Ok(ScreenEnd::Interrupted {
                stage: Stage::Refinement,
                done: refined.iter().filter(|r| r.is_some()).count(),
                total,
            });
        }
        let results: Vec<Result<(usize, Row), Error>> = {
            use rayon::prelude::*;
            batch
                .par_iter()
                .map(|&i| {
                    let (c, n) = refine(problem, search, &simplex, i, &seeds[i], &[])
                        .map_err(|e| Error::internal(format!("refining seed {i}: {e}")))?;
                    let mut row = Row::new(&c, problem);
                    row.evaluations = n;
                    Ok((i, row))
                })
                .collect()
        };
        for r in results {
            let (i, row) = r?;
            store.save_refined(i, &row)?;
            refined[i] = Some(row);
        }
    }
    let refined: Vec<Row> = refined.into_iter().flatten().collect();
    if !refined.is_empty() {
        observer.rows(&refined)?;
    }
    // Every refined row, for a Monte Carlo stage that must walk every
    // feasible recipe again (below).
    let mut refined_rows: Vec<Row> = refined.clone();
    add(&mut pools, refined);
    // The shortlist, one recipe at a time (docs/science.md, "The screen"):
    // the best feasible recipe; then, for each further place, a refinement
    // from the best seed at least the shortlist distance from every recipe
    // picked so far, with that distance as a constraint, so that each place
    // holds the best recipe that differs enough from those above it rather
    // than a neighbour of one optimum.
    let d = problem.min_distance_mol_pct;
    let mut picks: Vec<Row> = Vec::new();
    if let Some(first) = pools.best_feasible_away(&[], d) {
        picks.push(first.clone());
    }
    for k in 0..picks_to_refine {
        if picks.is_empty() {
            break;
        }
        let away: Vec<[f64; crate::composition::N_OXIDES]> =
            picks.iter().map(|r| r.composition()).collect();
        if let Some(seed) = pools.best_seed_away(&away, d) {
            let i = seeds.len() + k;
            let kept = store.load_refined(i);
            forward_notices(store, observer);
            let row = match kept? {
                Some(row) => row,
                None => {
                    if observer.stop_requested() {
                        return Ok(ScreenEnd::Interrupted {
                            stage: Stage::Refinement,
                            done: seeds.len() + k,
                            total,
                        });
                    }
                    let (c, n) = refine(problem, search, &simplex, i, &seed, &away)
                        .map_err(|e| Error::internal(format!("refining place {}: {e}", k + 2)))?;
                    let mut row = Row::new(&c, problem);
                    row.evaluations = n;
                    store.save_refined(i, &row)?;
                    row
                }
            };
            observer.rows(std::slice::from_ref(&row))?;
            refined_rows.push(row.clone());
            add(&mut pools, vec![row]);
        }
        match pools.best_feasible_away(&away, d) {
            Some(next) => picks.push(next.clone()),
            None => break,
        }
    }
    // With uncertainty, the Monte Carlo stage picks from the feasible rows
    // kept (screen::probability); the point-estimate picks above gave it the
    // refined recipes of each place.
    let mut summary = pools.tally().clone();
    let probability = match &draws {
        Some(draws) => {
            let (pool, let_go) = pools.probability_pool();
            let objective_let_go = pools.objective_let_go().cloned();
            let mut out = select_by_probability(
                problem,
                draws,
                &pool,
                let_go.as_ref(),
                objective_let_go.as_ref(),
            );
            if out.pool_exact == Some(false) && problem.objective != ObjectiveKind::Probability {
                // Ranked by the objective, the pool ran out (or could not
                // prove the shortlist): walk every feasible recipe of the
                // screen again, read back from the store (or evaluated
                // again, the same numbers), so that the shortlist is the
                // one drawing every feasible recipe gives (docs/science.md,
                // "Uncertainty in the screen").
                let mut all: Vec<Row> = Vec::new();
                for k in 0..chunks {
                    let kept = store.load_chunk(k);
                    forward_notices(store, observer);
                    let rows = match kept? {
                        Some(rows) => rows,
                        None => chunk_rows(problem, search, &simplex, k),
                    };
                    all.extend(rows.into_iter().filter(|r| r.feasible));
                }
                all.extend(refined_rows.iter().filter(|r| r.feasible).cloned());
                for r in &mut all {
                    r.warnings = String::new();
                }
                out = select_by_probability(problem, draws, &all, None, None);
                out.objective_let_go = true;
                out.walked_every_feasible = true;
            }
            summary.reject_feasible(Limit::Probability, out.below_min);
            picks = out.picks.clone();
            Some(Box::new(out))
        }
        None => {
            picks.sort_by(|a, b| rank(a, b, objective_key));
            None
        }
    };
    // Re-evaluate the shortlisted recipes from their compositions (this also
    // restores the warnings the pools dropped to save memory), with the slab
    // estimate the batch sheets and the report show; a recipe held at the
    // shortlist distance from another says so among its binding limits.
    let compositions: Vec<_> = picks.iter().map(|r| r.composition()).collect();
    let shortlist = picks
        .iter()
        .enumerate()
        .map(|(k, r)| {
            let pass = if r.refined {
                Pass::Refinement
            } else {
                Pass::SpaceFilling
            };
            let candidate = evaluate_candidate_with(
                problem,
                r.index,
                pass,
                r.composition(),
                Some(SlabQuench::default()),
            );
            let mut row = Row::new(&candidate, problem);
            row.evaluations = r.evaluations;
            row.probability_glassy = r.probability_glassy;
            row.critical_rate_p05_k_per_s = r.critical_rate_p05_k_per_s;
            row.critical_rate_p95_k_per_s = r.critical_rate_p95_k_per_s;
            row.probability_from = r.probability_from.clone();
            row.probability_glassy_lower95 = r.probability_glassy_lower95;
            row.probability_glassy_with = r.probability_glassy_with.clone();
            // Re-evaluated with the glassy slab, the point estimate knows
            // whether the model vouches for it; the band's 5 % end lies on
            // its glassy side (super::probability::filled).
            let point_vouched = row.vouched != Some(false);
            row.band_vouched = r.band_vouched.map(|b| b && point_vouched);
            let mut band_note = r
                .warnings
                .split("; ")
                .find(|w| w.starts_with("band beyond"))
                .map(str::to_string);
            if band_note.is_none() && r.band_vouched == Some(true) && !point_vouched {
                band_note = r.critical_rate_p05_k_per_s.map(|lo| {
                    format!(
                        "band beyond what the model can vouch for: {}",
                        super::probability::glassy_side_of_unvouched(lo)
                    )
                });
            }
            if let Some(w) = band_note {
                if !row.warnings.is_empty() {
                    row.warnings.push_str("; ");
                }
                row.warnings.push_str(&w);
            }
            let x = r.composition();
            for (j, other) in compositions.iter().enumerate().take(k) {
                let dist = super::simplex::dist2(&x, other).sqrt();
                if r.refined && dist <= d + ACTIVE_TOL_MOL_PCT {
                    if !row.binding.is_empty() {
                        row.binding.push_str(", ");
                    }
                    row.binding
                        .push_str(&format!("{d} mol% from rank {}", j + 1));
                }
            }
            Shortlisted { row, candidate }
        })
        .collect();
    let (shortlist, snapping) = match problem.snapping {
        Some(_) => {
            // The next-ranked candidates, for the places snapping drops:
            // with the Monte Carlo stage, the recipes it drew that reach
            // min_probability, in its ranking; else the feasible rows kept,
            // by the objective.
            let drawn: Option<Vec<Row>> = probability.as_ref().map(|p| {
                let min_p = problem.uncertainty.and_then(|u| u.min_probability);
                let mut v: Vec<Row> = p
                    .drawn
                    .iter()
                    .filter(|r| min_p.is_none_or(|m| r.probability_glassy.unwrap_or(0.0) >= m))
                    .cloned()
                    .collect();
                if problem.objective == super::problem::ObjectiveKind::Probability {
                    v.sort_by(|a, b| {
                        let pa = a.probability_glassy.unwrap_or(0.0);
                        let pb = b.probability_glassy.unwrap_or(0.0);
                        pb.total_cmp(&pa).then_with(|| rank(a, b, |_| 0.0))
                    });
                } else {
                    v.sort_by(|a, b| rank(a, b, objective_key));
                }
                v
            });
            let d2 = d * d;
            type Mol = [f64; crate::composition::N_OXIDES];
            let mut next = |away: &[Mol], except: &[Mol]| -> Option<Row> {
                match &drawn {
                    Some(v) => v
                        .iter()
                        .find(|r| {
                            let x = r.composition();
                            !except.contains(&x)
                                && away.iter().all(|p| super::simplex::dist2(p, &x) >= d2)
                        })
                        .cloned(),
                    None => pools.best_feasible_away_except(away, d, except).cloned(),
                }
            };
            let (kept, outcome) = snap_shortlist(problem, shortlist, &mut next)?;
            (kept, Some(outcome))
        }
        None => (shortlist, None),
    };
    Ok(ScreenEnd::Finished {
        shortlist,
        summary,
        probability,
        snapping,
    })
}
