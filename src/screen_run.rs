//! Running a screen safely overnight: the output folder, chunked checkpoints,
//! Ctrl-C / SIGTERM, resume, progress, and the files a scientist opens in the
//! morning. The search itself is in [`crate::screen`].
//!
//! Checkpoints: every chunk of the space-filling pass and every refined seed is
//! written to `OUT/.work/` as soon as it is done (temp file + rename), under a
//! header holding the format version and a hash of the config. `--resume`
//! skips what is on disk and refuses a different config. Chunks are evaluated
//! in order and are independent of the thread count, so a resumed run, or a run
//! with other threads, ends with the same shortlist.

use crate::batch::least_cost_batch;
use crate::composition::{Composition, Oxide};
use crate::config::RunPlan;
use crate::evaluate::{evaluate_composition, Calibration, SlabQuench};
use crate::screen::{self, Row, Simplex};
use anyhow::{bail, Context, Result};
use polars::prelude::*;
use std::io::IsTerminal;
use std::path::{Path, PathBuf};
use std::sync::atomic::{AtomicBool, Ordering};

/// Raised by Ctrl-C or SIGTERM; checked between chunks and seeds.
static STOP: AtomicBool = AtomicBool::new(false);

/// Checkpoint format version.
const FORMAT: u32 = 1;

/// How a run is started.
#[derive(Debug, Clone)]
pub struct ScreenOptions {
    pub out: PathBuf,
    pub resume: bool,
    pub force: bool,
    /// Stop (as if interrupted) after this many new chunks: for tests.
    pub stop_after_chunks: Option<usize>,
    /// Show a progress bar / progress lines.
    pub progress: bool,
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
    Interrupted {
        chunks_done: usize,
        chunks: usize,
    },
}

#[derive(serde::Serialize, serde::Deserialize, PartialEq, Debug)]
struct Header {
    format: u32,
    config_hash: u64,
    program: String,
}

fn write_atomic(path: &Path, bytes: &[u8]) -> Result<()> {
    let tmp = path.with_extension("partial");
    std::fs::write(&tmp, bytes).with_context(|| format!("writing {}", tmp.display()))?;
    std::fs::rename(&tmp, path)
        .with_context(|| format!("renaming {} to {}", tmp.display(), path.display()))?;
    Ok(())
}

fn install_stop_handler() {
    static ONCE: std::sync::Once = std::sync::Once::new();
    ONCE.call_once(|| {
        // A second handler in the same process (tests) is refused; the first one
        // already sets the same flag.
        let _ = ctrlc::set_handler(|| STOP.store(true, Ordering::SeqCst));
    });
}

fn prepare(out: &Path, plan: &RunPlan, o: &ScreenOptions) -> Result<PathBuf> {
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
        let text = std::fs::read_to_string(work.join("header.json"))
            .with_context(|| format!("{} holds no checkpoint to resume", out.display()))?;
        let old: Header = serde_json::from_str(&text).context("reading the checkpoint header")?;
        if old.format != FORMAT {
            bail!(crate::cli::UsageError(format!(
                "{}: checkpoint format {} cannot be resumed by this version (format {FORMAT})",
                out.display(),
                old.format
            )));
        }
        if old.config_hash != plan.config_hash {
            bail!(crate::cli::UsageError(format!(
                "{}: refusing to resume: the config changed since the checkpoint was written\nhint: resume with the same config, or start again with --force",
                out.display()
            )));
        }
        return Ok(work);
    }
    if exists && !o.force {
        bail!(crate::cli::UsageError(format!(
            "output folder {} exists and is not empty\nhint: --resume continues an interrupted run there; --force starts again and overwrites it",
            out.display()
        )));
    }
    if exists && o.force {
        std::fs::remove_dir_all(out).with_context(|| format!("clearing {}", out.display()))?;
    }
    std::fs::create_dir_all(&work).with_context(|| format!("creating {}", work.display()))?;
    write_atomic(
        &work.join("header.json"),
        serde_json::to_string_pretty(&header)?.as_bytes(),
    )?;
    Ok(work)
}

struct Progress {
    bar: Option<indicatif::ProgressBar>,
    total: usize,
    last_line: std::time::Instant,
    start: std::time::Instant,
}

impl Progress {
    fn new(total: usize, done: usize, show: bool) -> Self {
        let bar = (show && std::io::stderr().is_terminal()).then(|| {
            let b = indicatif::ProgressBar::new(total as u64);
            b.set_style(
                indicatif::ProgressStyle::with_template(
                    "screen {bar:40} {pos}/{len} chunks  {per_sec}  eta {eta}",
                )
                .unwrap_or_else(|_| indicatif::ProgressStyle::default_bar()),
            );
            b.set_position(done as u64);
            b
        });
        Progress {
            bar,
            total,
            last_line: std::time::Instant::now(),
            start: std::time::Instant::now(),
        }
    }

    fn tick(&mut self, done: usize, show: bool) {
        if let Some(b) = &self.bar {
            b.set_position(done as u64);
        } else if show && (self.last_line.elapsed().as_secs() >= 30 || done == self.total) {
            self.last_line = std::time::Instant::now();
            eprintln!(
                "quenchwise screen: {done}/{} chunks done, {:.0} s elapsed",
                self.total,
                self.start.elapsed().as_secs_f64()
            );
        }
    }

    fn finish(&self) {
        if let Some(b) = &self.bar {
            b.finish_and_clear();
        }
    }
}

/// Run (or resume) a screen into `o.out`.
///
/// # Errors
/// An output folder that exists without --force/--resume, a resume under a
/// different config, failures to write, or no recipe meeting every limit.
pub fn run(plan: &RunPlan, o: &ScreenOptions) -> Result<Outcome> {
    install_stop_handler();
    STOP.store(false, Ordering::SeqCst);
    let work = prepare(&o.out, plan, o)?;
    let threads = plan.threads.filter(|&t| t > 0).unwrap_or_else(|| {
        std::thread::available_parallelism()
            .map(|n| n.get())
            .unwrap_or(1)
    });
    let pool = rayon::ThreadPoolBuilder::new()
        .num_threads(threads)
        .build()
        .context("starting worker threads")?;
    pool.install(|| run_in_pool(plan, o, &work))
}

fn chunk_path(work: &Path, k: usize) -> PathBuf {
    work.join(format!("chunk-{k:06}.json"))
}

fn run_in_pool(plan: &RunPlan, o: &ScreenOptions, work: &Path) -> Result<Outcome> {
    let simplex = Simplex::new(plan);
    let chunks = screen::chunk_count(plan);
    let done_before = (0..chunks)
        .filter(|&k| chunk_path(work, k).exists())
        .count();
    let mut progress = Progress::new(chunks, done_before, o.progress);
    let mut new_chunks = 0;
    let mut done = done_before;
    for k in 0..chunks {
        let path = chunk_path(work, k);
        if path.exists() {
            continue;
        }
        if STOP.load(Ordering::SeqCst) || o.stop_after_chunks.is_some_and(|n| new_chunks >= n) {
            progress.finish();
            return Ok(Outcome::Interrupted {
                chunks_done: done,
                chunks,
            });
        }
        let rows: Vec<Row> = screen::space_filling_chunk(plan, &simplex, k)
            .iter()
            .map(|c| Row::new(c, plan))
            .collect();
        write_atomic(&path, serde_json::to_string(&rows)?.as_bytes())?;
        new_chunks += 1;
        done += 1;
        progress.tick(done, o.progress);
    }
    progress.finish();
    // Stream every chunk into candidates.parquet and keep only what selection and
    // the limit tally need, so memory stays flat however many points were run.
    let mut pool = Pools::new(plan);
    let tmp = o.out.join("candidates.parquet.partial");
    let mut writer: Option<polars::io::parquet::write::BatchedWriter<std::fs::File>> = None;
    for k in 0..chunks {
        let text = std::fs::read_to_string(chunk_path(work, k))?;
        let chunk: Vec<Row> =
            serde_json::from_str(&text).with_context(|| format!("reading checkpoint chunk {k}"))?;
        let refs: Vec<&Row> = chunk.iter().collect();
        let df = rows_frame(plan, &refs, false)?;
        if writer.is_none() {
            let f = std::fs::File::create(&tmp)
                .with_context(|| format!("creating {}", tmp.display()))?;
            writer = Some(ParquetWriter::new(f).batched(df.schema())?);
        }
        writer.as_mut().expect("created above").write_batch(&df)?;
        for r in chunk {
            pool.add(r);
        }
    }
    // Refinement from the best distinct seeds (by penalised objective).
    let seeds: Vec<[f64; crate::composition::N_OXIDES]> = screen::distinct_rows(
        &pool.by_penalty,
        plan.refine_from,
        plan.min_distance_mol_pct,
        |r| r.penalised.is_some() && r.error.is_none() && !r.broken.contains("composition"),
        |r| r.penalised.unwrap_or(f64::INFINITY),
    )
    .iter()
    .map(|r| r.composition())
    .collect();
    {
        use rayon::prelude::*;
        let todo: Vec<usize> = (0..seeds.len())
            .filter(|i| !work.join(format!("refine-{i:03}.json")).exists())
            .collect();
        if STOP.load(Ordering::SeqCst) && !todo.is_empty() {
            return Ok(Outcome::Interrupted {
                chunks_done: chunks,
                chunks,
            });
        }
        let results: Vec<Result<(usize, Row)>> = todo
            .par_iter()
            .map(|&i| {
                let (c, n) = screen::refine(plan, &simplex, i, &seeds[i])
                    .map_err(|e| anyhow::anyhow!("refining seed {i}: {e}"))?;
                let mut row = Row::new(&c, plan);
                row.evaluations = n;
                Ok((i, row))
            })
            .collect();
        for r in results {
            let (i, row) = r?;
            write_atomic(
                &work.join(format!("refine-{i:03}.json")),
                serde_json::to_string(&row)?.as_bytes(),
            )?;
        }
    }
    let mut refined = Vec::new();
    for i in 0..seeds.len() {
        let text = std::fs::read_to_string(work.join(format!("refine-{i:03}.json")))?;
        refined.push(serde_json::from_str::<Row>(&text)?);
    }
    let refs: Vec<&Row> = refined.iter().collect();
    let df = rows_frame(plan, &refs, false)?;
    match writer.as_mut() {
        Some(w) if df.height() > 0 => w.write_batch(&df)?,
        _ => {}
    }
    if let Some(w) = writer {
        w.finish()?;
        std::fs::rename(&tmp, o.out.join("candidates.parquet"))?;
    }
    for r in refined {
        pool.add(r);
    }
    write_outputs(plan, &o.out, pool)
}

/// What selection needs from a stream of candidates, in bounded memory: the
/// best rows by objective (feasible) and by penalised objective (seeds), and
/// the tally of broken limits.
struct Pools {
    keep: usize,
    by_objective: Vec<Row>,
    by_penalty: Vec<Row>,
    tally: screen::LimitSummary,
}

impl Pools {
    fn new(plan: &RunPlan) -> Self {
        // Greedy distinct selection looks far down the ranking when many good
        // points sit close together; 200 per pick is ample for min distances of
        // a few mol%.
        let keep = 200 * (plan.shortlist_size.max(plan.refine_from) + 1);
        Pools {
            keep,
            by_objective: Vec::new(),
            by_penalty: Vec::new(),
            tally: Default::default(),
        }
    }

    fn add(&mut self, mut r: Row) {
        self.tally.add(&r);
        r.warnings = String::new();
        if r.feasible {
            push_bounded(&mut self.by_objective, r.clone(), self.keep, |r| {
                r.objective.unwrap_or(f64::INFINITY)
            });
        }
        push_bounded(&mut self.by_penalty, r, self.keep, |r| {
            r.penalised.unwrap_or(f64::INFINITY)
        });
    }
}

/// Keep the `keep` best rows by key (ties by refined flag, then index).
fn push_bounded(v: &mut Vec<Row>, r: Row, keep: usize, key: impl Fn(&Row) -> f64) {
    v.push(r);
    if v.len() > 2 * keep {
        v.sort_by(|a, b| {
            key(a)
                .total_cmp(&key(b))
                .then(a.refined.cmp(&b.refined))
                .then(a.index.cmp(&b.index))
        });
        v.truncate(keep);
    }
}

fn oxide_columns(plan: &RunPlan) -> Vec<Oxide> {
    plan.oxides.iter().map(|o| o.0).collect()
}

fn rows_frame(plan: &RunPlan, rows: &[&Row], with_rank: bool) -> PolarsResult<DataFrame> {
    let mut cols: Vec<Column> = Vec::new();
    if with_rank {
        cols.push(Column::new(
            "rank".into(),
            (1..=rows.len() as u32).collect::<Vec<_>>(),
        ));
    } else {
        cols.push(Column::new(
            "index".into(),
            rows.iter().map(|r| r.index).collect::<Vec<_>>(),
        ));
        cols.push(Column::new(
            "refined".into(),
            rows.iter().map(|r| r.refined).collect::<Vec<_>>(),
        ));
        cols.push(Column::new(
            "feasible".into(),
            rows.iter().map(|r| r.feasible).collect::<Vec<_>>(),
        ));
        cols.push(Column::new(
            "broken_limits".into(),
            rows.iter().map(|r| r.broken.clone()).collect::<Vec<_>>(),
        ));
        cols.push(Column::new(
            "objective".into(),
            rows.iter().map(|r| r.objective).collect::<Vec<_>>(),
        ));
    }
    for o in oxide_columns(plan) {
        cols.push(Column::new(
            format!("{o}_mol_pct").into(),
            rows.iter()
                .map(|r| r.mol_pct[o.index()])
                .collect::<Vec<_>>(),
        ));
    }
    let f = |name: &str, get: &dyn Fn(&Row) -> Option<f64>| {
        Column::new(name.into(), rows.iter().map(|r| get(r)).collect::<Vec<_>>())
    };
    cols.push(f("critical_rate_k_per_s", &|r| r.critical_rate_k_per_s));
    cols.push(f("nose_rate_k_per_s", &|r| r.nose_rate_k_per_s));
    cols.push(f("margin_decades", &|r| r.margin_decades));
    cols.push(f("melting_temperature_k", &|r| r.melting_temperature_k));
    cols.push(f("liquidus_k", &|r| r.liquidus_k));
    cols.push(Column::new(
        "primary_phase".into(),
        rows.iter()
            .map(|r| r.primary_phase.clone())
            .collect::<Vec<_>>(),
    ));
    cols.push(f("glass_transition_k", &|r| r.glass_transition_k));
    cols.push(f("cost_per_kg", &|r| r.cost_per_kg));
    cols.push(Column::new(
        "warnings".into(),
        rows.iter().map(|r| r.warnings.clone()).collect::<Vec<_>>(),
    ));
    if !with_rank {
        cols.push(Column::new(
            "error".into(),
            rows.iter().map(|r| r.error.clone()).collect::<Vec<_>>(),
        ));
    }
    DataFrame::new_infer_height(cols)
}

fn write_outputs(plan: &RunPlan, out: &Path, pool: Pools) -> Result<Outcome> {
    let summary = pool.tally.clone();
    let picked = screen::distinct_rows(
        &pool.by_objective,
        plan.shortlist_size,
        plan.min_distance_mol_pct,
        |r| r.feasible,
        |r| r.objective.unwrap_or(f64::INFINITY),
    );
    // Re-evaluate the shortlisted recipes from their compositions (this also
    // restores the warnings the pools dropped to save memory).
    let fresh: Vec<Row> = picked
        .iter()
        .map(|r| {
            let pass = if r.refined {
                screen::Pass::Refinement
            } else {
                screen::Pass::SpaceFilling
            };
            let mut row = Row::new(
                &screen::evaluate_candidate(plan, r.index, pass, r.composition()),
                plan,
            );
            row.evaluations = r.evaluations;
            row
        })
        .collect();
    let short: Vec<&Row> = fresh.iter().collect();
    // Shortlist tables.
    let mut df = rows_frame(plan, &short, true)?;
    crate::table::write_frame(&out.join("shortlist.csv"), &mut df)?;
    crate::table::write_frame(&out.join("shortlist.parquet"), &mut df)?;
    let json: Vec<serde_json::Value> = short
        .iter()
        .enumerate()
        .map(|(i, r)| {
            let mut m = serde_json::Map::new();
            m.insert("rank".into(), (i + 1).into());
            for o in oxide_columns(plan) {
                m.insert(format!("{o}_mol_pct"), r.mol_pct[o.index()].into());
            }
            let v = serde_json::to_value(r).unwrap_or_default();
            for k in [
                "critical_rate_k_per_s",
                "nose_rate_k_per_s",
                "margin_decades",
                "melting_temperature_k",
                "liquidus_k",
                "primary_phase",
                "glass_transition_k",
                "cost_per_kg",
                "warnings",
            ] {
                m.insert(k.into(), v.get(k).cloned().unwrap_or_default());
            }
            serde_json::Value::Object(m)
        })
        .collect();
    write_atomic(
        &out.join("shortlist.json"),
        serde_json::to_string_pretty(&json)?.as_bytes(),
    )?;
    // Batch sheets of the shortlisted recipes, re-evaluated from scratch.
    let sheets = out.join("batch-sheets");
    std::fs::create_dir_all(&sheets)?;
    for (i, r) in short.iter().enumerate() {
        let comp = Composition::from_mol_percent_array(&r.composition(), 1e-6)?;
        let e = evaluate_composition(
            &plan.models,
            &comp,
            &plan.kinetic_options,
            Some(SlabQuench::default()),
            &Calibration::None,
        )?;
        let mut text = crate::report::evaluation_text(&e);
        if let Some((model, _, label)) = &plan.cost {
            let b = least_cost_batch(&model.raws, &comp, 1.0, &model.settings)?;
            text.push('\n');
            text.push_str(&crate::report::batch_text(
                &b,
                &comp,
                Some(Path::new(label)),
            ));
            let mut csv = String::from("raw_material,mass_kg_per_kg_glass,cost\n");
            for l in &b.lines {
                csv.push_str(&format!(
                    "\"{}\",{:.6},{:.4}\n",
                    l.name.replace('"', "\"\""),
                    l.mass_kg,
                    l.cost
                ));
            }
            write_atomic(
                &sheets.join(format!("rank-{:02}.csv", i + 1)),
                csv.as_bytes(),
            )?;
        }
        write_atomic(
            &sheets.join(format!("rank-{:02}.txt", i + 1)),
            text.as_bytes(),
        )?;
    }
    // The config as run, and the provenance of the models.
    let mut as_run = format!(
        "# config as run by quenchwise {} (hash {:016x}); seed {}; threads {}\n",
        env!("CARGO_PKG_VERSION"),
        plan.config_hash,
        plan.seed,
        plan.threads
            .map(|t| t.to_string())
            .unwrap_or_else(|| "all cores".into())
    );
    as_run.push_str(&plan.config_text);
    write_atomic(&out.join("config-as-run.toml"), as_run.as_bytes())?;
    let provenance = serde_json::json!({
        "program": format!("quenchwise {}", env!("CARGO_PKG_VERSION")),
        "model_set": plan.models.about,
        "viscosity_model": { "name": plan.models.viscosity.name, "source": plan.models.viscosity.source },
        "phases": plan.models.phases.iter().map(|p| serde_json::json!({
            "name": p.name, "formula": p.formula, "turnbull_alpha": p.turnbull_alpha,
            "calibrated_against": p.calibrated_against })).collect::<Vec<_>>(),
        "raw_materials": plan.cost.as_ref().map(|c| c.2.clone()),
        "kinetics_calibrated": plan.models.phases.iter().all(|p| p.calibrated_against.is_some()),
        "config_dir": plan.config_path.parent().map(|p| std::fs::canonicalize(if p.as_os_str().is_empty() { Path::new(".") } else { p }).unwrap_or_else(|_| p.to_path_buf())),
        "seed": plan.seed,
    });
    write_atomic(
        &out.join("provenance.json"),
        serde_json::to_string_pretty(&provenance)?.as_bytes(),
    )?;
    // Which limit rejected how much of the space.
    let mut lim = String::from("limit,candidates_breaking_it,candidates_breaking_only_it\n");
    for (l, any, only) in &summary.by_limit {
        lim.push_str(&format!("\"{}\",{any},{only}\n", l.label()));
    }
    write_atomic(&out.join("limits.csv"), lim.as_bytes())?;
    let text = summary_text(plan, &summary, short.len());
    write_atomic(&out.join("summary.txt"), text.as_bytes())?;
    std::fs::write(out.join(".work").join("finished"), b"")?;
    if short.is_empty() {
        bail!(crate::cli::UsageError(format!(
            "no recipe meets every limit\n{}",
            binding_text(&summary, true)
        )));
    }
    Ok(Outcome::Finished {
        shortlisted: short.len(),
        evaluated: summary.evaluated,
        evaluations: summary.evaluations,
        feasible: summary.feasible,
    })
}

fn binding_text(s: &screen::LimitSummary, with_hint: bool) -> String {
    let mut by: Vec<_> = s.by_limit.clone();
    by.sort_by_key(|e| std::cmp::Reverse(e.1));
    let mut t = String::from("limits that rejected candidates (breaking it / breaking only it):");
    for (l, any, only) in by {
        t.push_str(&format!("\n  {:<52} {any:>7} / {only:>7}", l.label()));
    }
    if with_hint {
        t.push_str(
            "\nhint: relax the limit that rejects most candidates alone, or widen the oxide ranges",
        );
    }
    t
}

/// The run summary printed at the end and written to summary.txt.
pub fn summary_text(plan: &RunPlan, s: &screen::LimitSummary, shortlisted: usize) -> String {
    format!(
        "screen {}: {} candidates kept ({} evaluations with refinement), {} meet every limit, {} shortlisted\n\
         equipment: {} at {:.3} K/s with safety factor {} → R_c must be ≤ {:.3} K/s\n\
         furnace: melting temperature ≤ {:.0} °C, liquidus ≤ {:.0} °C\n{}\n{}\n",
        plan.config_path.display(),
        s.evaluated,
        s.evaluations,
        s.feasible,
        shortlisted,
        plan.equipment_name,
        plan.equipment_rate.0,
        plan.safety_factor,
        plan.allowed_rate().0,
        plan.furnace_max.to_celsius().0,
        plan.liquidus_max.to_celsius().0,
        binding_text(s, false),
        crate::report::CAUTION
    )
}
