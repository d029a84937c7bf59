//! A screen's output folder: chunked checkpoints on disk (the store of
//! [`screen::run`]), the candidates table streamed as rows arrive, and the
//! files a scientist opens in the morning (shortlist, batch sheets, limit
//! summary, config as run, provenance).
//!
//! Checkpoints: every chunk of the space-filling pass and every refined seed
//! is written to `OUT/.work/` as soon as it is done (temp file + rename),
//! under a header holding the format version and a hash of the config.
//! `--resume` skips what is on disk and refuses a different config.

use super::results::{rows_frame, shortlist_json, write_atomic, write_batch_sheets};
use super::screen_config::RunPlan;
use super::table::write_frame;
use crate::error::Error;
use crate::report::text::{binding_text, screen_summary_text};
use crate::screen::{self, Row, ScreenEnd, ScreenObserver, ScreenStore, Unobserved};
use polars::prelude::*;
use std::path::{Path, PathBuf};
use std::sync::atomic::{AtomicBool, Ordering};
use std::sync::Arc;

/// Checkpoint format version (3: first-pass points mapped into the composition
/// polytope, rows carry their binding limits).
const FORMAT: u32 = 3;

/// How a run is started.
#[derive(Debug, Clone)]
pub struct ScreenOptions {
    pub out: PathBuf,
    pub resume: bool,
    pub force: bool,
    /// Stop (as if interrupted) after this many new chunks: for tests.
    pub stop_after_chunks: Option<usize>,
    /// Raised (e.g. by Ctrl-C) to stop at the next safe point.
    pub stop: Option<Arc<AtomicBool>>,
}

impl ScreenOptions {
    /// A fresh run into `out` (no resume, no overwrite, no stop flag).
    pub fn new(out: impl Into<PathBuf>) -> Self {
        ScreenOptions {
            out: out.into(),
            resume: false,
            force: false,
            stop_after_chunks: None,
            stop: None,
        }
    }
}

/// How a run ended.
#[derive(Debug, Clone, PartialEq)]
pub enum Outcome {
    Finished {
        shortlisted: usize,
        evaluated: usize,
        evaluations: usize,
        feasible: usize,
    },
    /// Stopped; the work so far is saved and `--resume` continues it.
    Interrupted { chunks_done: usize, chunks: usize },
    /// Every output was written, but no recipe meets every limit; the text
    /// names the limits that bound.
    NothingFeasible { limits: String },
}

#[derive(serde::Serialize, serde::Deserialize, PartialEq, Debug)]
struct Header {
    format: u32,
    config_hash: u64,
    program: String,
}

fn prepare(out: &Path, plan: &RunPlan, o: &ScreenOptions) -> Result<PathBuf, Error> {
    let work = out.join(".work");
    let header = Header {
        format: FORMAT,
        config_hash: plan.config_hash,
        program: env!("CARGO_PKG_VERSION").into(),
    };
    let exists = out.exists()
        && std::fs::read_dir(out)
            .map(|mut d| d.next().is_some())
            .unwrap_or(false);
    if exists && o.resume {
        let text = std::fs::read_to_string(work.join("header.json")).map_err(|_| {
            Error::bad_input(format!("{} holds no checkpoint to resume", out.display()))
        })?;
        let old: Header = serde_json::from_str(&text)
            .map_err(|e| Error::bad_input(format!("reading the checkpoint header: {e}")))?;
        if old.format != FORMAT {
            return Err(Error::bad_input(format!(
                "{}: checkpoint format {} cannot be resumed by this version (format {FORMAT})",
                out.display(),
                old.format
            )));
        }
        if old.config_hash != plan.config_hash {
            return Err(Error::bad_input(format!(
                "{}: refusing to resume: the config changed since the checkpoint was written",
                out.display()
            ))
            .with_hint("resume with the same config, or start again with --force"));
        }
        return Ok(work);
    }
    if exists && !o.force {
        return Err(Error::bad_input(format!(
            "output folder {} exists and is not empty",
            out.display()
        ))
        .with_hint(
            "--resume continues an interrupted run there; --force starts again and overwrites it",
        ));
    }
    if exists && o.force {
        std::fs::remove_dir_all(out).map_err(|e| Error::io("clearing", out, e))?;
    }
    std::fs::create_dir_all(&work).map_err(|e| Error::io("creating", &work, e))?;
    let json = serde_json::to_string_pretty(&header)
        .map_err(|e| Error::internal(format!("writing the checkpoint header: {e}")))?;
    write_atomic(&work.join("header.json"), json.as_bytes())?;
    Ok(work)
}

/// Checkpoints as JSON files in the `.work` folder.
struct FolderStore {
    work: PathBuf,
}

impl FolderStore {
    fn chunk_path(&self, k: usize) -> PathBuf {
        self.work.join(format!("chunk-{k:06}.json"))
    }
    fn refine_path(&self, i: usize) -> PathBuf {
        self.work.join(format!("refine-{i:03}.json"))
    }
}

fn read_json<T: serde::de::DeserializeOwned>(path: &Path, what: &str) -> Result<Option<T>, Error> {
    if !path.exists() {
        return Ok(None);
    }
    let text = std::fs::read_to_string(path).map_err(|e| Error::io("reading", path, e))?;
    serde_json::from_str(&text)
        .map(Some)
        .map_err(|e| Error::internal(format!("reading {what} {}: {e}", path.display())))
}

fn write_json<T: serde::Serialize + ?Sized>(path: &Path, value: &T) -> Result<(), Error> {
    let text = serde_json::to_string(value)
        .map_err(|e| Error::internal(format!("encoding {}: {e}", path.display())))?;
    write_atomic(path, text.as_bytes())
}

impl ScreenStore for FolderStore {
    fn has_chunk(&self, k: usize) -> bool {
        self.chunk_path(k).exists()
    }
    fn load_chunk(&mut self, k: usize) -> Result<Option<Vec<Row>>, Error> {
        read_json(&self.chunk_path(k), "checkpoint chunk")
    }
    fn save_chunk(&mut self, k: usize, rows: &[Row]) -> Result<(), Error> {
        write_json(&self.chunk_path(k), rows)
    }
    fn load_refined(&mut self, i: usize) -> Result<Option<Row>, Error> {
        read_json(&self.refine_path(i), "refined seed")
    }
    fn save_refined(&mut self, i: usize, row: &Row) -> Result<(), Error> {
        write_json(&self.refine_path(i), row)
    }
}

/// Streams every row into `candidates.parquet` and passes progress and stop
/// requests between the run and whoever watches it.
struct FolderObserver<'a> {
    plan: &'a RunPlan,
    tmp: PathBuf,
    writer: Option<polars::io::parquet::write::BatchedWriter<std::fs::File>>,
    watcher: &'a mut dyn ScreenObserver,
    stop: Option<Arc<AtomicBool>>,
    stop_after_chunks: Option<usize>,
    new_chunks: usize,
}

impl ScreenObserver for FolderObserver<'_> {
    fn chunk_done(&mut self, done: usize, total: usize) {
        self.new_chunks += 1;
        self.watcher.chunk_done(done, total);
    }
    fn first_pass_done(&mut self) {
        self.watcher.first_pass_done();
    }
    fn rows(&mut self, rows: &[Row]) -> Result<(), Error> {
        let refs: Vec<&Row> = rows.iter().collect();
        let df = rows_frame(&self.plan.problem, &refs, false)
            .map_err(|e| Error::internal(format!("building the candidates table: {e}")))?;
        if self.writer.is_none() {
            let f = std::fs::File::create(&self.tmp)
                .map_err(|e| Error::io("creating", &self.tmp, e))?;
            self.writer = Some(
                ParquetWriter::new(f)
                    .batched(df.schema())
                    .map_err(|e| Error::internal(format!("writing the candidates table: {e}")))?,
            );
        }
        if let Some(w) = self.writer.as_mut() {
            w.write_batch(&df)
                .map_err(|e| Error::internal(format!("writing the candidates table: {e}")))?;
        }
        self.watcher.rows(rows)
    }
    fn stop_requested(&mut self) -> bool {
        self.watcher.stop_requested()
            || self.stop.as_ref().is_some_and(|s| s.load(Ordering::SeqCst))
            || self.stop_after_chunks.is_some_and(|n| self.new_chunks >= n)
    }
}

/// Run (or resume) a screen into `o.out`, silently.
///
/// # Errors
/// An output folder that exists without --force/--resume, a resume under a
/// different config, failures to write.
pub fn run(plan: &RunPlan, o: &ScreenOptions) -> Result<Outcome, Error> {
    run_observed(plan, o, &mut Unobserved)
}

/// As [`run`], reporting progress to (and taking stop requests from) `watcher`.
///
/// # Errors
/// As [`run`].
pub fn run_observed(
    plan: &RunPlan,
    o: &ScreenOptions,
    watcher: &mut dyn ScreenObserver,
) -> Result<Outcome, Error> {
    let work = prepare(&o.out, plan, o)?;
    let threads = plan.threads.filter(|&t| t > 0).unwrap_or_else(|| {
        std::thread::available_parallelism()
            .map(|n| n.get())
            .unwrap_or(1)
    });
    let pool = rayon::ThreadPoolBuilder::new()
        .num_threads(threads)
        .build()
        .map_err(|e| Error::internal(format!("starting worker threads: {e}")))?;
    let mut store = FolderStore { work };
    let mut observer = FolderObserver {
        plan,
        tmp: o.out.join("candidates.parquet.partial"),
        writer: None,
        watcher,
        stop: o.stop.clone(),
        stop_after_chunks: o.stop_after_chunks,
        new_chunks: 0,
    };
    let end =
        pool.install(|| screen::run(&plan.problem, &plan.search, &mut store, &mut observer))?;
    match end {
        ScreenEnd::Interrupted {
            chunks_done,
            chunks,
        } => Ok(Outcome::Interrupted {
            chunks_done,
            chunks,
        }),
        ScreenEnd::Finished { shortlist, summary } => {
            if let Some(w) = observer.writer.take() {
                w.finish()
                    .map_err(|e| Error::internal(format!("writing the candidates table: {e}")))?;
                std::fs::rename(&observer.tmp, o.out.join("candidates.parquet"))
                    .map_err(|e| Error::io("renaming", &observer.tmp, e))?;
            }
            write_outputs(plan, &o.out, &shortlist, &summary)?;
            if shortlist.is_empty() {
                return Ok(Outcome::NothingFeasible {
                    limits: binding_text(&summary, true),
                });
            }
            Ok(Outcome::Finished {
                shortlisted: shortlist.len(),
                evaluated: summary.evaluated,
                evaluations: summary.evaluations,
                feasible: summary.feasible,
            })
        }
    }
}

fn write_outputs(
    plan: &RunPlan,
    out: &Path,
    shortlist: &[screen::Shortlisted],
    summary: &screen::LimitSummary,
) -> Result<(), Error> {
    let problem = &plan.problem;
    let rows: Vec<&Row> = shortlist.iter().map(|s| &s.row).collect();
    let mut df = rows_frame(problem, &rows, true)
        .map_err(|e| Error::internal(format!("building the shortlist table: {e}")))?;
    write_frame(&out.join("shortlist.csv"), &mut df)?;
    write_frame(&out.join("shortlist.parquet"), &mut df)?;
    write_atomic(
        &out.join("shortlist.json"),
        shortlist_json(problem, &rows).as_bytes(),
    )?;
    write_batch_sheets(plan, out, shortlist)?;
    // The config as run, and the provenance of the models.
    let mut as_run = format!(
        "# config as run by quenchwise {} (hash {:016x}); seed {}; threads {}\n",
        env!("CARGO_PKG_VERSION"),
        plan.config_hash,
        plan.search.seed,
        plan.threads
            .map(|t| t.to_string())
            .unwrap_or_else(|| "all cores".into())
    );
    as_run.push_str(&plan.config_text);
    write_atomic(&out.join("config-as-run.toml"), as_run.as_bytes())?;
    let models = &problem.models;
    let provenance = serde_json::json!({
        "program": format!("quenchwise {}", env!("CARGO_PKG_VERSION")),
        "model_set": models.about,
        "viscosity_model": { "name": models.viscosity.name, "source": models.viscosity.source },
        "phases": models.phases.iter().map(|p| serde_json::json!({
            "name": p.name, "formula": p.formula, "turnbull_alpha": p.turnbull_alpha,
            "calibrated_against": p.calibrated_against })).collect::<Vec<_>>(),
        "raw_materials": problem.cost.as_ref().map(|c| c.label.clone()),
        "kinetics_calibrated": models.phases.iter().all(|p| p.calibrated_against.is_some()),
        "config_dir": plan.config_path.parent().map(|p| std::fs::canonicalize(if p.as_os_str().is_empty() { Path::new(".") } else { p }).unwrap_or_else(|_| p.to_path_buf())),
        "seed": plan.search.seed,
    });
    let text = serde_json::to_string_pretty(&provenance)
        .map_err(|e| Error::internal(format!("writing provenance.json: {e}")))?;
    write_atomic(&out.join("provenance.json"), text.as_bytes())?;
    // Which limit rejected how much of the space.
    let mut lim = String::from("limit,candidates_breaking_it,candidates_breaking_only_it\n");
    for (l, any, only) in &summary.by_limit {
        lim.push_str(&format!("\"{}\",{any},{only}\n", l.label()));
    }
    write_atomic(&out.join("limits.csv"), lim.as_bytes())?;
    let text = screen_summary_text(
        &plan.config_path.display().to_string(),
        problem,
        summary,
        shortlist.len(),
    );
    write_atomic(&out.join("summary.txt"), text.as_bytes())?;
    let finished = out.join(".work").join("finished");
    std::fs::write(&finished, b"").map_err(|e| Error::io("writing", &finished, e))?;
    Ok(())
}
