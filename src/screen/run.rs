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
use super::first_pass::{chunk_count, space_filling_chunk};
use super::limits::LimitSummary;
use super::problem::{ScreenProblem, Search};
use super::refine::refine;
use super::select::Pools;
use super::simplex::Simplex;
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

/// How a run ended.
#[derive(Debug, Clone)]
pub enum ScreenEnd {
    Finished {
        shortlist: Vec<Shortlisted>,
        summary: LimitSummary,
    },
    /// Stopped on request; everything kept so far resumes.
    Interrupted { chunks_done: usize, chunks: usize },
}

/// Run (or resume) a screen.
///
/// # Errors
/// The store or the observer fails, or argmin refuses a refinement.
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
    for k in 0..chunks {
        let rows = match store.load_chunk(k)? {
            Some(rows) => rows,
            None => {
                if observer.stop_requested() {
                    return Ok(ScreenEnd::Interrupted {
                        chunks_done: done,
                        chunks,
                    });
                }
                let rows: Vec<Row> = space_filling_chunk(problem, search, &simplex, k)
                    .iter()
                    .map(|c| Row::new(c, problem))
                    .collect();
                store.save_chunk(k, &rows)?;
                done += 1;
                observer.chunk_done(done, chunks);
                rows
            }
        };
        observer.rows(&rows)?;
        for r in rows {
            pools.add(r);
        }
    }
    observer.first_pass_done();
    // Refinement from the best distinct seeds (by penalised objective).
    let seeds = pools.seeds(problem, search);
    let mut refined: Vec<Option<Row>> = Vec::with_capacity(seeds.len());
    for i in 0..seeds.len() {
        refined.push(store.load_refined(i)?);
    }
    let todo: Vec<usize> = (0..seeds.len()).filter(|&i| refined[i].is_none()).collect();
    if !todo.is_empty() && observer.stop_requested() {
        return Ok(ScreenEnd::Interrupted {
            chunks_done: chunks,
            chunks,
        });
    }
    let results: Vec<Result<(usize, Row), Error>> = {
        use rayon::prelude::*;
        todo.par_iter()
            .map(|&i| {
                let (c, n) = refine(problem, search, &simplex, i, &seeds[i])
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
    let refined: Vec<Row> = refined.into_iter().flatten().collect();
    if !refined.is_empty() {
        observer.rows(&refined)?;
    }
    for r in refined {
        pools.add(r);
    }
    // Re-evaluate the shortlisted recipes from their compositions (this also
    // restores the warnings the pools dropped to save memory), with the slab
    // estimate the batch sheets and the report show.
    let shortlist = pools
        .shortlist(problem)
        .into_iter()
        .map(|r| {
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
            Shortlisted { row, candidate }
        })
        .collect();
    Ok(ScreenEnd::Finished {
        shortlist,
        summary: pools.tally().clone(),
    })
}
