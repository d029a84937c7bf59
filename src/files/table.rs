//! Tables in and out (CSV or Parquet by extension, through polars): melt-card
//! and composition tables read into typed inputs, one per row, with a row's
//! problem kept as that row's error; evaluation results appended as columns.
//! Evaluating the rows is the caller's business (in parallel, in `app`).
//!
//! Cells are read strictly: a cell that should hold a number and holds
//! anything else ("O.5", "abc", "NaN", "inf", a list) is an error naming the
//! file, the row (and the line of a CSV file) and the column, never a
//! default. An *empty* cell means "not given"; each reader says what that
//! means for its columns (an empty oxide cell of a composition is 0, as in a
//! spreadsheet). CSV files may end their lines with LF, CRLF or a lone CR.

use super::melt_card::{CrystalValues, MeltValues};
use super::source::DataError;
use crate::assess::Evaluation;
use crate::composition::Oxide;
use crate::error::{Diagnostic, ErrorKind};
use crate::kinetics::{DrivingForce, KineticOverrides};
use crate::properties::GrowthMode;
use crate::report::records::column_safe;
use polars::prelude::*;
use std::path::Path;

/// Why a table could not be read or written as a whole.
#[derive(Debug, thiserror::Error)]
pub enum TableError {
    #[error("{path}: {message}")]
    Read { path: String, message: String },
    #[error("{path}: missing column '{column}'")]
    MissingColumn {
        path: String,
        column: String,
        found: String,
    },
    #[error("{path}: no column names an oxide")]
    NoOxideColumn { path: String, found: String },
    #[error("{path}: unknown column '{column}'")]
    UnknownColumn {
        path: String,
        column: String,
        allowed: String,
    },
    #[error("{path}: the columns '{first}' and '{second}' both name {what}")]
    DuplicateColumn {
        path: String,
        first: String,
        second: String,
        what: String,
    },
    #[error("{path}: the table has no rows")]
    NoRows { path: String },
    #[error("{}", cells_text(problems))]
    Cells { problems: Vec<String> },
    #[error("{path}: column '{column}' ({dtype}) cannot be written to {format}: {message}")]
    Unwritable {
        path: String,
        column: String,
        dtype: String,
        format: &'static str,
        message: String,
    },
    #[error("{path}: {message}")]
    Write { path: String, message: String },
    #[error("{}", problems.join("\n"))]
    Rows { problems: Vec<String> },
    #[error(transparent)]
    Data(#[from] DataError),
    #[error("{path}: unsupported extension; use .csv or .parquet")]
    Extension { path: String },
    /// Stopped on request (Ctrl-C, SIGTERM) after the batches of
    /// `evaluated` rows of `total` (None: during the first pass); the
    /// output is not written.
    #[error("{}", stopped_text(*evaluated, *total))]
    Stopped {
        evaluated: usize,
        total: Option<usize>,
    },
}

/// At most this many bad cells are listed; the count of the rest follows.
const CELLS_SHOWN: usize = 20;

fn cells_text(problems: &[String]) -> String {
    let mut s = problems
        .iter()
        .take(CELLS_SHOWN)
        .cloned()
        .collect::<Vec<_>>()
        .join("\n");
    if problems.len() > CELLS_SHOWN {
        s.push_str(&format!(
            "\n... and {} more bad cells",
            problems.len() - CELLS_SHOWN
        ));
    }
    s
}

/// What [`TableError::Stopped`] says.
fn stopped_text(evaluated: usize, total: Option<usize>) -> String {
    match total {
        Some(t) => format!("stopped at your request after {evaluated} of {t} rows"),
        None => "stopped at your request while the table was checked, before any row was evaluated"
            .into(),
    }
}

impl Diagnostic for TableError {
    fn hint(&self) -> Option<String> {
        match self {
            TableError::MissingColumn { found, .. } => {
                Some(format!("the columns found are: {found}"))
            }
            TableError::NoOxideColumn { found, .. } => Some(format!(
                "name one column per oxide, e.g. SiO2, Na2O (known oxides are {}); the columns found are: {found}",
                Oxide::known_list()
            )),
            TableError::UnknownColumn { allowed, .. } => {
                Some(format!("allowed columns are {allowed}"))
            }
            TableError::DuplicateColumn { .. } => {
                Some("oxide names ignore case: keep one of the two columns".into())
            }
            TableError::Cells { .. } => Some(
                "write plain numbers with a decimal point (e.g. 0.5, 1e-3); leave a cell empty where there is no value"
                    .into(),
            ),
            TableError::Unwritable { .. } => Some(
                "write the output as .parquet, or remove the column from the input table".into(),
            ),
            TableError::Data(e) => e.hint(),
            _ => None,
        }
    }

    fn kind(&self) -> ErrorKind {
        match self {
            TableError::Write { .. } => ErrorKind::Internal,
            _ => ErrorKind::BadInput,
        }
    }
}

enum Kind {
    Csv,
    Parquet,
}

fn kind(path: &Path) -> Option<Kind> {
    match path
        .extension()
        .and_then(|e| e.to_str())
        .map(|e| e.to_ascii_lowercase())
    {
        Some(e) if e == "csv" => Some(Kind::Csv),
        Some(e) if e == "parquet" || e == "pq" => Some(Kind::Parquet),
        _ => None,
    }
}

/// Where the rows of a table sit, for messages: the file's name and, for a
/// CSV file, the line each row starts on.
#[derive(Debug, Clone)]
pub struct Places {
    path: String,
    lines: Option<Vec<usize>>,
    /// Rows before the first one here (a batch of a streamed table).
    first_row: usize,
}

impl Places {
    /// Rows of a file without line numbers (Parquet).
    pub fn rows_only(path: impl Into<String>) -> Self {
        Places {
            path: path.into(),
            lines: None,
            first_row: 0,
        }
    }

    /// Rows of a batch that starts after `first_row` rows of the file, with
    /// the line each starts on where known (CSV).
    pub fn batch(path: impl Into<String>, first_row: usize, lines: Option<Vec<usize>>) -> Self {
        Places {
            path: path.into(),
            lines,
            first_row,
        }
    }

    /// Rows of the file before the first row here.
    pub fn first_row(&self) -> usize {
        self.first_row
    }

    /// The file's name as given.
    pub fn path(&self) -> &str {
        &self.path
    }

    /// The line row `i` (0-based, after the header; of this batch) starts
    /// on, for a CSV file.
    pub fn line(&self, i: usize) -> Option<usize> {
        self.lines.as_ref().and_then(|l| l.get(i).copied())
    }

    /// "file.csv:5: row 4" (CSV) or "file.parquet: row 4"; rows count from
    /// 1 at the file's first row.
    pub fn row(&self, i: usize) -> String {
        let n = self.first_row + i + 1;
        match self.line(i) {
            Some(line) => format!("{}:{line}: row {n}", self.path),
            None => format!("{}: row {n}", self.path),
        }
    }

    /// A cell's place: "file.csv:5: row 4, column 'SiO2'".
    pub fn cell(&self, i: usize, column: &str) -> String {
        format!("{}, column '{column}'", self.row(i))
    }
}

/// The text of a CSV file with every line ending made LF (a file saved with
/// lone CR line endings, as old spreadsheet programs do, reads correctly).
fn normalise_line_endings(bytes: Vec<u8>) -> Vec<u8> {
    if !bytes.contains(&b'\r') {
        return bytes;
    }
    let mut out = Vec::with_capacity(bytes.len());
    let mut i = 0;
    while i < bytes.len() {
        match bytes[i] {
            b'\r' if bytes.get(i + 1) == Some(&b'\n') => {}
            b'\r' => out.push(b'\n'),
            b => out.push(b),
        }
        i += 1;
    }
    out
}

/// The line (1-based) each data record of a CSV text starts on: records
/// are split at LF outside double quotes; the first record is the header;
/// lines holding nothing are not records.
fn record_lines(bytes: &[u8]) -> Vec<usize> {
    let mut starts = Vec::new();
    let mut line = 1;
    let mut in_quotes = false;
    let mut at_start = true;
    let mut record_line = 1;
    let mut record_empty = true;
    for &b in bytes {
        if at_start {
            record_line = line;
            record_empty = true;
            at_start = false;
        }
        match b {
            b'"' => {
                in_quotes = !in_quotes;
                record_empty = false;
            }
            b'\n' => {
                line += 1;
                if !in_quotes {
                    if !record_empty {
                        starts.push(record_line);
                    }
                    at_start = true;
                }
            }
            _ => record_empty = false,
        }
    }
    if !at_start && !record_empty {
        starts.push(record_line);
    }
    // The first record is the header.
    if !starts.is_empty() {
        starts.remove(0);
    }
    starts
}

/// The first record with more comma-separated cells than the header, as
/// (line, cells, header cells): commas inside double quotes do not count.
pub(crate) fn longer_record(bytes: &[u8]) -> Option<(usize, usize, usize)> {
    let mut line = 1;
    let mut record_line = 1;
    let mut cells = 1;
    let mut empty = true;
    let mut in_quotes = false;
    let mut head: Option<usize> = None;
    for &b in bytes.iter().chain(std::iter::once(&b'\n')) {
        match b {
            b'"' => {
                in_quotes = !in_quotes;
                empty = false;
            }
            b',' if !in_quotes => {
                cells += 1;
                empty = false;
            }
            b'\n' => {
                line += 1;
                if in_quotes {
                    continue;
                }
                if !empty {
                    match head {
                        None => head = Some(cells),
                        Some(h) if cells > h => return Some((record_line, cells, h)),
                        Some(_) => {}
                    }
                }
                record_line = line;
                cells = 1;
                empty = true;
            }
            _ => empty = false,
        }
    }
    None
}

/// Refuse a header written with another separator: a spreadsheet whose
/// decimal mark is a comma saves "CSV" with `;` between cells, and some
/// programs write tabs. Polars would read such a header as one column and
/// every row as one cell, and the error would be about something else. A
/// header holding a comma, or neither, passes.
///
/// # Errors
/// The header holds no comma but semicolons or tabs; the message says so
/// and how to save the table.
pub(crate) fn check_separator(header: &[u8], label: &str) -> Result<(), TableError> {
    if header.contains(&b',') {
        return Ok(());
    }
    let count = |c: u8| header.iter().filter(|&&b| b == c).count();
    let (name, n) = [("semicolon", count(b';')), ("tab", count(b'\t'))]
        .into_iter()
        .max_by_key(|&(_, n)| n)
        .unwrap_or(("", 0));
    if n == 0 {
        return Ok(());
    }
    Err(TableError::Read {
        path: label.to_string(),
        message: format!(
            "the header holds no comma but {n} {name}{}: quenchwise reads \
             comma-separated tables with '.' as the decimal mark (save the \
             table as CSV with ',' between cells and '.' in numbers)",
            if n == 1 { "" } else { "s" }
        ),
    })
}

/// Read CSV text (already in memory) into a data frame.
fn csv_frame(bytes: Vec<u8>, label: &str) -> Result<(DataFrame, Places), TableError> {
    let bytes = normalise_line_endings(bytes);
    let header = bytes
        .split(|&b| b == b'\n')
        .find(|l| !l.is_empty())
        .unwrap_or_default();
    check_separator(header, label)?;
    let lines = record_lines(&bytes);
    let bytes_for_errors = bytes.clone();
    let df = CsvReadOptions::default()
        .with_has_header(true)
        .with_infer_schema_length(None)
        .into_reader_with_file_handle(std::io::Cursor::new(bytes))
        .finish()
        .map_err(|e| TableError::Read {
            path: label.to_string(),
            message: match longer_record(&bytes_for_errors) {
                Some((line, n, head)) => format!(
                    "line {line} has {n} cells but the header names {head} columns \
                     (a comma inside a cell needs the cell in double quotes)"
                ),
                None => e.to_string(),
            },
        })?;
    // Where the scan agrees with the reader, rows get lines; otherwise (a
    // layout the scan does not follow) they keep their row numbers only.
    let lines = (lines.len() == df.height()).then_some(lines);
    Ok((df, Places::batch(label, 0, lines)))
}

/// Read CSV text held in memory (e.g. an embedded demo table), naming it `label`.
///
/// # Errors
/// Malformed CSV.
pub fn read_csv_text(text: &str, label: &str) -> Result<(DataFrame, Places), TableError> {
    csv_frame(text.as_bytes().to_vec(), label)
}

/// Read a CSV or Parquet file into a data frame, with where its rows sit.
///
/// # Errors
/// An unknown extension, an unreadable or malformed file.
pub fn read_table(path: &Path) -> Result<(DataFrame, Places), TableError> {
    let p = path.display().to_string();
    let k = kind(path).ok_or_else(|| TableError::Extension { path: p.clone() })?;
    let bytes = std::fs::read(path).map_err(|e| TableError::Read {
        path: p.clone(),
        message: e.to_string(),
    })?;
    match k {
        Kind::Csv => csv_frame(bytes, &p),
        Kind::Parquet => {
            let df = ParquetReader::new(std::io::Cursor::new(bytes))
                .finish()
                .map_err(|e| TableError::Read {
                    path: p.clone(),
                    message: e.to_string(),
                })?;
            Ok((df, Places::rows_only(p)))
        }
    }
}

/// Read a CSV or Parquet file into a data frame.
///
/// # Errors
/// An unknown extension, an unreadable or malformed file.
pub fn read_frame(path: &Path) -> Result<DataFrame, TableError> {
    read_table(path).map(|(df, _)| df)
}

/// Write a data frame as CSV or Parquet, atomically (temp file, then rename).
///
/// # Errors
/// An unknown extension or a failed write.
pub fn write_frame(path: &Path, df: &mut DataFrame) -> Result<(), TableError> {
    let p = path.display().to_string();
    let k = kind(path).ok_or_else(|| TableError::Extension { path: p.clone() })?;
    let tmp = path.with_extension(format!(
        "{}.partial",
        path.extension().and_then(|e| e.to_str()).unwrap_or("out")
    ));
    let werr = |m: String| TableError::Write {
        path: p.clone(),
        message: m,
    };
    {
        let mut f = std::fs::File::create(&tmp).map_err(|e| werr(e.to_string()))?;
        match k {
            Kind::Csv => CsvWriter::new(&mut f)
                .finish(df)
                .map_err(|e| werr(e.to_string()))?,
            Kind::Parquet => {
                ParquetWriter::new(&mut f)
                    .finish(df)
                    .map_err(|e| werr(e.to_string()))?;
            }
        }
        f.sync_all().map_err(|e| werr(e.to_string()))?;
    }
    std::fs::rename(&tmp, path).map_err(|e| werr(e.to_string()))
}

/// Check, before any work, that every column of `df` can be written to
/// `path` in its format (a list or binary column cannot go into a CSV file).
///
/// # Errors
/// An unknown extension; the first column the format cannot hold, named.
pub fn check_writable(df: &DataFrame, path: &Path) -> Result<(), TableError> {
    let p = path.display().to_string();
    let k = kind(path).ok_or_else(|| TableError::Extension { path: p.clone() })?;
    for c in df.columns() {
        // One row (or none) of the column alone, written to memory.
        let mut one = DataFrame::new(1.min(c.len()), vec![c.head(Some(1))]).map_err(|e| {
            TableError::Write {
                path: p.clone(),
                message: e.to_string(),
            }
        })?;
        let mut sink = Vec::new();
        let (format, res) = match k {
            Kind::Csv => ("CSV", CsvWriter::new(&mut sink).finish(&mut one)),
            Kind::Parquet => (
                "Parquet",
                ParquetWriter::new(&mut sink).finish(&mut one).map(|_| ()),
            ),
        };
        if let Err(e) = res {
            return Err(TableError::Unwritable {
                path: p,
                column: c.name().to_string(),
                dtype: c.dtype().to_string(),
                format,
                message: e.to_string(),
            });
        }
    }
    Ok(())
}

/// Read one cell's text as a number: empty (or only spaces) is `None`; a
/// finite number is `Some`; anything else is refused with what was found.
///
/// # Errors
/// Text that is not a number, or NaN or an infinity.
pub fn parse_number_cell(text: &str) -> Result<Option<f64>, String> {
    let t = text.trim();
    if t.is_empty() {
        return Ok(None);
    }
    match t.parse::<f64>() {
        Ok(v) if v.is_finite() => Ok(Some(v)),
        Ok(_) => Err(format!("\"{t}\" is not a finite number")),
        Err(_) => {
            let comma = t.replace(',', ".").parse::<f64>().is_ok_and(f64::is_finite);
            Err(format!(
                "\"{t}\" is not a number{}",
                if comma {
                    " (use a decimal point, not a comma)"
                } else {
                    ""
                }
            ))
        }
    }
}

/// Describe a column's type for an error.
fn dtype_words(dt: &DataType) -> String {
    match dt {
        DataType::List(_) => "lists".into(),
        DataType::Binary | DataType::BinaryOffset => "binary data".into(),
        DataType::Boolean => "true/false values".into(),
        other => format!("values of type {other}"),
    }
}

/// The cells of column `name` as numbers, `None` where empty. `Ok(None)`
/// when the table has no such column. Every cell that is not a finite
/// number is added to `problems`, with its place.
pub(crate) fn number_column(
    df: &DataFrame,
    places: &Places,
    name: &str,
    problems: &mut Vec<String>,
) -> Option<Vec<Option<f64>>> {
    let c = df.column(name).ok()?;
    let n = df.height();
    let mut out = vec![None; n];
    let dt = c.dtype().clone();
    if dt.is_primitive_numeric() {
        let Ok(f) = c.cast(&DataType::Float64) else {
            problems.push(format!(
                "{}: column '{name}' holds {} that cannot be read as numbers",
                places.path(),
                dtype_words(&dt)
            ));
            return Some(out);
        };
        let Ok(ca) = f.f64() else {
            return Some(out);
        };
        for (i, v) in ca.iter().enumerate().take(n) {
            match v {
                Some(x) if x.is_finite() => out[i] = Some(x),
                Some(x) => problems.push(format!(
                    "{}: {x} is not a finite number",
                    places.cell(i, name)
                )),
                None => {}
            }
        }
    } else if dt == DataType::String {
        let Ok(ca) = c.str() else {
            return Some(out);
        };
        for (i, v) in ca.iter().enumerate().take(n) {
            match v.map(parse_number_cell) {
                Some(Ok(x)) => out[i] = x,
                Some(Err(why)) => problems.push(format!("{}: {why}", places.cell(i, name))),
                None => {}
            }
        }
    } else if dt != DataType::Null {
        problems.push(format!(
            "{}: column '{name}' holds {}, not numbers",
            places.path(),
            dtype_words(&dt)
        ));
    }
    Some(out)
}

/// The cells of column `name` as texts, `None` where empty. `Ok(None)` when
/// the table has no such column. A column of lists or binary data is added
/// to `problems`.
pub(crate) fn text_column(
    df: &DataFrame,
    places: &Places,
    name: &str,
    problems: &mut Vec<String>,
) -> Option<Vec<Option<String>>> {
    let c = df.column(name).ok()?;
    let n = df.height();
    let dt = c.dtype().clone();
    let readable = dt == DataType::String
        || dt == DataType::Null
        || dt == DataType::Boolean
        || dt.is_primitive_numeric();
    let cast = readable
        .then(|| c.cast(&DataType::String).ok())
        .flatten()
        .and_then(|s| s.str().ok().cloned());
    match cast {
        Some(ca) => {
            let mut v: Vec<Option<String>> = ca.iter().map(|s| s.map(str::to_string)).collect();
            v.resize(n, None);
            Some(v)
        }
        None => {
            problems.push(format!(
                "{}: column '{name}' holds {}, not text",
                places.path(),
                dtype_words(&dt)
            ));
            Some(vec![None; n])
        }
    }
}

/// The error for a missing column, listing the columns that are there.
pub(crate) fn missing(df: &DataFrame, path: &str, column: &str) -> TableError {
    TableError::MissingColumn {
        path: path.to_string(),
        column: column.to_string(),
        found: df
            .get_column_names()
            .iter()
            .map(|s| s.as_str())
            .collect::<Vec<_>>()
            .join(", "),
    }
}

/// A table as read: the frame (its columns pass through to the output) and
/// one input per row, or why that row cannot be used.
pub struct Table<T> {
    pub frame: DataFrame,
    pub rows: Vec<Result<T, String>>,
    /// Where each row sits in the file.
    pub places: Places,
}

/// Refuse a table without rows (e.g. only a header).
pub(crate) fn need_rows(df: &DataFrame, places: &Places) -> Result<(), TableError> {
    if df.height() == 0 {
        Err(TableError::NoRows {
            path: places.path().to_string(),
        })
    } else {
        Ok(())
    }
}

/// The bad cells found, as an error.
pub(crate) fn cells(problems: Vec<String>) -> Result<(), TableError> {
    if problems.is_empty() {
        Ok(())
    } else {
        Err(TableError::Cells { problems })
    }
}

/// Read a table of melt cards, one per row; columns are named like the
/// card's keys. An empty cell of a required column makes that row's error;
/// an empty optional cell takes the default (as if the key were left out).
///
/// # Errors
/// The file cannot be read, has no rows, a required column is missing, or a
/// cell does not hold what its column needs (every such cell is listed).
/// Rows whose values the kinetics refuse are not errors: each keeps its reason.
pub fn read_melt_table(path: &Path) -> Result<Table<MeltValues>, TableError> {
    let (df, places) = read_table(path)?;
    let mut bad = Vec::new();
    let rows = melt_rows(&df, &places, &mut bad)?;
    cells(bad)?;
    Ok(Table {
        frame: df,
        rows,
        places,
    })
}

/// The melt cards of a frame (a whole table, or one batch of a streamed
/// one), one per row. Every cell that does not hold what its column needs
/// is added to `bad` with its place.
///
/// # Errors
/// The frame has no rows, or a required column is missing.
pub(crate) fn melt_rows(
    df: &DataFrame,
    places: &Places,
    bad: &mut Vec<String>,
) -> Result<Vec<Result<MeltValues, String>>, TableError> {
    need_rows(df, places)?;
    let n = df.height();
    let p = places.path().to_string();
    let require = |name: &str, bad: &mut Vec<String>| {
        number_column(df, places, name, bad).ok_or_else(|| missing(df, &p, name))
    };
    let a = require("a", bad)?;
    let b = require("b_k", bad)?;
    let c = require("c_k", bad)?;
    // The liquidus in K, or in °C as a melt-card file may give it.
    let tl = match number_column(df, places, "liquidus_k", bad) {
        Some(v) => v,
        None => number_column(df, places, "liquidus_c", bad)
            .map(|v| {
                v.into_iter()
                    .map(|c| c.map(|c| crate::units::Celsius(c).to_kelvin().0))
                    .collect()
            })
            .ok_or_else(|| missing(df, &p, "liquidus_k (or liquidus_c)"))?,
    };
    let dh = require("enthalpy_of_fusion_j_per_mol", bad)?;
    let vm = require("molar_volume_m3_per_mol", bad)?;
    let alpha = number_column(df, places, "turnbull_alpha", bad);
    let sigma = number_column(df, places, "interface_energy_j_per_m2", bad);
    if alpha.is_none() && sigma.is_none() {
        return Err(missing(
            df,
            &p,
            "turnbull_alpha (or interface_energy_j_per_m2)",
        ));
    }
    let growth = text_column(df, places, "growth", bad).ok_or_else(|| missing(df, &p, "growth"))?;
    let xc = number_column(df, places, "detectable_fraction", bad);
    let df_kind = text_column(df, places, "driving_force", bad);
    let nh = number_column(df, places, "heterogeneous_nuclei_per_m3", bad);
    let theta = number_column(df, places, "contact_angle_deg", bad);
    let thick = number_column(df, places, "sample_thickness_m", bad);
    let dcp = number_column(df, places, "heat_capacity_change_j_per_mol_k", bad);
    let pick = |v: &Option<Vec<Option<f64>>>, i: usize| {
        v.as_ref().and_then(|v| v.get(i).copied().flatten())
    };
    let rows = (0..n)
        .map(|i| -> Result<MeltValues, String> {
            let need = |v: &Vec<Option<f64>>, name: &str| {
                v.get(i)
                    .copied()
                    .flatten()
                    .ok_or_else(|| format!("{name} is empty"))
            };
            let growth = match growth.get(i).cloned().flatten().as_deref().map(str::trim) {
                Some("normal") => GrowthMode::Normal,
                Some("screw") => GrowthMode::Screw,
                other => {
                    return Err(format!(
                        "growth must be \"normal\" or \"screw\", got {:?}",
                        other.unwrap_or("")
                    ))
                }
            };
            let driving_force = match df_kind
                .as_ref()
                .and_then(|v| v.get(i).cloned().flatten())
                .as_deref()
                .map(str::trim)
            {
                None | Some("") => None,
                Some("turnbull") => Some(DrivingForce::Turnbull),
                Some("hoffman") => Some(DrivingForce::Hoffman),
                Some(o) => {
                    return Err(format!(
                        "driving_force must be \"turnbull\" or \"hoffman\", got \"{o}\""
                    ))
                }
            };
            Ok(MeltValues {
                a: need(&a, "a")?,
                b_k: need(&b, "b_k")?,
                c_k: need(&c, "c_k")?,
                crystals: vec![CrystalValues {
                    name: "crystal".into(),
                    liquidus_k: need(&tl, "liquidus_k")?,
                    enthalpy_of_fusion_j_per_mol: need(&dh, "enthalpy_of_fusion_j_per_mol")?,
                    molar_volume_m3_per_mol: need(&vm, "molar_volume_m3_per_mol")?,
                    turnbull_alpha: pick(&alpha, i),
                    interface_energy_j_per_m2: pick(&sigma, i),
                    growth,
                    heat_capacity_change_j_per_mol_k: pick(&dcp, i),
                    melting_point_k: None,
                    heterogeneous_nuclei_per_m3: None,
                }],
                kinetics: KineticOverrides {
                    detectable_fraction: pick(&xc, i),
                    driving_force,
                    heterogeneous_nuclei_per_m3: pick(&nh, i),
                    contact_angle_deg: pick(&theta, i),
                    sample_thickness_m: pick(&thick, i),
                    transport: None,
                    decoupling_ratio: None,
                },
            })
        })
        .collect();
    Ok(rows)
}

/// Each row of a frame read as an input, or why it cannot be one.
pub type Rows<T> = Vec<Result<T, String>>;

/// One composition as (oxide, amount) pairs, in the table's basis.
pub type OxideAmounts = Vec<(Oxide, f64)>;

/// A composition table: one column per oxide (mol% or wt%, read as given),
/// other columns passed through. An empty oxide cell is 0 (as in a
/// spreadsheet); a row whose oxide cells are all empty is that row's error.
/// Returns the table and the columns that were not read as oxides.
///
/// # Errors
/// The file cannot be read, has no rows or no oxide column, two columns name
/// one oxide (`MgO` and `MGO`), or an oxide cell is not a number (every such
/// cell is listed with its row, line and column).
pub fn read_composition_table(
    path: &Path,
) -> Result<(Table<OxideAmounts>, Vec<String>), TableError> {
    let (df, places) = read_table(path)?;
    let mut bad = Vec::new();
    let (rows, other) = composition_rows(&df, &places, &mut bad)?;
    cells(bad)?;
    Ok((
        Table {
            frame: df,
            rows,
            places,
        },
        other,
    ))
}

/// The compositions of a frame (a whole table, or one batch of a streamed
/// one), one per row, and the columns not read as oxides. Every oxide cell
/// that is not a number is added to `bad` with its place.
///
/// # Errors
/// No oxide column, two columns naming one oxide, or no rows.
pub(crate) fn composition_rows(
    df: &DataFrame,
    places: &Places,
    bad: &mut Vec<String>,
) -> Result<(Rows<OxideAmounts>, Vec<String>), TableError> {
    let mut oxide_cols: Vec<(Oxide, String, Vec<Option<f64>>)> = Vec::new();
    let mut other = Vec::new();
    for name in df.get_column_names() {
        match name.as_str().parse::<Oxide>() {
            Ok(o) => {
                if let Some((_, first, _)) = oxide_cols.iter().find(|(q, ..)| *q == o) {
                    return Err(TableError::DuplicateColumn {
                        path: places.path().to_string(),
                        first: first.clone(),
                        second: name.to_string(),
                        what: o.formula().to_string(),
                    });
                }
                let v = number_column(df, places, name.as_str(), bad).unwrap_or_default();
                oxide_cols.push((o, name.to_string(), v));
            }
            Err(_) => {
                // The CSV reader renames a repeated header name to
                // `NAME_duplicated_K`: a repeated oxide is refused, not
                // passed through.
                let repeated = name
                    .as_str()
                    .rsplit_once("_duplicated_")
                    .filter(|(_, k)| k.parse::<usize>().is_ok())
                    .and_then(|(head, _)| head.parse::<Oxide>().ok().map(|o| (head, o)));
                if let Some((head, o)) = repeated {
                    return Err(TableError::DuplicateColumn {
                        path: places.path().to_string(),
                        first: head.to_string(),
                        second: head.to_string(),
                        what: o.formula().to_string(),
                    });
                }
                other.push(name.to_string())
            }
        }
    }
    if oxide_cols.is_empty() {
        return Err(TableError::NoOxideColumn {
            path: places.path().to_string(),
            found: other.join(", "),
        });
    }
    need_rows(df, places)?;
    let rows = (0..df.height())
        .map(|i| {
            if oxide_cols
                .iter()
                .all(|(_, _, v)| v.get(i).copied().flatten().is_none())
            {
                return Err("every oxide cell of this row is empty".to_string());
            }
            Ok(oxide_cols
                .iter()
                .map(|(o, _, v)| (*o, v.get(i).copied().flatten().unwrap_or(0.0)))
                .collect())
        })
        .collect();
    Ok((rows, other))
}

/// Per-phase maps ("critical_rate_by_phase_k_per_s": {"devitrite": ...})
/// become flat columns ("critical_rate_devitrite_k_per_s").
fn flatten_by_phase(
    m: serde_json::Map<String, serde_json::Value>,
) -> serde_json::Map<String, serde_json::Value> {
    let mut out = serde_json::Map::new();
    for (k, v) in m {
        match v {
            serde_json::Value::Object(inner) if k.contains("_by_phase") => {
                for (phase, x) in inner {
                    out.insert(k.replace("by_phase", &column_safe(&phase)), x);
                }
            }
            other => {
                out.insert(k, other);
            }
        }
    }
    out
}

/// The input frame with the evaluation columns and an `error` column
/// appended, every column found through each row's JSON form: the
/// whole-table path, kept as the independent reference the streamed tables
/// (`table_stream`, typed columns) are tested against. Its columns are those
/// some row has, so a column no row fills is missing.
///
/// # Errors
/// Polars refuses the columns. A result named like an input column (a melt
/// card's `liquidus_k`) takes that column's place with the value in force,
/// so no column is written twice.
pub fn append_results(
    mut df: DataFrame,
    results: &[Result<Evaluation, String>],
) -> PolarsResult<DataFrame> {
    let rows: Vec<Option<serde_json::Map<String, serde_json::Value>>> = results
        .iter()
        .map(|r| match r {
            Ok(e) => match serde_json::to_value(e) {
                Ok(serde_json::Value::Object(m)) => Some(flatten_by_phase(m)),
                _ => None,
            },
            Err(_) => None,
        })
        .collect();
    let mut keys: Vec<String> = Vec::new();
    for m in rows.iter().flatten() {
        for k in m.keys() {
            if k != "composition_mol_pct" && !keys.contains(k) {
                keys.push(k.clone());
            }
        }
    }
    for k in keys {
        let name = k.clone();
        let vals: Vec<Option<&serde_json::Value>> = rows
            .iter()
            .map(|m| m.as_ref().and_then(|m| m.get(&k)))
            .collect();
        let is_num = vals.iter().flatten().all(|v| v.is_number());
        let is_bool = vals.iter().flatten().all(|v| v.is_boolean());
        let col = if is_num {
            Column::new(
                name.into(),
                vals.iter()
                    .map(|v| v.and_then(|v| v.as_f64()))
                    .collect::<Vec<_>>(),
            )
        } else if is_bool {
            Column::new(
                name.into(),
                vals.iter()
                    .map(|v| v.and_then(|v| v.as_bool()))
                    .collect::<Vec<_>>(),
            )
        } else {
            Column::new(
                name.into(),
                vals.iter()
                    .map(|v| {
                        v.map(|v| match v {
                            serde_json::Value::String(s) => s.clone(),
                            serde_json::Value::Array(a) => a
                                .iter()
                                .map(|x| {
                                    x.as_str()
                                        .map(str::to_string)
                                        .unwrap_or_else(|| x.to_string())
                                })
                                .collect::<Vec<_>>()
                                .join("; "),
                            other => other.to_string(),
                        })
                    })
                    .collect::<Vec<_>>(),
            )
        };
        df.with_column(col)?;
    }
    let errors: Vec<Option<String>> = results.iter().map(|r| r.as_ref().err().cloned()).collect();
    df.with_column(Column::new("error".into(), errors))?;
    Ok(df)
}
