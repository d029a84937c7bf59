//! A screen's output folder: chunked checkpoints on disk (the store of
//! [`screen::run`]), the candidates table streamed as rows arrive, and the
//! files a scientist opens in the morning (shortlist, batch sheets, limit
//! summary, config as run, provenance, report).
//!
//! Safety of the folder (docs/science.md does not cover this; README, "Output
//! folders"):
//! - every file quenchwise writes is listed in `OUT/.quenchwise-files` before
//!   it is written; `--force` removes those and nothing else, and refuses a
//!   non-empty folder without that list;
//! - one process at a time: an exclusive OS lock on `OUT/.quenchwise-lock`,
//!   released on any exit, even a kill;
//! - checkpoints: every chunk of the first pass and every refined seed is
//!   written to `OUT/.work/` as soon as it is done (temp file + rename), under
//!   a header holding the format version and the run's hash (the parsed
//!   config and the content of every file it reads). Each carries the
//!   SHA-256 of its contents ([`super::checkpoint`]). `--resume` skips what
//!   is kept, computes a damaged chunk or seed again (cut short, emptied, or
//!   not matching its digest; a shard checks its chunks' digests when it
//!   resumes, as `merge` refuses a damaged one), and refuses a run that
//!   means something else;
//! - a stop request is honoured between any two chunks, refinement rounds or
//!   output files; everything kept resumes.
//!
//! A screen may also be split into shards (`--shard K/N`, one per cluster
//! task), each keeping its share of the first pass, and merged
//! ([`merge`]) into exactly the result one process gives.
use super::checkpoint;
use super::results::{
    common_warnings, csv_frame, rows_frame, rows_frame_with, shortlist_json, write_batch_sheets,
    write_report, DRAWN_TABLE, SHORTLIST_FULL,
};
use super::screen_config::{self, RunPlan};
use super::table::write_frame;
use crate::error::Error;
use crate::report::text::{
    binding_text, probability_stage_text, screen_summary_text, snapping_text,
};
use crate::screen::probability::ProbabilityOutcome;
use crate::screen::snap::SnapOutcome;
use crate::screen::{
    self, chunk_count, Row, ScreenEnd, ScreenObserver, ScreenStore, Stage, Unobserved,
};
use polars::prelude::*;
use std::collections::BTreeSet;
use std::fs::File;
use std::io::Write;
use std::path::{Component, Path, PathBuf};
use std::sync::atomic::{AtomicBool, Ordering};
use std::sync::{Arc, Mutex};

/// Checkpoint format version (3: first-pass points mapped into the
/// composition polytope, rows carry their binding limits, headers the run
/// hash and shard; 4: chunks as Parquet files; 5: chunks and refined
/// seeds carry their SHA-256).
const FORMAT: u32 = 5;

/// The list of files quenchwise wrote in an output folder.
pub const MANIFEST: &str = ".quenchwise-files";
/// The file whose OS lock marks a folder in use.
pub const LOCK: &str = ".quenchwise-lock";
const MANIFEST_HEAD: &str =
    "# Files quenchwise wrote in this folder, one per line (a folder ends in /).\n# `quenchwise screen --force` removes these and nothing else.\n";

/// How an output folder is opened.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Opening {
    /// A new run: the folder must not exist or be empty.
    New,
    /// A new run replacing an earlier one: only quenchwise's files are removed.
    Force,
    /// Continue the run kept there.
    Resume,
    /// Add to a finished run (the report), or read a shard.
    Existing,
}

/// An output folder held by this process: locked, with its list of files.
pub struct RunFolder {
    root: PathBuf,
    _lock: File,
    manifest: Mutex<(File, BTreeSet<String>)>,
}

impl std::fmt::Debug for RunFolder {
    fn fmt(&self, f: &mut std::fmt::Formatter<'_>) -> std::fmt::Result {
        f.debug_struct("RunFolder")
            .field("root", &self.root)
            .finish()
    }
}

/// Whether `dir` holds anything besides our lock and list.
fn holds_files(dir: &Path) -> bool {
    std::fs::read_dir(dir)
        .map(|d| {
            d.flatten().any(|e| {
                let n = e.file_name();
                n != LOCK && n != MANIFEST
            })
        })
        .unwrap_or(false)
}

/// The listed paths, each checked to stay inside the folder.
fn read_manifest(root: &Path) -> Result<Vec<String>, Error> {
    let path = root.join(MANIFEST);
    let text = match std::fs::read_to_string(&path) {
        Ok(t) => t,
        Err(e) if e.kind() == std::io::ErrorKind::NotFound => return Ok(Vec::new()),
        Err(e) => return Err(Error::io("reading", &path, e)),
    };
    let mut out = Vec::new();
    for (i, line) in text.lines().enumerate() {
        let l = line.trim();
        if l.is_empty() || l.starts_with('#') {
            continue;
        }
        let inside = Path::new(l.trim_end_matches('/'))
            .components()
            .all(|c| matches!(c, Component::Normal(_)));
        if !inside {
            return Err(Error::bad_input(format!(
                "{}:{}: `{l}` is not a path inside the folder; nothing was removed",
                path.display(),
                i + 1
            ))
            .with_hint(
                "this list is written by quenchwise; remove the line or the folder yourself",
            ));
        }
        out.push(l.to_string());
    }
    Ok(out)
}

/// Remove the listed files (and their temp files), then the listed folders
/// that are left empty. Nothing else is touched.
fn remove_listed(root: &Path, listed: &[String]) -> Result<(), Error> {
    let mut dirs = Vec::new();
    for rel in listed {
        if let Some(d) = rel.strip_suffix('/') {
            dirs.push(root.join(d));
            continue;
        }
        let p = root.join(rel);
        // Only files: a listed name that is now a folder is not ours.
        if p.is_dir() {
            continue;
        }
        remove_if_there(&p)?;
        for tmp in temp_names(&p) {
            remove_if_there(&tmp)?;
        }
    }
    // Deepest first; a folder that still holds something is kept.
    dirs.sort_by_key(|d| std::cmp::Reverse(d.components().count()));
    for d in dirs {
        let _ = std::fs::remove_dir(d);
    }
    Ok(())
}

/// Remove the file `p`; one that is not there is already removed.
fn remove_if_there(p: &Path) -> Result<(), Error> {
    match std::fs::remove_file(p) {
        Ok(()) => Ok(()),
        Err(e) if e.kind() == std::io::ErrorKind::NotFound => Ok(()),
        Err(e) => Err(Error::io("removing", p, e)),
    }
}

/// The temp files quenchwise writes beside `p` before renaming them to `p`.
fn temp_names(p: &Path) -> [PathBuf; 2] {
    let ext = p.extension().and_then(|e| e.to_str()).unwrap_or("out");
    [
        p.with_extension("partial"),
        p.with_extension(format!("{ext}.partial")),
    ]
}

/// Take the folder's lock. A lock that our own process seems to hold (the
/// file names our pid) is what a child process briefly inherits while another
/// thread spawns it (between fork and exec the child shares the lock's open
/// file description): wait for that to pass, up to 2 s, before calling the
/// folder busy.
fn try_lock_own(lock: &std::fs::File, path: &Path) -> Result<(), std::fs::TryLockError> {
    let own = std::process::id().to_string();
    let mut waited = 0;
    loop {
        match lock.try_lock() {
            Err(std::fs::TryLockError::WouldBlock)
                if waited < 40 && std::fs::read_to_string(path).is_ok_and(|p| p.trim() == own) =>
            {
                waited += 1;
                std::thread::sleep(std::time::Duration::from_millis(50));
            }
            other => return other,
        }
    }
}

impl RunFolder {
    /// Open (and lock) `root` for a run.
    ///
    /// # Errors
    /// The folder is in use by another process, exists and is not empty for
    /// a new run, was not written by quenchwise for `--force`, holds no run
    /// to resume, or cannot be created.
    pub fn open(root: &Path, how: Opening) -> Result<RunFolder, Error> {
        let listed = root.join(MANIFEST).exists();
        match how {
            Opening::New if holds_files(root) => return Err(not_empty(root, listed)),
            Opening::Force if holds_files(root) && !listed => {
                return Err(Error::bad_input(format!(
                    "--force refused: {} holds files quenchwise did not write (it has no {MANIFEST} list)",
                    root.display()
                ))
                .with_hint(
                    "--force only clears folders quenchwise made; choose a new folder with --out",
                ))
            }
            Opening::Resume if !root.join(".work/header.json").exists() => {
                return Err(Error::bad_input(format!(
                    "{} holds no checkpoint to resume",
                    root.display()
                ))
                .with_hint("start the run without --resume"))
            }
            Opening::Existing if !root.is_dir() => {
                return Err(Error::bad_input(format!("{} is not a folder", root.display())))
            }
            _ => {}
        }
        std::fs::create_dir_all(root).map_err(|e| Error::io("creating", root, e))?;
        let lock_path = root.join(LOCK);
        let mut lock = std::fs::OpenOptions::new()
            .read(true)
            .write(true)
            .create(true)
            .truncate(false)
            .open(&lock_path)
            .map_err(|e| Error::io("opening", &lock_path, e))?;
        match try_lock_own(&lock, &lock_path) {
            Ok(()) => {}
            Err(std::fs::TryLockError::WouldBlock) => {
                let pid = std::fs::read_to_string(&lock_path).unwrap_or_default();
                let who = match pid.trim() {
                    "" => "another quenchwise process".to_string(),
                    p => format!("another quenchwise process (pid {p})"),
                };
                return Err(Error::bad_input(format!(
                    "{} is in use by {who}; nothing was changed",
                    root.display()
                ))
                .with_hint("wait for that run to end, or stop it (Ctrl-C) and then --resume"));
            }
            Err(std::fs::TryLockError::Error(e)) => {
                return Err(Error::io("locking", &lock_path, e))
            }
        }
        let _ = lock.set_len(0);
        let _ = write!(lock, "{}", std::process::id());
        // Under the lock, look again: another run may have written here
        // between our first look and the lock.
        if how == Opening::New && holds_files(root) {
            return Err(not_empty(root, listed));
        }
        if how == Opening::Force {
            remove_listed(root, &read_manifest(root)?)?;
            let _ = std::fs::remove_file(root.join(MANIFEST));
        }
        // Chunk checkpoints are listed once and not held ([`RunFolder::own_once`]).
        let owned: BTreeSet<String> = read_manifest(root)?
            .into_iter()
            .filter(|l| !l.starts_with(".work/chunk-"))
            .collect();
        let mpath = root.join(MANIFEST);
        let fresh = !mpath.exists();
        let mut manifest = std::fs::OpenOptions::new()
            .create(true)
            .append(true)
            .open(&mpath)
            .map_err(|e| Error::io("opening", &mpath, e))?;
        if fresh {
            manifest
                .write_all(MANIFEST_HEAD.as_bytes())
                .map_err(|e| Error::io("writing", &mpath, e))?;
        }
        Ok(RunFolder {
            root: root.to_path_buf(),
            _lock: lock,
            manifest: Mutex::new((manifest, owned)),
        })
    }

    /// The folder.
    pub fn root(&self) -> &Path {
        &self.root
    }

    /// Record `rel` (a file, or a folder when it ends in `/`) as written by
    /// quenchwise, before it is written, and return its full path.
    ///
    /// # Errors
    /// The list cannot be appended to.
    pub fn own(&self, rel: &str) -> Result<PathBuf, Error> {
        self.list(rel, true)
    }

    /// As [`RunFolder::own`], for a file a run writes once (a chunk's
    /// checkpoint): its line is appended but not kept in memory, where a
    /// 10⁸-candidate run would hold some 4·10⁵ names. A file written again
    /// (a damaged chunk computed anew) is listed twice, which is harmless.
    ///
    /// # Errors
    /// The list cannot be appended to.
    pub fn own_once(&self, rel: &str) -> Result<PathBuf, Error> {
        self.list(rel, false)
    }

    fn list(&self, rel: &str, remember: bool) -> Result<PathBuf, Error> {
        let mut m = self
            .manifest
            .lock()
            .map_err(|_| Error::internal("the list of written files was poisoned"))?;
        if !m.1.contains(rel) {
            let mpath = self.root.join(MANIFEST);
            m.0.write_all(format!("{rel}\n").as_bytes())
                .map_err(|e| Error::io("writing", &mpath, e))?;
            if remember {
                m.1.insert(rel.to_string());
            }
        }
        Ok(self.root.join(rel.trim_end_matches('/')))
    }

    /// Whether `rel` is on the list (for a chunk's checkpoint: whether it
    /// was listed by [`RunFolder::own`], not by [`RunFolder::own_once`]).
    pub fn lists(&self, rel: &str) -> bool {
        self.manifest.lock().is_ok_and(|m| m.1.contains(rel))
    }

    /// Write `bytes` to `rel` atomically (temp file + rename), listed first.
    ///
    /// # Errors
    /// The write fails.
    pub fn write(&self, rel: &str, bytes: &[u8]) -> Result<PathBuf, Error> {
        let path = self.own(rel)?;
        write_atomic(&path, bytes)?;
        Ok(path)
    }

    /// Create the sub-folder `rel` (listed) and return its path.
    ///
    /// # Errors
    /// It cannot be created.
    pub fn sub_folder(&self, rel: &str) -> Result<PathBuf, Error> {
        let path = self.own(&format!("{}/", rel.trim_end_matches('/')))?;
        std::fs::create_dir_all(&path).map_err(|e| Error::io("creating", &path, e))?;
        Ok(path)
    }
}

/// Write a file atomically: a temp file beside it, then a rename.
///
/// # Errors
/// The write or the rename fails.
pub(crate) fn write_atomic(path: &Path, bytes: &[u8]) -> Result<(), Error> {
    let tmp = path.with_extension("partial");
    std::fs::write(&tmp, bytes).map_err(|e| Error::io("writing", &tmp, e))?;
    std::fs::rename(&tmp, path).map_err(|e| Error::io("renaming", &tmp, e))
}

fn not_empty(root: &Path, listed: bool) -> Error {
    let hint = if listed {
        "--resume continues an interrupted run there; --force starts again, removing only the files quenchwise wrote there"
    } else {
        "it holds files quenchwise did not write: choose a new folder with --out"
    };
    Error::bad_input(format!(
        "output folder {} exists and is not empty",
        root.display()
    ))
    .with_hint(hint)
}

/// How a run is started.
#[derive(Debug, Clone)]
pub struct ScreenOptions {
    pub out: PathBuf,
    pub resume: bool,
    pub force: bool,
    /// Write `report.html` at the end (needs the plotting of every candidate).
    pub report: bool,
    /// Keep the checkpoints of a finished run (they are removed by default).
    pub keep_checkpoints: bool,
    /// Evaluate only shard `K` of `N` of the first pass (0-based).
    pub shard: Option<Shard>,
    /// Stop (as if interrupted) after this many new chunks: for tests.
    pub stop_after_chunks: Option<usize>,
    /// Raised (e.g. by Ctrl-C) to stop at the next safe point.
    pub stop: Option<Arc<AtomicBool>>,
    /// How the candidates table is cut into row groups and part files (the
    /// default for every run; tests cut small ones to see several parts).
    pub candidate_layout: CandidateLayout,
}

/// Rows per row group and row groups per part file of the candidates
/// table ([`CANDIDATES_DIR`]).
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub struct CandidateLayout {
    pub group_rows: usize,
    pub part_groups: usize,
}

impl Default for CandidateLayout {
    fn default() -> Self {
        CandidateLayout {
            group_rows: CANDIDATE_GROUP_ROWS,
            part_groups: CANDIDATE_PART_GROUPS,
        }
    }
}

impl ScreenOptions {
    /// A fresh run into `out` (no resume, no overwrite, no report, no stop
    /// flag, checkpoints removed at the end).
    pub fn new(out: impl Into<PathBuf>) -> Self {
        ScreenOptions {
            out: out.into(),
            resume: false,
            force: false,
            report: false,
            keep_checkpoints: false,
            shard: None,
            stop_after_chunks: None,
            stop: None,
            candidate_layout: CandidateLayout::default(),
        }
    }

    fn opening(&self) -> Opening {
        if self.resume {
            Opening::Resume
        } else if self.force {
            Opening::Force
        } else {
            Opening::New
        }
    }
}

/// Shard `index` of `count` of a split first pass (0-based).
#[derive(Debug, Clone, Copy, PartialEq, Eq, serde::Serialize, serde::Deserialize)]
pub struct Shard {
    pub index: usize,
    pub count: usize,
}

impl Shard {
    /// Read `K/N` (0 ≤ K < N).
    ///
    /// # Errors
    /// Not two integers, or K ≥ N, or N = 0.
    pub fn parse(text: &str) -> Result<Shard, Error> {
        let bad = || {
            Error::bad_input(format!("--shard {text}: expected K/N with 0 ≤ K < N, e.g. 0/4"))
                .with_hint("under Slurm: --shard $SLURM_ARRAY_TASK_ID/$SLURM_ARRAY_TASK_COUNT (array indices 0..N-1)")
        };
        let (k, n) = text.split_once('/').ok_or_else(bad)?;
        let index: usize = k.trim().parse().map_err(|_| bad())?;
        let count: usize = n.trim().parse().map_err(|_| bad())?;
        if count == 0 || index >= count {
            return Err(bad());
        }
        Ok(Shard { index, count })
    }

    /// The chunks of this shard: a contiguous share of `chunks`.
    pub fn chunks(self, chunks: usize) -> std::ops::Range<usize> {
        (self.index * chunks / self.count)..((self.index + 1) * chunks / self.count)
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
        /// Repairs made on the way (damaged checkpoints computed again).
        notices: Vec<String>,
    },
    /// Stopped during `stage`; the work so far is saved and `--resume`
    /// continues it.
    Interrupted {
        stage: Stage,
        done: usize,
        total: usize,
    },
    /// Every output was written, but no recipe meets every limit; the text
    /// names the limits that bound.
    NothingFeasible { limits: String },
    /// `--resume` of a run that had already finished: nothing to do.
    AlreadyFinished,
    /// A shard's chunks are all kept; `merge` combines the shards.
    ShardDone {
        shard: Shard,
        chunks: std::ops::Range<usize>,
    },
}

#[derive(serde::Serialize, serde::Deserialize, PartialEq, Debug)]
struct Header {
    format: u32,
    /// Hash of what the run means (see [`run_hash`]).
    run_hash: u64,
    program: String,
    seed: u64,
    chunks: usize,
    #[serde(default)]
    shard: Option<Shard>,
    /// The config as given on the command line, and the folder its paths are
    /// relative to (what `merge` needs to load it again).
    config_path: PathBuf,
    config_dir: PathBuf,
}

/// A hash of what a run means: the parsed config (comments and layout do
/// not count) with the content of every file it reads (model set, viscosity
/// model, raw materials), as the program reads them, and the program version.
/// Where the prices come from is shown in outputs but does not count.
pub fn run_hash(plan: &RunPlan) -> u64 {
    let mut problem = plan.problem.clone();
    if let Some(c) = problem.cost.as_mut() {
        c.label.clear();
    }
    let text = format!(
        "quenchwise {}\n{problem:?}\n{:?}",
        env!("CARGO_PKG_VERSION"),
        plan.search
    );
    screen_config::fnv1a(text.as_bytes())
}

fn header_of(plan: &RunPlan, shard: Option<Shard>) -> Header {
    Header {
        format: FORMAT,
        run_hash: run_hash(plan),
        program: env!("CARGO_PKG_VERSION").into(),
        seed: plan.search.seed,
        chunks: chunk_count(&plan.search),
        shard,
        config_path: plan.config_path.clone(),
        config_dir: plan.base_dir.clone(),
    }
}

fn read_header(root: &Path) -> Result<Header, Error> {
    let path = root.join(".work/header.json");
    let text = std::fs::read_to_string(&path).map_err(|e| Error::io("reading", &path, e))?;
    let h: Header = serde_json::from_str(&text).map_err(|_| {
        Error::bad_input(format!(
            "{}: not a checkpoint header this version can read",
            path.display()
        ))
        .with_hint("start again with --force (the old checkpoints are removed)")
    })?;
    if h.format != FORMAT {
        return Err(Error::bad_input(format!(
            "{}: checkpoint format {} cannot be resumed by this version (format {FORMAT})",
            root.display(),
            h.format
        ))
        .with_hint("start again with --force"));
    }
    Ok(h)
}

/// Open the folder, check or write the header; the `.work` path.
fn prepare(folder: &RunFolder, header: &Header, resume: bool) -> Result<PathBuf, Error> {
    let root = folder.root();
    let work = folder.sub_folder(".work")?;
    if resume {
        let old = read_header(root)?;
        if old.run_hash != header.run_hash || old.shard != header.shard {
            let what = if old.shard != header.shard {
                format!(
                    "it holds {} and this run is {}",
                    shard_words(old.shard),
                    shard_words(header.shard)
                )
            } else {
                "the config, or a file it reads (model set, raw materials), changed since the checkpoint was written".into()
            };
            return Err(Error::bad_input(format!(
                "{}: refusing to resume: {what}",
                root.display()
            ))
            .with_hint("resume with the same config and files, or start again with --force"));
        }
        return Ok(work);
    }
    let json = serde_json::to_string_pretty(header)
        .map_err(|e| Error::internal(format!("writing the checkpoint header: {e}")))?;
    folder.write(".work/header.json", json.as_bytes())?;
    Ok(work)
}

fn shard_words(s: Option<Shard>) -> String {
    match s {
        Some(s) => format!("shard {}/{}", s.index, s.count),
        None => "a whole (unsplit) run".into(),
    }
}

/// Checkpoints in `.work` folders (a chunk's rows as a small Parquet file,
/// [`super::checkpoint`]; a refined seed as JSON): written to this run's
/// folder, read from it or (for a merge) from the shard that kept them.
struct FolderStore<'a> {
    folder: &'a RunFolder,
    /// Where each chunk is read from, when not from this folder (merge).
    chunk_dirs: Option<Vec<PathBuf>>,
    notices: Vec<String>,
}

impl FolderStore<'_> {
    fn chunk_rel(k: usize) -> String {
        format!(".work/chunk-{k:06}.parquet")
    }
    fn chunk_path(&self, k: usize) -> PathBuf {
        match &self.chunk_dirs {
            Some(dirs) => dirs[k].join(Self::chunk_rel(k)),
            None => self.folder.root().join(Self::chunk_rel(k)),
        }
    }
    fn refine_rel(i: usize) -> String {
        format!(".work/refine-{i:03}.json")
    }
    /// Read a kept file; a damaged one (cut short by a kill, emptied, not
    /// matching its SHA-256) is noted and treated as not kept, so it is
    /// computed again (in a merge, it is an error naming the shard's file).
    fn read<T>(
        &mut self,
        path: &Path,
        what: &str,
        decode: impl FnOnce(Vec<u8>) -> Result<T, String>,
    ) -> Result<Option<T>, Error> {
        let bytes = match std::fs::read(path) {
            Ok(b) => b,
            Err(e) if e.kind() == std::io::ErrorKind::NotFound => return Ok(None),
            Err(e) => return Err(Error::io("reading", path, e)),
        };
        match decode(bytes) {
            Ok(v) => Ok(Some(v)),
            Err(e) if self.chunk_dirs.is_none() || what != "chunk" => {
                self.notices.push(damaged_notice(path, what, &e));
                Ok(None)
            }
            Err(e) => Err(
                Error::bad_input(format!("{} is damaged ({e})", path.display())).with_hint(
                    "rerun that shard with --resume: it computes the damaged chunk again",
                ),
            ),
        }
    }
}

/// What a run says of a kept checkpoint it found damaged and computes again.
fn damaged_notice(path: &Path, what: &str, why: &str) -> String {
    format!(
        "{} was damaged ({why}); computing that {what} again",
        path.display()
    )
}

impl ScreenStore for FolderStore<'_> {
    fn has_chunk(&self, k: usize) -> bool {
        self.chunk_path(k).exists()
    }
    fn load_chunk(&mut self, k: usize) -> Result<Option<Vec<Row>>, Error> {
        let path = self.chunk_path(k);
        self.read(&path, "chunk", checkpoint::decode)
    }
    fn save_chunk(&mut self, k: usize, rows: &[Row]) -> Result<(), Error> {
        let rel = Self::chunk_rel(k);
        let bytes = checkpoint::encode(rows)
            .map_err(|e| Error::internal(format!("encoding {rel}: {e}")))?;
        write_atomic(&self.folder.own_once(&rel)?, &bytes)
    }
    fn load_refined(&mut self, i: usize) -> Result<Option<Row>, Error> {
        let path = self.folder.root().join(Self::refine_rel(i));
        self.read(&path, "refined seed", |b| checkpoint::decode_seed(&b))
    }
    fn save_refined(&mut self, i: usize, row: &Row) -> Result<(), Error> {
        let rel = Self::refine_rel(i);
        let bytes = checkpoint::encode_seed(row)
            .map_err(|e| Error::internal(format!("encoding {rel}: {e}")))?;
        self.folder.write(&rel, &bytes).map(|_| ())
    }
    fn take_notices(&mut self) -> Vec<String> {
        std::mem::take(&mut self.notices)
    }
}

/// Streams every row into the candidates table ([`CANDIDATES_DIR`]) and
/// passes progress and stop requests between the run and whoever watches it.
struct FolderObserver<'a> {
    plan: &'a RunPlan,
    folder: &'a RunFolder,
    /// The part being written, and its number and rows so far.
    writer: Option<polars::io::parquet::write::BatchedWriter<std::fs::File>>,
    part: usize,
    part_rows: usize,
    /// Rows not yet written: they go out as one row group of at least
    /// `layout.group_rows` (or the last, smaller one).
    pending: Option<DataFrame>,
    layout: CandidateLayout,
    watcher: &'a mut dyn ScreenObserver,
    stop: Option<Arc<AtomicBool>>,
    stop_after_chunks: Option<usize>,
    new_chunks: usize,
    notices: Vec<String>,
}

/// The candidates table of a finished run: a folder of Parquet files
/// `part-000000.parquet`, `part-000001.parquet`, … whose names sort in row
/// order, each of [`CANDIDATE_PART_GROUPS`] row groups of about
/// [`CANDIDATE_GROUP_ROWS`] rows (the last one fewer). It is read whole as
/// one dataset (Polars `scan_parquet` of `candidates/*.parquet`, pandas
/// `read_parquet` of the folder).
pub const CANDIDATES_DIR: &str = "candidates";

/// Where the parts are written until the table is whole; renamed to
/// [`CANDIDATES_DIR`] when it is.
const CANDIDATES_TMP_DIR: &str = "candidates.partial";

/// Rows per row group of the candidates table. The Parquet writer keeps
/// metadata of every row group until its file is finished: a row group per
/// 512-row chunk made a 10⁶-candidate run hold about 160 MB more than one
/// with groups this size (memory, measured 2026-12-02).
const CANDIDATE_GROUP_ROWS: usize = 65_536;

/// Row groups per part of the candidates table (10⁶ rows). Polars' writer
/// keeps some 90 kB per row group of our columns until its file is
/// finished (for the footer and the offset index), so one file for the
/// whole table grew with the run: 10⁷ candidates peaked 15–22 MB above
/// 10⁶, and 10⁸ would have held some 140 MB more. A part holds at most
/// about 1.5 MB of it, whatever the size of the run (measured 2026-12-03,
/// DEVELOPERS.md).
const CANDIDATE_PART_GROUPS: usize = 16;

pub(crate) fn part_name(n: usize) -> String {
    format!("part-{n:06}.parquet")
}

/// Whether a file name is that of a part of the candidates table.
fn is_part_name(name: &str) -> bool {
    name.starts_with("part-") && name.ends_with(".parquet")
}

/// The parts of a candidates table in `dir`, in row order (their names
/// sort as their rows do); other files there are not listed.
///
/// # Errors
/// `dir` cannot be listed.
pub(crate) fn part_files(dir: &Path) -> std::io::Result<Vec<PathBuf>> {
    let mut files: Vec<PathBuf> = std::fs::read_dir(dir)?
        .flatten()
        .map(|e| e.path())
        .filter(|p| {
            p.file_name()
                .and_then(|n| n.to_str())
                .is_some_and(is_part_name)
        })
        .collect();
    files.sort();
    Ok(files)
}

impl FolderObserver<'_> {
    fn stop_now(&mut self) -> bool {
        self.watcher.stop_requested()
            || self.stop.as_ref().is_some_and(|s| s.load(Ordering::SeqCst))
            || self.stop_after_chunks.is_some_and(|n| self.new_chunks >= n)
    }
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
        match self.pending.as_mut() {
            Some(p) => {
                p.vstack_mut(&df)
                    .map_err(|e| Error::internal(format!("building the candidates table: {e}")))?;
            }
            None => self.pending = Some(df),
        }
        if self
            .pending
            .as_ref()
            .is_some_and(|p| p.height() >= self.layout.group_rows)
        {
            self.write_pending()?;
        }
        self.watcher.rows(rows)
    }
    fn stop_requested(&mut self) -> bool {
        self.stop_now()
    }
    fn notice(&mut self, text: &str) {
        self.notices.push(text.to_string());
        self.watcher.notice(text);
    }
}

impl FolderObserver<'_> {
    /// Write the pending rows as one row group.
    fn write_pending(&mut self) -> Result<(), Error> {
        let Some(mut df) = self.pending.take() else {
            return Ok(());
        };
        df.rechunk_mut_par();
        if self.writer.is_none() {
            let dir = self.folder.sub_folder(CANDIDATES_TMP_DIR)?;
            if self.part == 0 {
                // Parts an interrupted attempt left: this one writes the
                // table from its first row.
                remove_parts(&dir)?;
            }
            let tmp = self
                .folder
                .own(&format!("{CANDIDATES_TMP_DIR}/{}", part_name(self.part)))?;
            let f = std::fs::File::create(&tmp).map_err(|e| Error::io("creating", &tmp, e))?;
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
        self.part_rows += df.height();
        if self.part_rows >= self.layout.group_rows * self.layout.part_groups {
            self.close_part()?;
        }
        Ok(())
    }

    /// Finish the part being written; the next rows start a new one.
    fn close_part(&mut self) -> Result<(), Error> {
        if let Some(w) = self.writer.take() {
            w.finish()
                .map_err(|e| Error::internal(format!("writing the candidates table: {e}")))?;
            self.part += 1;
            self.part_rows = 0;
        }
        Ok(())
    }

    /// Write what is pending, finish the last part, and put the whole table
    /// in its place ([`CANDIDATES_DIR`]), replacing one an interrupted
    /// earlier attempt of this run left there.
    fn finish_table(&mut self) -> Result<(), Error> {
        self.write_pending()?;
        self.close_part()?;
        if self.part == 0 {
            return Ok(());
        }
        let folder = self.folder;
        let to = folder.own(&format!("{CANDIDATES_DIR}/"))?;
        for n in 0..self.part {
            folder.own(&format!("{CANDIDATES_DIR}/{}", part_name(n)))?;
        }
        let tmp = folder.root().join(CANDIDATES_TMP_DIR);
        match std::fs::symlink_metadata(&to) {
            Err(e) if e.kind() == std::io::ErrorKind::NotFound => {
                std::fs::rename(&tmp, &to).map_err(|e| Error::io("renaming", &tmp, e))?;
            }
            Err(e) => return Err(Error::io("reading", &to, e)),
            // The table of an earlier attempt of this run (killed after
            // writing it): its parts give way to these; files of the user's
            // own put beside them stay.
            Ok(m) if m.is_dir() => {
                remove_parts(&to)?;
                for n in 0..self.part {
                    let from = tmp.join(part_name(n));
                    let dest = to.join(part_name(n));
                    std::fs::rename(&from, &dest).map_err(|e| Error::io("renaming", &from, e))?;
                }
                std::fs::remove_dir(&tmp).map_err(|e| Error::io("removing", &tmp, e))?;
            }
            Ok(_) => {
                return Err(Error::bad_input(format!(
                    "{} is not a folder; the candidates table goes there",
                    to.display()
                ))
                .with_hint("move or rename it, then run again with --resume"))
            }
        }
        // The single-file table of a build before the parts, when this run
        // was begun by one.
        for old in ["candidates.parquet", "candidates.parquet.partial"] {
            if folder.lists(old) {
                remove_if_there(&folder.root().join(old))?;
            }
        }
        Ok(())
    }
}

/// Remove the parts of a candidates table (and nothing else) from `dir`.
fn remove_parts(dir: &Path) -> Result<(), Error> {
    let Ok(parts) = part_files(dir) else {
        return Ok(());
    };
    for p in parts {
        std::fs::remove_file(&p).map_err(|err| Error::io("removing", &p, err))?;
    }
    Ok(())
}

/// Run (or resume) a screen into `o.out`, silently.
///
/// # Errors
/// An output folder that exists without --force/--resume, a resume under a
/// different config, failures to write.
pub fn run(plan: &RunPlan, o: &ScreenOptions) -> Result<Outcome, Error> {
    run_observed(plan, o, &mut Unobserved)
}

fn worker_pool(plan: &RunPlan) -> Result<rayon::ThreadPool, Error> {
    let threads = plan.threads.filter(|&t| t > 0).unwrap_or_else(|| {
        std::thread::available_parallelism()
            .map(|n| n.get())
            .unwrap_or(1)
    });
    rayon::ThreadPoolBuilder::new()
        .num_threads(threads)
        .build()
        .map_err(|e| Error::internal(format!("starting worker threads: {e}")))
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
    let folder = RunFolder::open(&o.out, o.opening())?;
    let header = header_of(plan, o.shard);
    prepare(&folder, &header, o.resume)?;
    if o.resume && folder.root().join(".work/finished").exists() {
        if !o.keep_checkpoints {
            remove_checkpoints(&folder)?;
        }
        return Ok(Outcome::AlreadyFinished);
    }
    let pool = worker_pool(plan)?;
    let mut store = FolderStore {
        folder: &folder,
        chunk_dirs: None,
        notices: Vec::new(),
    };
    if let Some(shard) = o.shard {
        // The config itself, for `merge` to load again.
        folder.write(".work/config.toml", plan.config_text.as_bytes())?;
        let range = shard.chunks(header.chunks);
        if o.resume {
            // A kept chunk damaged on disk is computed again here: the
            // shard's run skips every chunk whose file is there, and
            // `merge` refuses a damaged one.
            for k in range.clone() {
                let path = store.chunk_path(k);
                if let Ok(bytes) = std::fs::read(&path) {
                    if !checkpoint::intact(&bytes) {
                        std::fs::remove_file(&path).map_err(|e| Error::io("removing", &path, e))?;
                        watcher.notice(&damaged_notice(
                            &path,
                            "chunk",
                            "its SHA-256 does not match its contents",
                        ));
                    }
                }
            }
        }
        let mut observer = observer(plan, &folder, o, watcher);
        let end = pool.install(|| {
            screen::run_chunks(
                &plan.problem,
                &plan.search,
                range,
                &mut store,
                &mut observer,
            )
        })?;
        return Ok(match end {
            ScreenEnd::ChunksKept { chunks } => Outcome::ShardDone { shard, chunks },
            ScreenEnd::Interrupted { stage, done, total } => {
                Outcome::Interrupted { stage, done, total }
            }
            ScreenEnd::Finished { .. } => {
                return Err(Error::internal("a shard ran the whole screen"))
            }
        });
    }
    finish(plan, &folder, &mut store, o, watcher, &pool)
}

fn observer<'a>(
    plan: &'a RunPlan,
    folder: &'a RunFolder,
    o: &ScreenOptions,
    watcher: &'a mut dyn ScreenObserver,
) -> FolderObserver<'a> {
    FolderObserver {
        plan,
        folder,
        writer: None,
        part: 0,
        part_rows: 0,
        pending: None,
        layout: o.candidate_layout,
        watcher,
        stop: o.stop.clone(),
        stop_after_chunks: o.stop_after_chunks,
        new_chunks: 0,
        notices: Vec::new(),
    }
}

/// The whole run from its store: first pass, refinement, outputs.
fn finish(
    plan: &RunPlan,
    folder: &RunFolder,
    store: &mut FolderStore,
    o: &ScreenOptions,
    watcher: &mut dyn ScreenObserver,
    pool: &rayon::ThreadPool,
) -> Result<Outcome, Error> {
    let mut observer = observer(plan, folder, o, watcher);
    let end = pool.install(|| screen::run(&plan.problem, &plan.search, store, &mut observer))?;
    let (shortlist, summary, probability, snapping) = match end {
        ScreenEnd::Interrupted { stage, done, total } => {
            return Ok(Outcome::Interrupted { stage, done, total })
        }
        ScreenEnd::ChunksKept { .. } => {
            return Err(Error::internal("a whole run stopped after its chunks"))
        }
        ScreenEnd::Finished {
            shortlist,
            summary,
            probability,
            snapping,
        } => (shortlist, summary, probability, snapping),
    };
    observer.finish_table()?;
    let notices = std::mem::take(&mut observer.notices);
    let written = write_outputs(
        plan,
        folder,
        &shortlist,
        &summary,
        Stages {
            probability: probability.as_deref(),
            snapping: snapping.as_ref(),
        },
        o.report,
        &mut || observer.stop_now(),
    )?;
    if let Some((done, total)) = written {
        return Ok(Outcome::Interrupted {
            stage: Stage::Outputs,
            done,
            total,
        });
    }
    // Temp files of listed outputs left by a kill during an earlier attempt.
    for rel in read_manifest(folder.root())? {
        if !rel.ends_with('/') {
            for tmp in temp_names(&folder.root().join(&rel)) {
                let _ = std::fs::remove_file(tmp);
            }
        }
    }
    let finished = folder.own(".work/finished")?;
    std::fs::write(&finished, b"").map_err(|e| Error::io("writing", &finished, e))?;
    if !o.keep_checkpoints {
        remove_checkpoints(folder)?;
    }
    if shortlist.is_empty() {
        let limits = match &snapping {
            Some(sn) if sn.before > 0 => snapping_text(&plan.problem, sn),
            _ => binding_text(&summary, true),
        };
        return Ok(Outcome::NothingFeasible { limits });
    }
    Ok(Outcome::Finished {
        shortlisted: shortlist.len(),
        evaluated: summary.evaluated,
        evaluations: summary.evaluations,
        feasible: summary.feasible,
        notices,
    })
}

/// Remove the chunks and refined seeds of a finished run, and temp files a
/// kill left behind (the header and the `finished` mark stay, so that
/// `--resume` knows there is nothing to do).
fn remove_checkpoints(folder: &RunFolder) -> Result<(), Error> {
    let work = folder.root().join(".work");
    let Ok(entries) = std::fs::read_dir(&work) else {
        return Ok(());
    };
    for e in entries.flatten() {
        let name = e.file_name();
        let name = name.to_string_lossy();
        if (name.starts_with("chunk-")
            && (name.ends_with(".parquet") || name.ends_with(".partial")))
            || (name.starts_with("refine-")
                && (name.ends_with(".json") || name.ends_with(".partial")))
        {
            let p = e.path();
            std::fs::remove_file(&p).map_err(|err| Error::io("removing", &p, err))?;
        }
    }
    Ok(())
}

/// Combine the shards of a split screen into the outputs one process would
/// have written: every shard must come from the same config, files and seed,
/// and together they must cover every chunk exactly once.
///
/// # Errors
/// Shards that disagree, a chunk missing or held twice, a shard still
/// running, or the errors of [`run`].
pub fn merge(
    shard_dirs: &[PathBuf],
    threads: Option<usize>,
    o: &ScreenOptions,
    watcher: &mut dyn ScreenObserver,
) -> Result<Outcome, Error> {
    let (mut plan, held, _locks) = shards_plan(shard_dirs)?;
    if threads.is_some() {
        plan.threads = threads;
    }
    let folder = RunFolder::open(&o.out, o.opening())?;
    let header = header_of(&plan, None);
    prepare(&folder, &header, o.resume)?;
    if o.resume && folder.root().join(".work/finished").exists() {
        return Ok(Outcome::AlreadyFinished);
    }
    let pool = worker_pool(&plan)?;
    let mut store = FolderStore {
        folder: &folder,
        chunk_dirs: Some(held),
        notices: Vec::new(),
    };
    finish(&plan, &folder, &mut store, o, watcher, &pool)
}

/// The plan the shards were run with (loaded again from the config a shard
/// keeps, relative to the folder it was given in), which shard folder holds
/// each chunk, and the shards' locks (held until the merge ends).
fn shards_plan(dirs: &[PathBuf]) -> Result<(RunPlan, Vec<PathBuf>, Vec<RunFolder>), Error> {
    if dirs.is_empty() {
        return Err(Error::bad_input("merge needs the shard folders").with_hint(
            "quenchwise merge --out DIR shard-0 shard-1 ... (the --out folders of each --shard run)",
        ));
    }
    let mut seen = BTreeSet::new();
    for d in dirs {
        let canonical = std::fs::canonicalize(d).unwrap_or_else(|_| d.clone());
        if !seen.insert(canonical) {
            return Err(Error::bad_input(format!(
                "shard folder {} given twice",
                d.display()
            )));
        }
    }
    let mut locks = Vec::new();
    let mut headers = Vec::new();
    for d in dirs {
        if !d.join(".work/header.json").exists() {
            return Err(Error::bad_input(format!(
                "{} is not the folder of a shard (no .work/header.json)",
                d.display()
            )));
        }
        locks.push(RunFolder::open(d, Opening::Existing)?);
        let h = read_header(d)?;
        if h.shard.is_none() {
            return Err(Error::bad_input(format!(
                "{} holds a whole run, not a shard",
                d.display()
            )));
        }
        headers.push(h);
    }
    let first = &headers[0];
    let config = dirs[0].join(".work/config.toml");
    let mut plan =
        screen_config::load_with_base(&config, Some(&first.config_dir)).map_err(|e| {
            e.context(format!(
                "loading the config kept by shard {}",
                dirs[0].display()
            ))
        })?;
    plan.config_path = first.config_path.clone();
    if run_hash(&plan) != first.run_hash {
        return Err(Error::bad_input(format!(
            "{}: the config or a file it reads (model set, raw materials) changed since this shard ran",
            dirs[0].display()
        ))
        .with_hint("merge needs the files as they were when the shards ran"));
    }
    let count = first.shard.map(|s| s.count).unwrap_or(0);
    let chunks = first.chunks;
    let mut by_index: Vec<Option<PathBuf>> = vec![None; count];
    for (d, h) in dirs.iter().zip(&headers) {
        if h.run_hash != first.run_hash || h.seed != first.seed || h.chunks != chunks {
            return Err(Error::bad_input(format!(
                "{} and {} come from different screens (config, files, seed or version differ)",
                dirs[0].display(),
                d.display()
            )));
        }
        let s = h.shard.unwrap_or(Shard { index: 0, count: 0 });
        if s.count != count {
            return Err(Error::bad_input(format!(
                "{} is shard {}/{}, {} is shard of {count}: every shard must split the run the same way",
                d.display(),
                s.index,
                s.count,
                dirs[0].display()
            )));
        }
        if let Some(other) = &by_index[s.index] {
            return Err(Error::bad_input(format!(
                "shard {}/{count} given twice: {} and {}",
                s.index,
                other.display(),
                d.display()
            )));
        }
        by_index[s.index] = Some(d.clone());
    }
    let missing: Vec<String> = by_index
        .iter()
        .enumerate()
        .filter(|(_, d)| d.is_none())
        .map(|(i, _)| format!("{i}/{count}"))
        .collect();
    if !missing.is_empty() {
        return Err(Error::bad_input(format!(
            "shard{} {} missing: {} of {count} given",
            if missing.len() == 1 { "" } else { "s" },
            missing.join(", "),
            count - missing.len()
        ))
        .with_hint("give every shard folder; a failed array task is rerun with the same command plus --resume"));
    }
    let mut held = Vec::with_capacity(chunks);
    let mut incomplete = Vec::new();
    for (i, d) in by_index.into_iter().enumerate() {
        let d = d.unwrap_or_default();
        let range = Shard { index: i, count }.chunks(chunks);
        let kept = range
            .clone()
            .filter(|k| d.join(FolderStore::chunk_rel(*k)).exists())
            .count();
        if kept < range.len() {
            incomplete.push(format!(
                "shard {i}/{count} ({}) kept {kept} of its {} chunks",
                d.display(),
                range.len()
            ));
        }
        for _ in range {
            held.push(d.clone());
        }
    }
    if !incomplete.is_empty() {
        return Err(
            Error::bad_input(format!("unfinished shards: {}", incomplete.join("; "))).with_hint(
                "rerun those array tasks with the same command plus --resume, then merge",
            ),
        );
    }
    Ok((plan, held, locks))
}

/// What the stages after the search did, for the outputs to say.
#[derive(Clone, Copy)]
struct Stages<'a> {
    /// The Monte Carlo stage, when the problem has one.
    probability: Option<&'a ProbabilityOutcome>,
    /// Snapping to weighable amounts, when the problem asks for it.
    snapping: Option<&'a SnapOutcome>,
}

/// Write every output file; between any two, `stop` may ask to stop: then
/// `(written, of)` is returned and a resumed run writes them all again.
fn write_outputs(
    plan: &RunPlan,
    folder: &RunFolder,
    shortlist: &[screen::Shortlisted],
    summary: &screen::LimitSummary,
    stages: Stages<'_>,
    report: bool,
    stop: &mut dyn FnMut() -> bool,
) -> Result<Option<(usize, usize)>, Error> {
    let Stages {
        probability,
        snapping,
    } = stages;
    let problem = &plan.problem;
    let rows: Vec<&Row> = shortlist.iter().map(|s| &s.row).collect();
    // Warnings every shortlisted recipe carries: stated once in summary.txt,
    // a code in each row of shortlist.csv.
    let codes = common_warnings(&rows);
    let mut steps: Vec<Box<dyn FnOnce() -> Result<(), Error> + '_>> = Vec::new();
    steps.push(Box::new(|| {
        let with_p = problem.uncertainty.is_some();
        let mut df = rows_frame_with(problem, &rows, true, with_p)
            .map_err(|e| Error::internal(format!("building the shortlist table: {e}")))?;
        let mut csv = csv_frame(&df, &codes)
            .map_err(|e| Error::internal(format!("rounding the shortlist table: {e}")))?;
        write_frame(&folder.own("shortlist.csv")?, &mut csv)?;
        write_frame(&folder.own(SHORTLIST_FULL)?, &mut df)?;
        folder.write("shortlist.json", shortlist_json(&df).as_bytes())?;
        if let Some(p) = probability {
            // Every recipe the Monte Carlo stage drew (the report's
            // probability-against-cost picture reads it).
            let drawn: Vec<&Row> = p.drawn.iter().collect();
            let df = rows_frame_with(problem, &drawn, false, true)
                .map_err(|e| Error::internal(format!("building the drawn-recipes table: {e}")))?;
            let mut df = csv_frame(&df, &[])
                .map_err(|e| Error::internal(format!("rounding the drawn-recipes table: {e}")))?;
            write_frame(&folder.own(DRAWN_TABLE)?, &mut df)?;
        }
        Ok(())
    }));
    steps.push(Box::new(|| write_batch_sheets(plan, folder, shortlist)));
    steps.push(Box::new(|| {
        // The config as run, and the provenance of the models.
        let mut as_run = format!(
            "# config as run by quenchwise {} (run hash {:016x}); seed {}; threads {}\n",
            env!("CARGO_PKG_VERSION"),
            run_hash(plan),
            plan.search.seed,
            plan.threads
                .map(|t| t.to_string())
                .unwrap_or_else(|| "all cores".into())
        );
        as_run.push_str(&plan.config_text);
        folder.write("config-as-run.toml", as_run.as_bytes())?;
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
            "config_dir": header_of(plan, None).config_dir,
            "seed": plan.search.seed,
        });
        let text = serde_json::to_string_pretty(&provenance)
            .map_err(|e| Error::internal(format!("writing provenance.json: {e}")))?;
        folder.write("provenance.json", text.as_bytes())?;
        // Which limit rejected how much of the space.
        let mut lim = String::from("limit,candidates_breaking_it,candidates_breaking_only_it\n");
        for (l, any, only) in &summary.by_limit {
            lim.push_str(&format!("\"{}\",{any},{only}\n", l.label()));
        }
        folder.write("limits.csv", lim.as_bytes())?;
        let mut text = screen_summary_text(
            &plan.config_path.display().to_string(),
            problem,
            summary,
            shortlist.len(),
        );
        // Before the closing caution.
        let mut extra = String::new();
        if let Some(p) = probability {
            extra.push_str(&probability_stage_text(problem, p));
        }
        if let Some(sn) = snapping {
            extra.push_str(&snapping_text(problem, sn));
            extra.push('\n');
        }
        if !codes.is_empty() {
            extra.push_str(
                "warnings on every shortlisted recipe (shortlist.csv writes the code):\n",
            );
            for (text, code) in &codes {
                extra.push_str(&format!("  {code}: {text}\n"));
            }
        }
        match text.find("caution:") {
            Some(i) => text.insert_str(i, &extra),
            None => text.push_str(&extra),
        }
        folder.write("summary.txt", text.as_bytes())?;
        Ok(())
    }));
    if report {
        steps.push(Box::new(|| write_report(folder).map(|_| ())));
    }
    let total = steps.len();
    for (i, step) in steps.into_iter().enumerate() {
        if stop() {
            return Ok(Some((i, total)));
        }
        step()?;
    }
    Ok(None)
}
