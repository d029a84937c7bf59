//! Tables streamed: a melt-card or composition table is read, evaluated and
//! written in bounded batches, so memory does not grow with the table.
//!
//! - **Reading.** A CSV file is cut into batches of whole records (line
//!   endings made LF, quotes followed, the line of every record counted) and
//!   each batch is parsed by polars with one schema for the whole file. That
//!   schema is what polars infers over every row: a first pass reads the
//!   batches once, merges their inferred types, counts the rows and checks
//!   every cell, so a bad cell anywhere is reported (with file, row, line
//!   and column) before any row is evaluated. A Parquet file is read row
//!   group by row group, in batches within a group.
//! - **Evaluating.** Each batch is cut into one part per worker of the
//!   rayon pool in force, each part a job; up to two batches are out at
//!   once, so a worker done with its part takes the next batch's instead of
//!   waiting for the others, and the calling thread reads and finishes
//!   batches meanwhile. Results come back in input order. A stop (Ctrl-C)
//!   skips the rest of the rows handed out and writes nothing.
//! - **Writing.** Result columns are built typed, straight from each
//!   [`Evaluation`] through the column definitions of
//!   [`crate::report::records`], appended to the batch's input columns, and
//!   written by polars' batched CSV or Parquet writer; with more than one
//!   worker thread, on a thread of its own, so writing batch k overlaps
//!   reading and evaluating the next ones (one batch waits at most).
//!
//! The output goes to `<out>.partial` (e.g. `results.csv.partial`), renamed
//! to `<out>` only when every batch is written and synced; on any error the
//! partial file is removed. A process killed mid-run leaves only the
//! `.partial` file, never a file under the name asked for.
//!
//! The result columns are fixed before the first row is evaluated: every
//! phase has its per-phase columns even when no row fills them, and a row
//! that failed has empty result cells. (The whole-table path
//! [`super::table::append_results`] keeps only columns some row fills.)

use super::melt_card::MeltValues;
use super::table::{
    check_writable, composition_rows, melt_rows, number_column, OxideAmounts, Places, TableError,
};
use crate::assess::Evaluation;
use crate::report::records::{
    csv_digits, rounded, Carried, CellKind, EvalCell, EvalField, PhaseField, WarningCode,
    WarningLegend, EVALUATION_FIELDS, PHASE_FIELDS,
};
use crate::uncertainty::melt::MeltSpreads;
use polars::prelude::*;
use std::io::{BufRead, BufReader};
use std::path::{Path, PathBuf};
use std::sync::atomic::{AtomicBool, Ordering};

/// Rows per batch unless told otherwise: large enough that the per-batch
/// work (parsing, writing) is cheap, small enough that a batch's
/// evaluations take a few MB.
pub const DEFAULT_BATCH_ROWS: usize = 4096;

/// At most this many bad cells are collected by the first pass.
const CELLS_COLLECTED: usize = 10_000;

/// Reads the inputs of a frame's rows (one batch or a whole table).
pub trait RowReader: Sync {
    /// One row's input.
    type Row: Send + Sync;
    /// The rows of `df`, each an input or why it cannot be one; bad cells
    /// go to `bad` with their place.
    ///
    /// # Errors
    /// What makes the whole table unusable (a missing column, no rows).
    fn rows(
        &self,
        df: &DataFrame,
        places: &Places,
        bad: &mut Vec<String>,
    ) -> Result<Vec<Result<Self::Row, String>>, TableError>;
}

/// Rows of melt cards.
pub struct MeltRows;

impl RowReader for MeltRows {
    type Row = MeltValues;
    fn rows(
        &self,
        df: &DataFrame,
        places: &Places,
        bad: &mut Vec<String>,
    ) -> Result<Vec<Result<MeltValues, String>>, TableError> {
        melt_rows(df, places, bad)
    }
}

/// Rows of compositions (oxide columns; the others pass through).
pub struct CompositionRows;

impl RowReader for CompositionRows {
    type Row = OxideAmounts;
    fn rows(
        &self,
        df: &DataFrame,
        places: &Places,
        bad: &mut Vec<String>,
    ) -> Result<Vec<Result<OxideAmounts, String>>, TableError> {
        composition_rows(df, places, bad).map(|(rows, _)| rows)
    }
}

/// Rows of melt cards with the spreads `eval --uncertainty` draws from, in
/// optional columns: `turnbull_alpha_sd` (or `interface_energy_sd_j_per_m2`,
/// J/m²) and the log-uniform range of pre-existing nuclei
/// `heterogeneous_nuclei_lo_per_m3`, `heterogeneous_nuclei_hi_per_m3` (both
/// or neither in a row; the point estimate then uses their geometric mean,
/// as a card's `heterogeneous_nuclei_per_m3 = [lo, hi]` does).
pub struct MeltSpreadRows;

/// The spread columns [`MeltSpreadRows`] reads.
pub const MELT_SPREAD_COLUMNS: [&str; 4] = [
    "turnbull_alpha_sd",
    "interface_energy_sd_j_per_m2",
    "heterogeneous_nuclei_lo_per_m3",
    "heterogeneous_nuclei_hi_per_m3",
];

impl RowReader for MeltSpreadRows {
    type Row = (MeltValues, MeltSpreads);
    fn rows(
        &self,
        df: &DataFrame,
        places: &Places,
        bad: &mut Vec<String>,
    ) -> Result<Vec<Result<(MeltValues, MeltSpreads), String>>, TableError> {
        let melts = melt_rows(df, places, bad)?;
        let [a_sd, s_sd, lo, hi] = MELT_SPREAD_COLUMNS.map(|c| number_column(df, places, c, bad));
        let pick = |v: &Option<Vec<Option<f64>>>, i: usize| {
            v.as_ref().and_then(|v| v.get(i).copied().flatten())
        };
        Ok(melts
            .into_iter()
            .enumerate()
            .map(|(i, m)| {
                let mut m = m?;
                let mut spreads = MeltSpreads {
                    turnbull_alpha_sd: vec![pick(&a_sd, i)],
                    interface_energy_sd_j_per_m2: vec![pick(&s_sd, i)],
                    nuclei_range_per_m3: None,
                };
                for (name, sd) in [
                    ("turnbull_alpha_sd", spreads.turnbull_alpha_sd[0]),
                    (
                        "interface_energy_sd_j_per_m2",
                        spreads.interface_energy_sd_j_per_m2[0],
                    ),
                ] {
                    if let Some(v) = sd.filter(|v| !(v.is_finite() && *v >= 0.0)) {
                        return Err(format!(
                            "{name} must be a standard deviation ≥ 0, got {v}"
                        ));
                    }
                }
                match (pick(&lo, i), pick(&hi, i)) {
                    (None, None) => {}
                    (Some(l), Some(h)) if l.is_finite() && h.is_finite() && l > 0.0 && l <= h => {
                        if m.kinetics.heterogeneous_nuclei_per_m3.is_some() {
                            return Err("give heterogeneous_nuclei_per_m3 or the range heterogeneous_nuclei_lo_per_m3/_hi_per_m3, not both".into());
                        }
                        spreads.nuclei_range_per_m3 = Some((l, h));
                        m.kinetics.heterogeneous_nuclei_per_m3 = Some((l * h).sqrt());
                    }
                    (Some(l), Some(h)) => {
                        return Err(format!(
                            "the nuclei range needs 0 < heterogeneous_nuclei_lo_per_m3 ≤ heterogeneous_nuclei_hi_per_m3 (per m³, log-uniform), got [{l}, {h}]"
                        ))
                    }
                    _ => {
                        return Err("give both heterogeneous_nuclei_lo_per_m3 and heterogeneous_nuclei_hi_per_m3 (a log-uniform range), or neither".into())
                    }
                }
                Ok((m, spreads))
            })
            .collect())
    }
}

/// What the result columns of a table are: which fields its evaluations
/// carry and the phases of its per-phase columns.
#[derive(Debug, Clone, PartialEq)]
pub struct ResultPlan {
    /// Evaluations come from a model set (compositions), not melt cards.
    pub with_models: bool,
    /// Some evaluation may carry what its kinetics were calibrated against.
    pub calibrated: bool,
    /// Every phase an evaluation may name, in any order.
    pub phases: Vec<String>,
    /// Input columns the evaluation reads and carries in force (a melt
    /// card's `liquidus_k`): a result of the same name takes their place.
    /// A result named like any other input column (a measured
    /// `critical_rate_k_per_s` passed through) is written as `<name>_model`,
    /// so the user's own numbers are never overwritten.
    pub replaces: &'static [&'static str],
}

/// The columns of a melt-card table the row reader reads
/// (`files::table::melt_rows`).
pub const MELT_CARD_COLUMNS: [&str; 16] = [
    "a",
    "b_k",
    "c_k",
    "liquidus_k",
    "liquidus_c",
    "enthalpy_of_fusion_j_per_mol",
    "molar_volume_m3_per_mol",
    "turnbull_alpha",
    "interface_energy_j_per_m2",
    "growth",
    "detectable_fraction",
    "driving_force",
    "heterogeneous_nuclei_per_m3",
    "contact_angle_deg",
    "sample_thickness_m",
    "heat_capacity_change_j_per_mol_k",
];

/// The result columns an `eval` table writes first, in this order: what
/// decides whether a recipe makes a glass, then its temperatures.
const LEADING_RESULTS: [&str; 18] = [
    "critical_rate_k_per_s",
    "critical_rate_k_per_min",
    "limiting_phase",
    "vouched",
    "max_glassy_thickness_mm",
    "nose_temperature_k",
    "nose_temperature_c",
    "nose_time_s",
    "nose_rate_k_per_s",
    "nose_rate_k_per_min",
    "primary_phase",
    "liquidus_k",
    "liquidus_c",
    "glass_transition_k",
    "glass_transition_c",
    "melting_temperature_k",
    "melting_temperature_c",
    "melting_viscosity_pa_s",
];

/// The name a result column takes in a table with these input columns:
/// its own, or `<name>_model` beside a user's column of that name
/// (`<name>_model_2`, `_3`, … if the user has that one too).
fn result_name(name: &str, input: &[String], replaces: &[&str]) -> String {
    let taken = |n: &str| input.iter().any(|c| c == n);
    if !taken(name) || replaces.contains(&name) {
        return name.to_string();
    }
    let first = format!("{name}_model");
    if !taken(&first) {
        return first;
    }
    (2..)
        .map(|k| format!("{name}_model_{k}"))
        .find(|n| !taken(n))
        .unwrap_or(first)
}

impl ResultPlan {
    /// A table of melt cards: one phase, "crystal".
    pub fn melt_cards() -> Self {
        ResultPlan {
            with_models: false,
            calibrated: false,
            phases: vec!["crystal".into()],
            replaces: &MELT_CARD_COLUMNS,
        }
    }
}

/// Columns a caller appends to every row after the evaluation's (e.g. a
/// Monte Carlo band): numbers, then at most one text column.
#[derive(Debug, Clone, Default, PartialEq)]
pub struct ExtraColumns {
    pub numbers: Vec<String>,
    pub text: Option<String>,
}

/// One row's cells of the [`ExtraColumns`] (empty where `None`; a row
/// whose evaluation failed has them all empty).
#[derive(Debug, Clone, Default, PartialEq)]
pub struct ExtraCells {
    /// One per number column (missing ones are empty).
    pub numbers: Vec<Option<f64>>,
    pub text: Option<String>,
}

impl ExtraColumns {
    /// The columns of a batch, named as given (`_model` appended where an
    /// input column already has the name).
    fn build(&self, input: &[String], cells: &[ExtraCells]) -> Vec<Column> {
        let name = |n: &str| result_name(n, input, &[]);
        let mut out: Vec<Column> = self
            .numbers
            .iter()
            .enumerate()
            .map(|(k, n)| {
                Float64Chunked::from_iter_options(
                    name(n).as_str().into(),
                    cells.iter().map(|c| c.numbers.get(k).copied().flatten()),
                )
                .into_column()
            })
            .collect();
        if let Some(t) = &self.text {
            out.push(
                StringChunked::from_iter_options(
                    name(t).as_str().into(),
                    cells.iter().map(|c| c.text.as_deref()),
                )
                .into_column(),
            );
        }
        out
    }
}

enum Source {
    Field(&'static EvalField),
    Phase(&'static PhaseField, String),
}

/// The result columns of a table, in order, named for its input.
struct ResultColumns {
    columns: Vec<(String, Source)>,
    /// The name of the column of row errors (`error`, or `error_model`
    /// beside a user's own `error` column).
    error: String,
}

impl ResultColumns {
    /// The columns in a reading order ([`LEADING_RESULTS`], the per-phase
    /// columns, the other fields as declared, warnings last). A key that an input column the evaluation read already uses
    /// (a melt card's `liquidus_k`, `turnbull_alpha`) takes that column's
    /// place with the value in force, so no column is written twice; a key
    /// that a passed-through column uses is written as `<key>_model`.
    fn new(plan: &ResultPlan, input: &[String]) -> Self {
        let fields = || {
            EVALUATION_FIELDS.iter().filter(|f| match f.carried {
                Carried::Always => true,
                Carried::WithModels => plan.with_models,
                Carried::WhenCalibrated => plan.calibrated,
            })
        };
        // The decisive numbers first, then each phase's own, then the rest
        // in the order the fields are declared, warnings last.
        let mut keyed: Vec<(String, Source)> = LEADING_RESULTS
            .iter()
            .filter_map(|&lead| fields().find(|f| f.name == lead))
            .map(|f| (f.name.to_string(), Source::Field(f)))
            .collect();
        let mut phases = plan.phases.clone();
        phases.sort();
        phases.dedup();
        for f in &PHASE_FIELDS {
            for p in &phases {
                keyed.push((f.column(p), Source::Phase(f, p.clone())));
            }
        }
        keyed.extend(
            fields()
                .filter(|f| !LEADING_RESULTS.contains(&f.name) && f.name != "warnings")
                .chain(fields().filter(|f| f.name == "warnings"))
                .map(|f| (f.name.to_string(), Source::Field(f))),
        );
        // Appended with `with_column`, a result named like an input column
        // replaces it where it stands: only the inputs the plan replaces.
        for (name, _) in &mut keyed {
            *name = result_name(name, input, plan.replaces);
        }
        ResultColumns {
            columns: keyed,
            error: result_name("error", input, &[]),
        }
    }

    /// The name the result of `key` is written under.
    fn name_of(&self, key: &str) -> Option<&str> {
        self.columns.iter().find_map(|(name, source)| match source {
            Source::Field(f) if f.name == key => Some(name.as_str()),
            _ => None,
        })
    }

    /// The result columns of a batch, typed, then the `error` column.
    fn build(&self, results: &[Result<Evaluation, String>]) -> Vec<Column> {
        let mut out: Vec<Column> = self
            .columns
            .iter()
            .map(|(name, source)| match source {
                Source::Field(f) => field_column(name, f, results),
                Source::Phase(f, phase) => {
                    let it = results.iter().map(|r| {
                        r.as_ref()
                            .ok()
                            .and_then(|e| (f.get)(e).get(phase.as_str()).copied())
                    });
                    Float64Chunked::from_iter_options(name.as_str().into(), it).into_column()
                }
            })
            .collect();
        let errors = results.iter().map(|r| r.as_ref().err().map(String::as_str));
        out.push(
            StringChunked::from_iter_options(self.error.as_str().into(), errors).into_column(),
        );
        out
    }
}

/// One field's column over a batch; rows that failed are empty.
fn field_column(name: &str, f: &EvalField, results: &[Result<Evaluation, String>]) -> Column {
    fn cell<'a>(f: &EvalField, r: &'a Result<Evaluation, String>) -> Option<EvalCell<'a>> {
        r.as_ref().ok().map(|e| (f.get)(e))
    }
    let cell = |r| cell(f, r);
    match f.kind {
        CellKind::Num => Float64Chunked::from_iter_options(
            name.into(),
            results.iter().map(|r| match cell(r) {
                Some(EvalCell::Num(v)) => v,
                _ => None,
            }),
        )
        .into_column(),
        CellKind::Bool => BooleanChunked::from_iter_options(
            name.into(),
            results.iter().map(|r| match cell(r) {
                Some(EvalCell::Bool(v)) => v,
                _ => None,
            }),
        )
        .into_column(),
        CellKind::Text | CellKind::Joined => {
            let mut joined = String::new();
            let mut b = StringChunkedBuilder::new(name.into(), results.len());
            for r in results {
                match cell(r) {
                    Some(EvalCell::Text(Some(t))) => b.append_value(t),
                    Some(EvalCell::Joined(parts)) => {
                        joined.clear();
                        for (i, p) in parts.iter().enumerate() {
                            if i > 0 {
                                joined.push_str("; ");
                            }
                            joined.push_str(p);
                        }
                        b.append_value(&joined);
                    }
                    _ => b.append_null(),
                }
            }
            b.finish().into_column()
        }
    }
}

/// Where the rows of a table come from, batch by batch.
enum Input {
    Csv(CsvBatches),
    Parquet(ParquetBatches),
}

/// A batch of CSV text (header first) and the line each record starts on.
type CsvBatch = (Vec<u8>, Vec<usize>);

/// A CSV file cut into batches of whole records.
struct CsvBatches {
    file: BufReader<std::fs::File>,
    /// The header record, LF-terminated.
    header: Vec<u8>,
    /// The line the next byte is on (1-based).
    line: usize,
    /// The last byte read was a CR (a LF right after it belongs to it).
    after_cr: bool,
    done: bool,
    /// Whether a batch was handed out (an empty file still gives one).
    gave: bool,
}

impl CsvBatches {
    fn open(path: &Path, label: &str) -> Result<Self, TableError> {
        let file = std::fs::File::open(path).map_err(|e| read_error(label, e))?;
        let mut b = CsvBatches {
            file: BufReader::with_capacity(1 << 16, file),
            header: Vec::new(),
            line: 1,
            after_cr: false,
            done: false,
            gave: false,
        };
        // The header: the first record that holds something.
        loop {
            let mut rec = Vec::new();
            let mut lines = Vec::new();
            b.records(1, &mut rec, &mut lines)
                .map_err(|e| read_error(label, e))?;
            if lines.is_empty() || rec != b"\n" {
                b.header = rec;
                break;
            }
        }
        crate::files::table::check_separator(&b.header, label)?;
        Ok(b)
    }

    /// Append up to `max` records to `out` (LF line endings), and the line
    /// each starts on to `lines`. Every line ending outside quotes ends a
    /// record, as polars reads it (an empty line is a row of empty cells).
    fn records(
        &mut self,
        max: usize,
        out: &mut Vec<u8>,
        lines: &mut Vec<usize>,
    ) -> std::io::Result<()> {
        let mut in_quotes = false;
        let mut rec_line = self.line;
        let mut rec_start = out.len();
        while !self.done && lines.len() < max {
            let buf = self.file.fill_buf()?;
            if buf.is_empty() {
                self.done = true;
                if out.len() > rec_start {
                    out.push(b'\n');
                    lines.push(rec_line);
                }
                break;
            }
            let mut used = 0;
            for &byte in buf {
                used += 1;
                let byte = if self.after_cr {
                    self.after_cr = false;
                    if byte == b'\n' {
                        continue;
                    }
                    byte
                } else {
                    byte
                };
                let byte = if byte == b'\r' {
                    self.after_cr = true;
                    b'\n'
                } else {
                    byte
                };
                out.push(byte);
                match byte {
                    b'"' => in_quotes = !in_quotes,
                    b'\n' => {
                        self.line += 1;
                        if !in_quotes {
                            lines.push(rec_line);
                            rec_line = self.line;
                            rec_start = out.len();
                            if lines.len() == max {
                                break;
                            }
                        }
                    }
                    _ => {}
                }
            }
            self.file.consume(used);
        }
        Ok(())
    }

    /// The next batch as CSV text with its header, and the line of each
    /// record; `None` when the file is done.
    fn next(&mut self, max: usize, label: &str) -> Result<Option<CsvBatch>, TableError> {
        let mut text = self.header.clone();
        let mut lines = Vec::new();
        self.records(max, &mut text, &mut lines)
            .map_err(|e| read_error(label, e))?;
        if lines.is_empty() && self.gave {
            return Ok(None);
        }
        self.gave = true;
        Ok(Some((text, lines)))
    }
}

/// A Parquet file read row group by row group.
struct ParquetBatches {
    path: PathBuf,
    metadata: polars::prelude::FileMetadataRef,
    /// The rows of each row group.
    groups: Vec<usize>,
    group: usize,
    /// The current row group's frame and the next row of it to hand out.
    frame: Option<(DataFrame, usize)>,
    gave: bool,
}

impl ParquetBatches {
    fn open(path: &Path, label: &str) -> Result<Self, TableError> {
        let file = std::fs::File::open(path).map_err(|e| read_error(label, e))?;
        let mut r = ParquetReader::new(file);
        let metadata = r.get_metadata().map_err(|e| read_error(label, e))?.clone();
        let groups = metadata.row_groups.iter().map(|g| g.num_rows()).collect();
        Ok(ParquetBatches {
            path: path.to_path_buf(),
            metadata,
            groups,
            group: 0,
            frame: None,
            gave: false,
        })
    }

    fn next(&mut self, max: usize, label: &str) -> Result<Option<DataFrame>, TableError> {
        loop {
            if let Some((df, at)) = &mut self.frame {
                if *at < df.height() {
                    let n = max.min(df.height() - *at);
                    let part = df.slice(*at as i64, n);
                    *at += n;
                    self.gave = true;
                    return Ok(Some(part));
                }
                self.frame = None;
            }
            if self.group >= self.groups.len() {
                if self.gave {
                    return Ok(None);
                }
                // No rows at all: one empty frame with the file's columns.
                self.gave = true;
                let df = self.read_slice(0, 0, label)?;
                return Ok(Some(df));
            }
            let start: usize = self.groups[..self.group].iter().sum();
            let len = self.groups[self.group];
            self.group += 1;
            let df = self.read_slice(start, len, label)?;
            self.frame = Some((df, 0));
        }
    }

    fn read_slice(&self, start: usize, len: usize, label: &str) -> Result<DataFrame, TableError> {
        let file = std::fs::File::open(&self.path).map_err(|e| read_error(label, e))?;
        let mut r = ParquetReader::new(file).with_slice(Some((start, len)));
        r.set_metadata(self.metadata.clone());
        r.finish().map_err(|e| read_error(label, e))
    }
}

fn read_error(label: &str, e: impl std::fmt::Display) -> TableError {
    TableError::Read {
        path: label.to_string(),
        message: e.to_string(),
    }
}

/// A table's batches: each a frame and where its rows sit in the file.
struct Batches {
    label: String,
    input: Input,
    batch_rows: usize,
    /// The schema every CSV batch is parsed with (None: inferred per batch).
    schema: Option<SchemaRef>,
    /// The schema is only a guess (the types the first pass found so far):
    /// a batch parsed with it is kept only when inference would have given
    /// the same types ([`Batches::agrees_with_inference`]), else inferred.
    guessed: bool,
    rows: usize,
}

impl Batches {
    fn open(path: &Path, batch_rows: usize, schema: Option<SchemaRef>) -> Result<Self, TableError> {
        let label = path.display().to_string();
        let ext = path
            .extension()
            .and_then(|e| e.to_str())
            .map(str::to_ascii_lowercase);
        let input = match ext.as_deref() {
            Some("csv") => Input::Csv(CsvBatches::open(path, &label)?),
            Some("parquet" | "pq") => Input::Parquet(ParquetBatches::open(path, &label)?),
            _ => return Err(TableError::Extension { path: label }),
        };
        Ok(Batches {
            label,
            input,
            batch_rows: batch_rows.max(1),
            schema,
            guessed: false,
            rows: 0,
        })
    }

    fn next(&mut self) -> Result<Option<(DataFrame, Places)>, TableError> {
        let first = self.rows;
        let (df, lines) = match &mut self.input {
            Input::Csv(c) => {
                let header = c.header.len();
                let Some((text, lines)) = c.next(self.batch_rows, &self.label)? else {
                    return Ok(None);
                };
                let parse = |schema: Option<SchemaRef>, text: Vec<u8>| {
                    let opts = CsvReadOptions::default().with_has_header(true);
                    let opts = match schema {
                        Some(s) => opts.with_schema(Some(s)),
                        None => opts.with_infer_schema_length(None),
                    };
                    opts.into_reader_with_file_handle(std::io::Cursor::new(text))
                        .finish()
                };
                // A batch the file's schema does not fit (the file changed
                // after the check) is read as it is, so that the row reader
                // names the bad cell, or the caller sees the changed types.
                let for_errors = text.clone();
                let df = match parse(self.schema.clone(), text.clone()) {
                    Ok(df)
                        if !self.guessed
                            || Batches::agrees_with_inference(
                                &text[header.min(text.len())..],
                                &df,
                            ) =>
                    {
                        Ok(df)
                    }
                    Ok(_) => parse(None, text),
                    Err(_) if self.schema.is_some() => parse(None, text),
                    Err(e) => Err(e),
                }
                .map_err(|e| {
                    match crate::files::table::longer_record(&for_errors) {
                        // The batch is the header and whole records: its line r
                        // is the (r − 2)-th record of the batch.
                        Some((r, n, head)) => TableError::Read {
                            path: self.label.clone(),
                            message: format!(
                                "line {} has {n} cells but the header names {head} columns \
                             (a comma inside a cell needs the cell in double quotes)",
                                r.checked_sub(2)
                                    .and_then(|k| lines.get(k))
                                    .map_or_else(|| "?".to_string(), |l| l.to_string())
                            ),
                        },
                        None => read_error(&self.label, e),
                    }
                })?;
                // Where the count of records agrees with polars, rows get lines.
                let lines = (lines.len() == df.height()).then_some(lines);
                (df, lines)
            }
            Input::Parquet(p) => {
                let Some(df) = p.next(self.batch_rows, &self.label)? else {
                    return Ok(None);
                };
                (df, None)
            }
        };
        self.rows += df.height();
        let places = Places::batch(self.label.clone(), first, lines);
        Ok(Some((df, places)))
    }
}

impl Batches {
    /// Whether a batch parsed with a guessed schema of Float64, Int64 and
    /// String columns has the types polars' inference would merge into the
    /// same schema (see [`merge_dtype`]). A text column stays text whatever
    /// the batch holds. A numeric column parsed without error holds what
    /// polars' number parser takes, which is what inference takes as a
    /// number, except: a sign `+` (other than in an exponent), a number
    /// ending in `.` before its exponent (`1.e5`), spaces or quotes around
    /// a number, and spellings of NaN and infinity other than `NaN` and
    /// `inf`, all of which inference reads as text. A batch holding any of
    /// these (in any column: `data` is the batch's text after its header),
    /// or any non-finite number, is inferred instead.
    fn agrees_with_inference(data: &[u8], df: &DataFrame) -> bool {
        let mut prev = b'\n';
        for &b in data {
            let odd = match b {
                b'"' | b' ' | b'\t' => true,
                b'+' => !matches!(prev, b'e' | b'E'),
                b'e' | b'E' => prev == b'.',
                _ => false,
            };
            if odd {
                return false;
            }
            prev = b;
        }
        df.columns().iter().all(|c| match c.dtype() {
            DataType::Float64 => c
                .f64()
                .is_ok_and(|ca| ca.iter().flatten().all(f64::is_finite)),
            _ => true,
        })
    }
}

/// The column names of a table, from its header (CSV) or schema (Parquet).
///
/// # Errors
/// An unknown extension, an unreadable or malformed file.
pub fn table_column_names(path: &Path) -> Result<Vec<String>, TableError> {
    let b = Batches::open(path, 1, None)?;
    let names = match &b.input {
        Input::Csv(c) => CsvReadOptions::default()
            .with_has_header(true)
            .into_reader_with_file_handle(std::io::Cursor::new(c.header.clone()))
            .finish()
            .map_err(|e| read_error(&b.label, e))?
            .get_column_names()
            .iter()
            .map(|s| s.to_string())
            .collect(),
        Input::Parquet(p) => p
            .read_slice(0, 0, &b.label)?
            .get_column_names()
            .iter()
            .map(|s| s.to_string())
            .collect(),
    };
    Ok(names)
}

/// Merge the type polars inferred for a column in one batch into the type
/// for the whole file, as polars' own inference over every row would: an
/// integer and a float make a float, any other mix makes text. A column
/// that is empty throughout a batch says nothing about its type.
fn merge_dtype(whole: Option<DataType>, batch: &Column) -> Option<DataType> {
    if batch.null_count() == batch.len() {
        return whole;
    }
    let b = batch.dtype().clone();
    Some(match whole {
        None => b,
        Some(w) if w == b => w,
        Some(w)
            if matches!(
                (&w, &b),
                (DataType::Int64, DataType::Float64) | (DataType::Float64, DataType::Int64)
            ) =>
        {
            DataType::Float64
        }
        Some(_) => DataType::String,
    })
}

/// The schema of the types found so far, when every column has one that a
/// batch parsed with it can be checked against inference for (text or a
/// 64-bit number; see [`Batches::agrees_with_inference`]).
fn guessed_schema(names: &[PlSmallStr], types: &[Option<DataType>]) -> Option<SchemaRef> {
    let fields = names.iter().zip(types).map(|(n, t)| match t {
        Some(t @ (DataType::Float64 | DataType::Int64 | DataType::String)) => {
            Some(Field::new(n.clone(), t.clone()))
        }
        _ => None,
    });
    let fields: Option<Vec<Field>> = fields.collect();
    Some(Arc::new(Schema::from_iter(fields?)))
}

/// What the first pass found.
struct Checked {
    schema: Option<SchemaRef>,
    rows: usize,
}

/// The first pass: every batch parsed, its cells checked and its types
/// merged; nothing evaluated.
fn check_table<R: RowReader>(
    input: &Path,
    out: &Path,
    reader: &R,
    settings: &StreamSettings,
) -> Result<Checked, TableError> {
    let batch_rows = settings.batch_rows;
    let mut batches = Batches::open(input, batch_rows, None)?;
    let is_csv = matches!(batches.input, Input::Csv(_));
    let mut names: Vec<PlSmallStr> = Vec::new();
    let mut types: Vec<Option<DataType>> = Vec::new();
    let mut bad = Vec::new();
    let mut first = true;
    // The cells of a batch are checked on the pool while the next batch is
    // read: the check of every cell is about a tenth of a table's work.
    let mut next = batches.next()?;
    while let Some((df, places)) = next.take() {
        if stop_raised(settings.stop) {
            return Err(TableError::Stopped {
                evaluated: 0,
                total: None,
            });
        }
        if first {
            names = df.get_column_names().into_iter().cloned().collect();
            types = vec![None; names.len()];
        }
        if is_csv {
            for (t, c) in types.iter_mut().zip(df.columns()) {
                *t = merge_dtype(t.take(), c);
            }
            // Inference over every row costs more than the parse: later
            // batches are parsed with the types found so far, and inferred
            // only when those may not be what inference would give.
            batches.schema = guessed_schema(&names, &types);
            batches.guessed = true;
        }
        let (checked, read) = rayon::join(
            || reader.rows(&df, &places, &mut bad).map(drop),
            || batches.next(),
        );
        checked?;
        if first {
            // As before any work in the whole-table path: every column can
            // go into the output's format.
            check_writable(&df, out)?;
            first = false;
        }
        if bad.len() >= CELLS_COLLECTED {
            // (The next batch, read meanwhile, is not looked at.)
            bad.truncate(CELLS_COLLECTED);
            bad.push(format!(
                "{input}: the check stopped after {CELLS_COLLECTED} bad cells",
                input = input.display()
            ));
            break;
        }
        next = read?;
    }
    super::table::cells(bad)?;
    let schema = is_csv.then(|| {
        Arc::new(Schema::from_iter(names.into_iter().zip(types).map(
            |(n, t)| {
                // Empty throughout: polars reads such a column as text.
                Field::new(n, t.unwrap_or(DataType::String))
            },
        )))
    });
    Ok(Checked {
        schema,
        rows: batches.rows,
    })
}

/// The output file while it is written: `<out>.partial`, renamed to `<out>`
/// by [`Sink::finish`], removed if dropped unfinished.
struct Sink {
    tmp: PathBuf,
    path: PathBuf,
    writer: Option<Writer>,
    /// The file the writer writes, to sync it when done.
    file: std::fs::File,
}

// Polars serialises each batch in memory and hands the file large writes,
// so the file needs no buffer of its own (and every write error is seen).
enum Writer {
    Csv(polars::io::csv::write::BatchedWriter<std::fs::File>),
    Parquet(Box<polars::io::parquet::write::BatchedWriter<std::fs::File>>),
}

impl Sink {
    fn create(path: &Path, schema: &Schema) -> Result<Self, TableError> {
        let p = path.display().to_string();
        let werr = |m: String| TableError::Write {
            path: p.clone(),
            message: m,
        };
        let ext = path
            .extension()
            .and_then(|e| e.to_str())
            .map(str::to_ascii_lowercase);
        let tmp = path.with_extension(format!(
            "{}.partial",
            path.extension().and_then(|e| e.to_str()).unwrap_or("out")
        ));
        let f = std::fs::File::create(&tmp).map_err(|e| werr(e.to_string()))?;
        let file = f.try_clone().map_err(|e| werr(e.to_string()))?;
        let mut sink = Sink {
            tmp,
            path: path.to_path_buf(),
            writer: None,
            file,
        };
        sink.writer = Some(match ext.as_deref() {
            Some("csv") => Writer::Csv(
                CsvWriter::new(f)
                    .batched(schema)
                    .map_err(|e| werr(e.to_string()))?,
            ),
            Some("parquet" | "pq") => Writer::Parquet(Box::new(
                ParquetWriter::new(f)
                    .batched(schema)
                    .map_err(|e| werr(e.to_string()))?,
            )),
            _ => return Err(TableError::Extension { path: p }),
        });
        Ok(sink)
    }

    fn werr(&self, e: impl std::fmt::Display) -> TableError {
        TableError::Write {
            path: self.path.display().to_string(),
            message: e.to_string(),
        }
    }

    fn write(&mut self, df: &mut DataFrame) -> Result<(), TableError> {
        df.align_chunks_par();
        let r = match &mut self.writer {
            Some(Writer::Csv(w)) => w.write_batch(df),
            Some(Writer::Parquet(w)) => w.write_batch(df),
            None => Ok(()),
        };
        r.map_err(|e| self.werr(e))
    }

    fn finish(mut self) -> Result<(), TableError> {
        match self.writer.take() {
            Some(Writer::Csv(mut w)) => w.finish().map_err(|e| self.werr(e))?,
            Some(Writer::Parquet(w)) => {
                w.finish().map_err(|e| self.werr(e))?;
            }
            None => {}
        }
        self.file.sync_all().map_err(|e| self.werr(e))?;
        std::fs::rename(&self.tmp, &self.path).map_err(|e| self.werr(e))?;
        self.tmp = PathBuf::new();
        Ok(())
    }
}

impl Drop for Sink {
    fn drop(&mut self) {
        if !self.tmp.as_os_str().is_empty() {
            self.writer = None;
            let _ = std::fs::remove_file(&self.tmp);
        }
    }
}

/// How a streamed table is cut, and how a CSV file shows it.
#[derive(Debug, Clone, Copy)]
pub struct StreamSettings {
    /// Rows per batch (at least 1).
    pub batch_rows: usize,
    /// A CSV output shows meaningful digits: every result column rounded
    /// as [`csv_digits`] says (input columns as read), and the warnings of
    /// the first row that has any written as codes W1, W2, ... in every row
    /// that carries them ([`Streamed::warning_codes`] is the legend). A
    /// Parquet output keeps every digit and every text either way. Off by
    /// default (every digit); `eval` turns it on.
    pub readable_csv: bool,
    /// Raised to stop (Ctrl-C): the rows in progress finish, the rest are
    /// skipped, and the run ends with [`TableError::Stopped`], writing
    /// nothing. The caller lowers it before the run. None: never stopped.
    pub stop: Option<&'static AtomicBool>,
}

impl Default for StreamSettings {
    fn default() -> Self {
        StreamSettings {
            batch_rows: DEFAULT_BATCH_ROWS,
            readable_csv: false,
            stop: None,
        }
    }
}

/// Whether `stop` is raised.
fn stop_raised(stop: Option<&AtomicBool>) -> bool {
    stop.is_some_and(|s| s.load(Ordering::SeqCst))
}

/// One evaluated batch, for a caller that shows progress or a summary.
pub struct BatchDone<'a> {
    /// The batch's input columns.
    pub input: &'a DataFrame,
    /// Rows of the file before this batch.
    pub first_row: usize,
    /// Each row's evaluation or why it failed, in input order.
    pub results: &'a [Result<Evaluation, String>],
    /// Each row's extra cells (see [`stream_table_with`]), in input order.
    pub extra: &'a [ExtraCells],
}

/// What a streamed table reports as it goes.
pub enum Event<'a> {
    /// The first pass is done: the table has this many rows, every cell fine.
    Checked(usize),
    /// A batch is evaluated and its result columns built; its rows go to
    /// the writer next (written, or with more than one worker thread,
    /// queued to be; with a readable CSV, once the warning codes are fixed).
    Batch(BatchDone<'a>),
}

/// What a streamed table came to.
#[derive(Debug, Clone, PartialEq, Eq)]
pub struct Streamed {
    pub rows: usize,
    pub failed: usize,
    /// The warnings a readable CSV file writes as codes, with the rows
    /// carrying each (empty for Parquet, or when no row has a warning).
    pub warning_codes: Vec<WarningCode>,
}

/// Read the table `input` batch by batch, evaluate every row (in
/// parallel, in the rayon pool in force), and write the input columns with
/// the results appended to `out` (.csv or .parquet). `on` hears when the
/// first pass has counted the rows, then of each batch.
///
/// # Errors
/// Anything wrong with the table as a whole (format, missing columns, a bad
/// cell anywhere: all found before any row is evaluated), or a failed
/// write. Rows that cannot be evaluated are not errors: their reason goes
/// into the `error` column. On an error no file `out` is written.
///
/// # Panics
/// A panic in `evaluate` (a bug) is raised again here once the rows still
/// out have stopped; nothing is written.
pub fn stream_table<R: RowReader>(
    input: &Path,
    out: &Path,
    reader: &R,
    plan: &ResultPlan,
    settings: StreamSettings,
    evaluate: impl Fn(&R::Row) -> Result<Evaluation, String> + Sync,
    on: impl FnMut(Event<'_>),
) -> Result<Streamed, TableError> {
    stream_table_with(
        input,
        out,
        reader,
        plan,
        &ExtraColumns::default(),
        settings,
        |_, row| evaluate(row).map(|e| (e, ExtraCells::default())),
        on,
    )
}

/// As [`stream_table`], with `extra` columns after the evaluation's (before
/// `error`) and `evaluate` told each row's index in the file (from 0), so a
/// row's result can depend on its place (a seed per row) but never on the
/// batch size or the thread count.
///
/// # Errors
/// As [`stream_table`].
///
/// # Panics
/// As [`stream_table`].
#[allow(clippy::too_many_arguments)]
pub fn stream_table_with<R: RowReader>(
    input: &Path,
    out: &Path,
    reader: &R,
    plan: &ResultPlan,
    extra: &ExtraColumns,
    settings: StreamSettings,
    evaluate: impl Fn(usize, &R::Row) -> Result<(Evaluation, ExtraCells), String> + Sync,
    mut on: impl FnMut(Event<'_>),
) -> Result<Streamed, TableError> {
    let pass = check_table(input, out, reader, &settings)?;
    on(Event::Checked(pass.rows));
    let mut batches = Batches::open(input, settings.batch_rows, pass.schema)?;
    // With more than one worker thread, a thread of its own writes batch k
    // while the next ones are read and evaluated.
    let pipelined = rayon::current_num_threads() > 1;
    let readable = settings.readable_csv
        && out
            .extension()
            .is_some_and(|e| e.eq_ignore_ascii_case("csv"));
    std::thread::scope(|scope| {
        let mut output = Output::new(scope, out, pipelined);
        let counted = evaluate_batches(
            &mut batches,
            input,
            out,
            reader,
            plan,
            extra,
            &evaluate,
            &mut on,
            &mut output,
            readable,
            settings.stop,
        );
        // (On an error the output is dropped unfinished: its partial file
        // is removed.)
        let sink = output.close();
        let (rows_seen, failed, warning_codes) = counted.map_err(|e| match e {
            TableError::Stopped { evaluated, .. } => TableError::Stopped {
                evaluated,
                total: Some(pass.rows),
            },
            e => e,
        })?;
        // A stop asked for while the last batches were written still
        // writes nothing.
        if stop_raised(settings.stop) {
            return Err(TableError::Stopped {
                evaluated: rows_seen,
                total: Some(pass.rows),
            });
        }
        match sink? {
            Some(s) => s.finish()?,
            None => {
                return Err(TableError::NoRows {
                    path: input.display().to_string(),
                })
            }
        }
        Ok(Streamed {
            rows: rows_seen,
            failed,
            warning_codes,
        })
    })
}

/// Where the assembled batches go: written here, or handed to a writer
/// thread (one batch waits at most), so writing overlaps evaluating.
enum Output<'scope> {
    Here {
        out: &'scope Path,
        sink: Option<Sink>,
    },
    Thread {
        out: &'scope Path,
        to_writer: Option<std::sync::mpsc::SyncSender<DataFrame>>,
        writer: Option<std::thread::ScopedJoinHandle<'scope, Result<Option<Sink>, TableError>>>,
    },
}

/// Write a batch, creating the output (with the batch's schema) first.
fn write_into(sink: &mut Option<Sink>, out: &Path, mut frame: DataFrame) -> Result<(), TableError> {
    if sink.is_none() {
        *sink = Some(Sink::create(out, frame.schema())?);
    }
    if let Some(s) = sink.as_mut() {
        s.write(&mut frame)?;
    }
    Ok(())
}

impl<'scope> Output<'scope> {
    fn new<'env>(
        scope: &'scope std::thread::Scope<'scope, 'env>,
        out: &'env Path,
        pipelined: bool,
    ) -> Self {
        if !pipelined {
            return Output::Here { out, sink: None };
        }
        let (to_writer, batches) = std::sync::mpsc::sync_channel::<DataFrame>(1);
        let writer = scope.spawn(move || {
            let mut sink = None;
            for frame in batches {
                write_into(&mut sink, out, frame)?;
            }
            Ok(sink)
        });
        Output::Thread {
            out,
            to_writer: Some(to_writer),
            writer: Some(writer),
        }
    }

    fn push(&mut self, frame: DataFrame) -> Result<(), TableError> {
        match self {
            Output::Here { out, sink } => write_into(sink, out, frame),
            Output::Thread { out, to_writer, .. } => {
                if to_writer.as_ref().is_some_and(|t| t.send(frame).is_ok()) {
                    return Ok(());
                }
                let path = out.display().to_string();
                // The writer stopped early: its error says why.
                match self.close() {
                    Err(e) => Err(e),
                    Ok(_) => Err(TableError::Write {
                        path,
                        message: "the writer stopped before the last batch".into(),
                    }),
                }
            }
        }
    }

    /// The file being written.
    fn path(&self) -> &Path {
        match self {
            Output::Here { out, .. } | Output::Thread { out, .. } => out,
        }
    }

    /// Every batch written: the output, still to be finished (`None`: no
    /// batch came). A writer thread's panic goes on to the caller.
    fn close(&mut self) -> Result<Option<Sink>, TableError> {
        match self {
            Output::Here { sink, .. } => Ok(sink.take()),
            Output::Thread {
                to_writer, writer, ..
            } => {
                drop(to_writer.take());
                match writer.take() {
                    Some(w) => w.join().unwrap_or_else(|p| std::panic::resume_unwind(p)),
                    None => Ok(None),
                }
            }
        }
    }
}

/// The second pass of [`stream_table_with`]: every batch read, evaluated and
/// handed to `output` (with `readable`, warnings coded once the legend is
/// fixed); the rows seen, how many failed, and the legend.
#[allow(clippy::too_many_arguments)]
fn evaluate_batches<R: RowReader>(
    batches: &mut Batches,
    input: &Path,
    out: &Path,
    reader: &R,
    plan: &ResultPlan,
    extra: &ExtraColumns,
    evaluate: &(impl Fn(usize, &R::Row) -> Result<(Evaluation, ExtraCells), String> + Sync),
    on: &mut impl FnMut(Event<'_>),
    output: &mut Output<'_>,
    readable: bool,
    stop: Option<&AtomicBool>,
) -> Result<(usize, usize, Vec<WarningCode>), TableError> {
    let mut columns: Option<ResultColumns> = None;
    let mut failed = 0;
    let mut rows_seen = 0;
    let mut legend = WarningLegend::new();
    let mut pending: Vec<(DataFrame, Vec<Option<Vec<String>>>)> = Vec::new();
    // The name the evaluation's warnings column took (`warnings_model` when
    // the input has a column of its own called `warnings`).
    let mut warnings_column = String::from("warnings");
    // What is left of an evaluated batch: its result columns built, rounded
    // and handed to the writer, in input order. It gives the batch back to
    // be dropped on the pool, where its evaluations were made: freeing them
    // on this thread would cost it a fifth of its time.
    let mut finish = |done: Evaluated| -> Result<Evaluated, TableError> {
        let Evaluated {
            df,
            places,
            mut results,
            cells,
        } = done;
        let cols = columns.get_or_insert_with(|| {
            let names: Vec<String> = df
                .get_column_names()
                .iter()
                .map(|s| s.to_string())
                .collect();
            ResultColumns::new(plan, &names)
        });
        if let Some(name) = cols.name_of("warnings") {
            warnings_column = name.to_string();
        }
        let mut frame = df.clone();
        let mut built = cols.build(&results);
        if extra.text.is_some() || !extra.numbers.is_empty() {
            let names: Vec<String> = df
                .get_column_names()
                .iter()
                .map(|s| s.to_string())
                .collect();
            // Before the `error` column, which stays last.
            let error = built.pop();
            built.extend(extra.build(&names, &cells));
            built.extend(error);
        }
        if readable {
            built = built.into_iter().map(rounded_column).collect();
        }
        for c in built {
            frame.with_column(c).map_err(|e| TableError::Write {
                path: out.display().to_string(),
                message: format!("assembling the results: {e}"),
            })?;
        }
        on(Event::Batch(BatchDone {
            input: &df,
            first_row: places.first_row(),
            results: &results,
            extra: &cells,
        }));
        rows_seen += results.len();
        if readable {
            // Rows wait (at most the legend's look-ahead) until the coded
            // warnings are known. (The warnings are moved out: `on` has
            // seen them.)
            let warnings: Vec<Option<Vec<String>>> = results
                .iter_mut()
                .map(|r| r.as_mut().ok().map(|e| std::mem::take(&mut e.warnings)))
                .collect();
            for w in &warnings {
                legend.see(w.as_deref());
            }
            pending.push((frame, warnings));
            if legend.is_fixed() {
                flush(&mut pending, &mut legend, &warnings_column, output)?;
            }
        } else {
            output.push(frame)?;
        }
        Ok(Evaluated {
            df,
            places,
            results,
            cells,
        })
    };
    // A pipeline without a barrier per batch. Each batch read is cut into
    // one part per worker, each part a job of its own; up to IN_FLIGHT
    // batches are handed out at once. A worker done with its part takes a
    // part of the next batch instead of waiting for the slowest row of its
    // own, and this thread reads the next batches and finishes the oldest
    // (in input order, so the output is the same) meanwhile. Memory stays
    // bounded by IN_FLIGHT batches and the one being finished, whatever the
    // thread count. This thread calls no parallel iterator: its work would
    // queue behind the evaluation and wait for it. (Two batches out measured
    // best: 2 threads 2.5-6 % faster than the barrier per batch before, one
    // thread held to one core the same; three out made that one 3 % slower.
    // DEVELOPERS.md, "fourth sitting".)
    const IN_FLIGHT: usize = 2;
    let parts_per_batch = rayon::current_num_threads();
    // Raised when this thread leaves (an error, a stop, a panic here or in
    // a job; also at the end, when no part is out): the parts still out
    // skip their rows instead of evaluating rows nobody will write.
    let abandon = AtomicBool::new(false);
    let abandon = &abandon;
    struct RaiseOnDrop<'a>(&'a AtomicBool);
    impl Drop for RaiseOnDrop<'_> {
        fn drop(&mut self) {
            self.0.store(true, Ordering::Relaxed);
        }
    }
    // Rows evaluated so far, for a stop's message.
    let mut evaluated = 0;
    // A batch read, with its rows taken from it (or why they cannot be:
    // reported after the batches before it are written).
    let prepare = |read: Option<(DataFrame, Places)>, schema: Option<&SchemaRef>| {
        read.map(|(df, places)| {
            let rows = (|| {
                let mut bad = Vec::new();
                let rows = reader.rows(&df, &places, &mut bad)?;
                // The first pass checked every cell: a bad one now means
                // the file changed under us.
                super::table::cells(bad)?;
                if let Some(s) = schema {
                    if df.schema().as_ref() != s.as_ref() {
                        return Err(TableError::Read {
                            path: input.display().to_string(),
                            message: format!(
                                "the file changed while it was read (rows {} to {})",
                                places.first_row() + 1,
                                places.first_row() + df.height()
                            ),
                        });
                    }
                }
                Ok(rows)
            })();
            (df, places, rows)
        })
    };
    // One part's results as its job sends them: the batch's number, the
    // part's, and its results and extra cells (or the job's panic, raised
    // again here).
    let (to_main, done) = std::sync::mpsc::channel::<(usize, usize, std::thread::Result<Part>)>();
    // A batch handed out: its parts as they come back, and how many are
    // still out.
    struct Out {
        df: DataFrame,
        places: Places,
        parts: Vec<Option<Part>>,
        left: usize,
    }
    rayon::in_place_scope(|scope| {
        let mut pipeline = || -> Result<(), TableError> {
            // The batches handed out and not yet finished, oldest first; the
            // oldest is number `finished`.
            let mut waiting: std::collections::VecDeque<Out> = Default::default();
            let (mut handed, mut finished) = (0usize, 0usize);
            // Why the input stopped early, reported once the batches before it
            // are written.
            let mut broken: Option<TableError> = None;
            let mut more = true;
            loop {
                // (After a stop, nothing more is read.)
                while more && waiting.len() < IN_FLIGHT && !stop_raised(stop) {
                    // A batch that cannot be read, like one whose rows cannot be
                    // taken, is reported after the batches before it are written.
                    let read = batches
                        .next()
                        .map(|next| prepare(next, batches.schema.as_ref()));
                    match read {
                        Err(e) => {
                            broken = Some(e);
                            more = false;
                        }
                        Ok(None) => more = false,
                        Ok(Some((_, _, Err(e)))) => {
                            broken = Some(e);
                            more = false;
                        }
                        Ok(Some((df, places, Ok(rows)))) => {
                            let rows = std::sync::Arc::new(rows);
                            let size = rows.len().div_ceil(parts_per_batch).max(1);
                            let parts = rows.len().div_ceil(size).max(1);
                            for part in 0..parts {
                                let (n, to_main, rows) = (handed, to_main.clone(), rows.clone());
                                let first = places.first_row() + part * size;
                                scope.spawn(move |_| {
                                    // Part 0's vectors take the other
                                    // parts' rows: room for the whole batch.
                                    let room = if part == 0 { rows.len() } else { size };
                                    let mine =
                                        &rows[part * size..rows.len().min((part + 1) * size)];
                                    // Once a stop is asked for, or this thread
                                    // left, the rest is skipped (the batch is
                                    // then dropped, never finished).
                                    let skip =
                                        || stop_raised(stop) || abandon.load(Ordering::Relaxed);
                                    let run = std::panic::AssertUnwindSafe(|| {
                                        evaluate_part(mine, first, room, skip, evaluate)
                                    });
                                    // (The receiver outlives every job: the
                                    // scope waits for them all before it ends.)
                                    let _ = to_main.send((n, part, std::panic::catch_unwind(run)));
                                });
                            }
                            waiting.push_back(Out {
                                df,
                                places,
                                parts: (0..parts).map(|_| None).collect(),
                                left: parts,
                            });
                            handed += 1;
                        }
                    }
                }
                if waiting.is_empty() {
                    break;
                }
                while waiting.front().is_some_and(|o| o.left > 0) {
                    let (n, part, r) = wait_for(&done)
                        .expect("every job sends once, and this thread holds a sender");
                    let r = r.unwrap_or_else(|panic| std::panic::resume_unwind(panic));
                    // Only batches still waiting have parts out.
                    let o = &mut waiting[n - finished];
                    o.parts[part] = Some(r);
                    o.left -= 1;
                }
                let Some(Out {
                    df, places, parts, ..
                }) = waiting.pop_front()
                else {
                    break;
                };
                finished += 1;
                // A batch whose rows were skipped is dropped, never finished.
                // (A stop after the last batch is caught before the output is
                // renamed.)
                if stop_raised(stop) {
                    return Err(TableError::Stopped {
                        evaluated,
                        total: None,
                    });
                }
                // The first part's vectors take the others' rows (with one
                // worker, nothing is moved).
                let mut parts = parts.into_iter().flatten();
                let (mut results, mut cells) = parts.next().unwrap_or_default();
                for (r, c) in parts {
                    results.extend(r);
                    cells.extend(c);
                }
                failed += results.iter().filter(|r| r.is_err()).count();
                evaluated += results.len();
                let left = finish(Evaluated {
                    df,
                    places,
                    results,
                    cells,
                })?;
                scope.spawn(move |_| drop(left));
            }
            match broken {
                Some(e) => Err(e),
                None => Ok(()),
            }
        };
        // Raised however the pipeline ends, an unwinding panic included,
        // before the scope waits for the parts still out.
        let _leaving = RaiseOnDrop(abandon);
        pipeline()
    })?;
    let codes = if readable {
        legend.finish();
        flush(&mut pending, &mut legend, &warnings_column, output)?;
        legend.codes()
    } else {
        Vec::new()
    };
    Ok((rows_seen, failed, codes))
}

/// A part of a batch, evaluated: every row's result, and its extra cells.
type Part = (Vec<Result<Evaluation, String>>, Vec<ExtraCells>);

/// Evaluate `rows` in order, the first being row `first` of the file, into
/// vectors with room for `room` rows; once `skip` says so, the rest are
/// skipped (an empty error each: their batch is not written).
fn evaluate_part<Row>(
    rows: &[Result<Row, String>],
    first: usize,
    room: usize,
    skip: impl Fn() -> bool,
    evaluate: &impl Fn(usize, &Row) -> Result<(Evaluation, ExtraCells), String>,
) -> Part {
    let mut results = Vec::with_capacity(room);
    let mut cells = Vec::with_capacity(room);
    for (i, r) in rows.iter().enumerate() {
        let r = if skip() {
            Err(String::new())
        } else {
            r.as_ref()
                .map_err(Clone::clone)
                .and_then(|r| evaluate(first + i, r))
        };
        match r {
            Ok((e, c)) => {
                results.push(Ok(e));
                cells.push(c);
            }
            Err(m) => {
                results.push(Err(m));
                cells.push(ExtraCells::default());
            }
        }
    }
    (results, cells)
}

/// The next message on `from`. A thread of a rayon pool (a table
/// streamed inside `ThreadPool::install`) runs the pool's jobs meanwhile:
/// blocked, it could be the very worker the jobs it waits for need. A
/// message already there comes first: a job's panic is heard before this
/// thread runs more rows that would then be thrown away.
fn wait_for<T>(from: &std::sync::mpsc::Receiver<T>) -> Result<T, std::sync::mpsc::RecvError> {
    use std::sync::mpsc::{RecvError, RecvTimeoutError, TryRecvError};
    loop {
        match from.try_recv() {
            Ok(v) => return Ok(v),
            Err(TryRecvError::Empty) => {}
            Err(TryRecvError::Disconnected) => return Err(RecvError),
        }
        match rayon::yield_now() {
            None => return from.recv(),
            Some(rayon::Yield::Executed) => {}
            // Nothing to run here: wait a little for the message, then look
            // for work again (another thread may still make some for this
            // one). 200 µs is short beside a part (thousands of rows of
            // several µs each) and long beside a wake-up.
            Some(rayon::Yield::Idle) => {
                match from.recv_timeout(std::time::Duration::from_micros(200)) {
                    Ok(v) => return Ok(v),
                    Err(RecvTimeoutError::Timeout) => {}
                    Err(RecvTimeoutError::Disconnected) => return Err(RecvError),
                }
            }
        }
    }
}

/// One batch of a table, evaluated.
struct Evaluated {
    df: DataFrame,
    places: Places,
    results: Vec<Result<Evaluation, String>>,
    cells: Vec<ExtraCells>,
}

/// A result column as a readable CSV file shows it: numbers rounded to
/// their meaningful digits ([`csv_digits`]).
fn rounded_column(c: Column) -> Column {
    let name = c.name().to_string();
    // A result renamed beside the user's own column keeps its digits.
    let key = name.strip_suffix("_model").unwrap_or(&name);
    match (csv_digits(key), c.f64()) {
        (Some(d), Ok(v)) => {
            // A setting repeated down the column (a surface at 298.15 K,
            // which lies on a decimal tie and takes the slow exact path) is
            // rounded once.
            let mut last: Option<(f64, f64)> = None;
            let mut round = |x: f64| match last {
                Some((seen, r)) if seen.to_bits() == x.to_bits() => r,
                _ => {
                    let r = rounded(x, d);
                    last = Some((x, r));
                    r
                }
            };
            Float64Chunked::from_iter_options(
                name.as_str().into(),
                v.iter().map(|x| x.map(&mut round)),
            )
            .into_column()
        }
        _ => c,
    }
}

/// Write the batches that waited for the legend, their warnings coded.
fn flush(
    pending: &mut Vec<(DataFrame, Vec<Option<Vec<String>>>)>,
    legend: &mut WarningLegend,
    column: &str,
    output: &mut Output<'_>,
) -> Result<(), TableError> {
    for (mut frame, warnings) in pending.drain(..) {
        let coded = StringChunked::from_iter_options(
            column.into(),
            warnings
                .iter()
                .map(|w| w.as_deref().map(|w| legend.code_row(w))),
        )
        .into_column();
        frame.with_column(coded).map_err(|e| TableError::Write {
            path: output.path().display().to_string(),
            message: format!("assembling the results: {e}"),
        })?;
        output.push(frame)?;
    }
    Ok(())
}

#[cfg(test)]
mod tests {
    use super::*;

    fn chunks(text: &str, max: usize) -> (Vec<u8>, Vec<(String, Vec<usize>)>) {
        let d = std::env::temp_dir().join(format!(
            "quenchwise-chunks-{}-{}",
            std::process::id(),
            text.len()
        ));
        std::fs::write(&d, text).unwrap();
        let mut b = CsvBatches::open(&d, "t.csv").unwrap();
        let header = b.header.clone();
        let mut out = Vec::new();
        while let Some((t, l)) = b.next(max, "t.csv").unwrap() {
            out.push((String::from_utf8(t[header.len()..].to_vec()).unwrap(), l));
        }
        let _ = std::fs::remove_file(&d);
        (header, out)
    }

    #[test]
    fn csv_batches_keep_whole_records_and_their_lines() {
        // A quoted cell over two lines, CRLF and lone-CR endings, an empty
        // line (a row of empty cells, as polars reads it), no final newline.
        let (h, b) = chunks("x,y\r\n1,\"a\nb\"\r2,c\n\n3,d", 2);
        assert_eq!(h, b"x,y\n");
        assert_eq!(
            b,
            vec![
                ("1,\"a\nb\"\n2,c\n".to_string(), vec![2, 4]),
                ("\n3,d\n".to_string(), vec![5, 6]),
            ]
        );
    }
}
