//! `quenchwise screen`, `check` and `report`: a screen run safely overnight
//! (Ctrl-C and SIGTERM stop it at the next safe point, the work saved), a
//! config checked without running, and the HTML report of a finished run.

use super::progress::Progress;
use super::{threads, Outcome};
use crate::cli::{CheckArgs, ReportArgs, ScreenArgs};
use quenchwise::error::{Error, ResultExt};
use quenchwise::files::results::write_report;
use quenchwise::files::run_folder::{self, ScreenOptions};
use quenchwise::files::screen_config;
use quenchwise::screen::{chunk_count, ScreenObserver, Simplex};
use std::sync::atomic::{AtomicBool, Ordering};
use std::sync::{Arc, OnceLock};

/// The flag Ctrl-C and SIGTERM raise (one handler per process).
fn stop_flag() -> Arc<AtomicBool> {
    static FLAG: OnceLock<Arc<AtomicBool>> = OnceLock::new();
    FLAG.get_or_init(|| {
        let flag = Arc::new(AtomicBool::new(false));
        let f = flag.clone();
        // If a handler cannot be installed the run still works; it just
        // cannot be stopped gracefully.
        let _ = ctrlc::set_handler(move || f.store(true, Ordering::SeqCst));
        flag
    })
    .clone()
}

/// Shows the first pass's progress.
struct Watch {
    progress: Option<Progress>,
}

impl ScreenObserver for Watch {
    fn chunk_done(&mut self, done: usize, total: usize) {
        let p = self
            .progress
            .get_or_insert_with(|| Progress::new("screen", "chunks", total, done - 1, true));
        p.set(done);
    }
    fn first_pass_done(&mut self) {
        if let Some(p) = &self.progress {
            p.finish();
        }
    }
}

pub fn check(a: CheckArgs) -> Result<Outcome, Error> {
    let plan = screen_config::load(&a.config)?;
    let problem = &plan.problem;
    let simplex = Simplex::new(problem);
    println!(
        "{}: valid. {} oxides vary ({} free, {} closes the sum); {} linear constraints; {} first-pass points in {} chunks; R_c must be ≤ {:.4} K/s",
        a.config.display(),
        problem.oxides.len(),
        simplex.dims(),
        simplex.balance.0,
        problem.constraints.len(),
        plan.search.first_pass_points,
        chunk_count(&plan.search),
        problem.allowed_rate().0
    );
    Ok(Outcome::Finished)
}

pub fn screen(a: ScreenArgs) -> Result<Outcome, Error> {
    let mut plan = screen_config::load(&a.config)?;
    if let Some(t) = threads(a.threads)? {
        plan.threads = Some(t);
    }
    let stop = stop_flag();
    stop.store(false, Ordering::SeqCst);
    let opts = ScreenOptions {
        out: a.out.clone(),
        resume: a.resume,
        force: a.force,
        stop_after_chunks: a.stop_after_chunks,
        stop: Some(stop),
    };
    let mut watch = Watch { progress: None };
    match run_folder::run_observed(&plan, &opts, &mut watch)? {
        run_folder::Outcome::Finished {
            shortlisted,
            evaluated,
            feasible,
            ..
        } => {
            let text = std::fs::read_to_string(a.out.join("summary.txt")).unwrap_or_default();
            print!("{text}");
            if !a.no_report {
                let p = write_report(&a.out).context("writing the report")?;
                println!("report: {}", p.display());
            }
            println!(
                "\nshortlist: {} ({shortlisted} recipes of {feasible} feasible, {evaluated} evaluated); batch sheets in {}",
                a.out.join("shortlist.csv").display(),
                a.out.join("batch-sheets").display()
            );
            Ok(Outcome::Finished)
        }
        run_folder::Outcome::Interrupted {
            chunks_done,
            chunks,
        } => {
            eprintln!(
                "quenchwise screen: stopped after {chunks_done}/{chunks} chunks; the work so far is saved.\nhint: quenchwise screen {} --out {} --resume",
                a.config.display(),
                a.out.display()
            );
            Ok(Outcome::Interrupted)
        }
        run_folder::Outcome::NothingFeasible { limits } => {
            eprintln!("quenchwise: no recipe meets every limit\n{limits}");
            Ok(Outcome::NothingFeasible)
        }
    }
}

pub fn report(a: ReportArgs) -> Result<Outcome, Error> {
    let p = write_report(&a.dir)?;
    println!("wrote {}", p.display());
    Ok(Outcome::Finished)
}
