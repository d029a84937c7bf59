//! `quenchwise screen`, `check` and `report`: a screen run safely overnight
//! (Ctrl-C and SIGTERM stop it at the next safe point, the work saved), a
//! config checked without running, and the HTML report of a finished run.

use super::progress::Progress;
use super::{threads, Outcome};
use crate::cli::{CheckArgs, FolderArgs, MergeArgs, ReportArgs, ScreenArgs};
use quenchwise::error::Error;
use quenchwise::files::results::write_report;
use quenchwise::files::run_folder::{self, Opening, RunFolder, ScreenOptions, Shard};
use quenchwise::files::screen_config;
use quenchwise::report::text::count;
use quenchwise::screen::{chunk_count, ScreenObserver, Simplex, Stage};

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
    fn notice(&mut self, text: &str) {
        errln!("note: {text}");
    }
}

/// What the config loader changed (a capped thread count), said once.
fn say_notes(plan: &screen_config::RunPlan, config: &std::path::Path) {
    for note in &plan.notes {
        errln!("quenchwise: {}: {note}", config.display());
    }
}

pub fn check(a: CheckArgs) -> Result<Outcome, Error> {
    let plan = screen_config::load(&a.config)?;
    say_notes(&plan, &a.config);
    let problem = &plan.problem;
    let simplex = Simplex::new(problem);
    outln!(
        "{}: valid. {} oxides vary ({} free, {} closes the sum); {}; {} first-pass points in {}; {}",
        a.config.display(),
        problem.oxides.len(),
        simplex.dims(),
        simplex.balance.0,
        count(problem.constraints.len(), "linear constraint", "linear constraints"),
        plan.search.first_pass_points,
        count(chunk_count(&plan.search), "chunk", "chunks"),
        match problem.uncertainty.and_then(|u| u.min_probability) {
            Some(p) => format!(
                "P(glassy at {:.4} K/s) must be ≥ {p} (the probability decides, not the safety factor)",
                problem.equipment.rate.0
            ),
            None => format!("R_c must be ≤ {:.4} K/s", problem.allowed_rate().0),
        }
    );
    if let Some(line) = quenchwise::report::text::quench_options_text(problem) {
        outln!("{line}");
    }
    Ok(Outcome::Finished)
}

fn options(out: &std::path::Path, f: &FolderArgs) -> ScreenOptions {
    let stop = super::lowered_stop_flag().clone();
    ScreenOptions {
        resume: f.resume,
        force: f.force,
        report: !f.no_report,
        keep_checkpoints: f.keep_checkpoints,
        stop: Some(stop),
        ..ScreenOptions::new(out)
    }
}

pub fn screen(a: ScreenArgs) -> Result<Outcome, Error> {
    let mut plan = screen_config::load(&a.config)?;
    say_notes(&plan, &a.config);
    if let Some(t) = threads(a.threads)? {
        plan.threads = Some(t);
    }
    let mut opts = options(&a.out, &a.folder);
    opts.stop_after_chunks = a.stop_after_chunks;
    opts.shard = a.shard.as_deref().map(Shard::parse).transpose()?;
    let mut watch = Watch { progress: None };
    let end = run_folder::run_observed(&plan, &opts, &mut watch)?;
    let again = format!(
        "quenchwise screen {} --out {}{} --resume",
        a.config.display(),
        a.out.display(),
        a.shard
            .as_deref()
            .map(|s| format!(" --shard {s}"))
            .unwrap_or_default()
    );
    tell(end, &a.out, &again)
}

pub fn merge(a: MergeArgs) -> Result<Outcome, Error> {
    let mut opts = options(&a.out, &a.folder);
    opts.stop_after_chunks = None;
    let mut watch = Watch { progress: None };
    let threads = threads(a.threads)?;
    let end = run_folder::merge(&a.shards, threads, &opts, &mut watch)?;
    let again = format!(
        "quenchwise merge --out {} {} --resume",
        a.out.display(),
        a.shards
            .iter()
            .map(|p| p.display().to_string())
            .collect::<Vec<_>>()
            .join(" ")
    );
    tell(end, &a.out, &again)
}

/// summary.txt without its closing caution (the run prints the caution
/// once, on stderr, unless --quiet).
fn without_caution(text: &str) -> String {
    match text.find("\ncaution:") {
        Some(i) => format!("{}\n", &text[..i]),
        None => text.to_string(),
    }
}

/// Say how a run ended.
fn tell(end: run_folder::Outcome, out: &std::path::Path, again: &str) -> Result<Outcome, Error> {
    match end {
        run_folder::Outcome::Finished {
            shortlisted,
            evaluated,
            feasible,
            ..
        } => {
            let text = std::fs::read_to_string(out.join("summary.txt")).unwrap_or_default();
            out!("{}", without_caution(&text));
            if out.join("report.html").exists() {
                outln!("report: {}", out.join("report.html").display());
            }
            outln!(
                "\nshortlist: {} ({} of {feasible} feasible, {evaluated} evaluated); batch sheets in {}",
                out.join("shortlist.csv").display(),
                count(shortlisted, "recipe", "recipes"),
                out.join("batch-sheets").display()
            );
            outln!(
                "every candidate: {}/ (Parquet, read the folder as one table)",
                out.join(run_folder::CANDIDATES_DIR).display()
            );
            Ok(Outcome::Finished)
        }
        run_folder::Outcome::Interrupted { stage, done, total } => {
            let during = match stage {
                Stage::FirstPass => "the first pass",
                Stage::Refinement => "refinement",
                Stage::Outputs => "writing the outputs",
            };
            errln!(
                "quenchwise: stopped during {during} ({done}/{total} {} kept); the work so far is saved.\nhint: {again}",
                stage.unit()
            );
            Ok(Outcome::Interrupted)
        }
        run_folder::Outcome::NothingFeasible { limits } => {
            errln!("quenchwise: no recipe meets every limit\n{limits}");
            Ok(Outcome::NothingFeasible)
        }
        run_folder::Outcome::AlreadyFinished => {
            let text = std::fs::read_to_string(out.join("summary.txt")).unwrap_or_default();
            out!("{}", without_caution(&text));
            outln!(
                "\n{} holds a finished run; nothing to resume (shortlist: {})",
                out.display(),
                out.join("shortlist.csv").display()
            );
            Ok(Outcome::Finished)
        }
        run_folder::Outcome::ShardDone { shard, chunks } => {
            outln!(
                "shard {}/{}: chunks {}..{} of the first pass kept in {}\nwhen every shard is done: quenchwise merge --out DIR SHARD_DIR...",
                shard.index,
                shard.count,
                chunks.start,
                chunks.end,
                out.display()
            );
            Ok(Outcome::Finished)
        }
    }
}

pub fn report(a: ReportArgs) -> Result<Outcome, Error> {
    let folder = RunFolder::open(&a.dir, Opening::Existing)?;
    let p = write_report(&folder)?;
    outln!("wrote {}", p.display());
    Ok(Outcome::Finished)
}
