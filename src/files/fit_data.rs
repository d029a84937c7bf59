//! Measurement tables for `quenchwise fit` (CSV or Parquet, through polars):
//! viscosity points, liquidus temperatures with their primary phase, and
//! kinetic measurements, each row with its composition (one column per oxide,
//! mol% or wt%). Every cell is checked: a missing column, an empty cell, a
//! cell that is not a number (never read as 0), a non-finite value, a
//! composition that does not sum to 100, an unknown phase. All bad cells of a
//! file are reported at once, each with its row, line and column.

use super::table::{missing, read_frame, TableError};
use crate::composition::{Basis, Composition, Oxide};
use crate::error::Diagnostic;
use crate::kinetics::fit::Measurement;
use crate::properties::fit::{LiquidusPoint, ViscosityPoint};
use crate::properties::ModelSet;
use crate::units::{Celsius, Kelvin, KelvinPerSecond, Log10PaS};
use polars::prelude::*;
use sha2::{Digest, Sha256};
use std::path::Path;

/// Bad cells shown before "... and N more".
const SHOWN_PROBLEMS: usize = 25;

/// Why a measurement table was refused.
#[derive(Debug, thiserror::Error)]
pub enum FitDataError {
    #[error(transparent)]
    Table(#[from] TableError),
    #[error("{}", cells_message(path, problems))]
    Cells {
        path: String,
        problems: Vec<String>,
        hint: String,
    },
}

fn cells_message(path: &str, problems: &[String]) -> String {
    let mut s = String::new();
    for (k, p) in problems.iter().take(SHOWN_PROBLEMS).enumerate() {
        if k > 0 {
            s.push('\n');
        }
        s.push_str(&format!("{path}: {p}"));
    }
    if problems.len() > SHOWN_PROBLEMS {
        s.push_str(&format!(
            "\n{path}: ... and {} more",
            problems.len() - SHOWN_PROBLEMS
        ));
    }
    s
}

impl Diagnostic for FitDataError {
    fn hint(&self) -> Option<String> {
        match self {
            FitDataError::Table(e) => e.hint(),
            FitDataError::Cells { hint, .. } => Some(hint.clone()),
        }
    }
}

/// A table being read: its frame, its name, and the problems found so far.
struct Reader {
    path: String,
    df: DataFrame,
    csv: bool,
    problems: Vec<String>,
}

impl Reader {
    fn open(path: &Path) -> Result<Reader, FitDataError> {
        let df = read_frame(path)?;
        if df.height() == 0 {
            return Err(FitDataError::Cells {
                path: path.display().to_string(),
                problems: vec!["no data rows (only a header, or an empty file)".into()],
                hint: "a measurement table has a header line and one row per measurement".into(),
            });
        }
        let csv = path
            .extension()
            .and_then(|e| e.to_str())
            .is_some_and(|e| e.eq_ignore_ascii_case("csv"));
        Ok(Reader {
            path: path.display().to_string(),
            df,
            csv,
            problems: Vec::new(),
        })
    }

    fn rows(&self) -> usize {
        self.df.height()
    }

    /// "row 7 (line 8), column 'x'": data rows count from 1; a CSV's header is line 1.
    fn at(&self, i: usize, column: &str) -> String {
        if self.csv {
            format!("row {} (line {}), column '{column}'", i + 1, i + 2)
        } else {
            format!("row {}, column '{column}'", i + 1)
        }
    }

    fn has(&self, name: &str) -> bool {
        self.df.column(name).is_ok()
    }

    fn columns(&self) -> Vec<String> {
        self.df
            .get_column_names()
            .iter()
            .map(|s| s.to_string())
            .collect()
    }

    /// One of two alternative columns (e.g. temperature_k or temperature_c).
    fn one_of<'a>(&self, a: &'a str, b: &'a str) -> Result<Option<&'a str>, FitDataError> {
        match (self.has(a), self.has(b)) {
            (true, true) => Err(FitDataError::Cells {
                path: self.path.clone(),
                problems: vec![format!("both '{a}' and '{b}' are given: give one")],
                hint: "keep one unit per quantity".into(),
            }),
            (true, false) => Ok(Some(a)),
            (false, true) => Ok(Some(b)),
            (false, false) => Ok(None),
        }
    }

    fn missing(&self, column: &str) -> FitDataError {
        FitDataError::Table(missing(&self.df, &self.path, column))
    }

    /// A column read cell by cell as numbers: None where empty; a cell that
    /// is not a number or not finite is recorded as a problem (and None).
    fn numbers(&mut self, name: &str) -> Vec<Option<f64>> {
        let n = self.rows();
        let Ok(col) = self.df.column(name) else {
            return vec![None; n];
        };
        let col = col.clone();
        let mut out = vec![None; n];
        match col.dtype() {
            DataType::String => {
                let ca = col.str().expect("a string column").clone();
                for (i, v) in ca.iter().enumerate() {
                    let Some(text) = v.map(str::trim).filter(|t| !t.is_empty()) else {
                        continue;
                    };
                    match text.parse::<f64>() {
                        Ok(x) if x.is_finite() => out[i] = Some(x),
                        Ok(x) => self.problems.push(format!(
                            "{}: expected a finite number, got {x}",
                            self.at(i, name)
                        )),
                        Err(_) => self
                            .problems
                            .push(format!("{}: '{text}' is not a number", self.at(i, name))),
                    }
                }
            }
            dt if dt.is_primitive_numeric() => {
                let ca = col
                    .cast(&DataType::Float64)
                    .expect("numbers cast to f64")
                    .f64()
                    .expect("a float column")
                    .clone();
                for (i, v) in ca.iter().enumerate() {
                    match v {
                        Some(x) if x.is_finite() => out[i] = Some(x),
                        Some(x) => self.problems.push(format!(
                            "{}: expected a finite number, got {x}",
                            self.at(i, name)
                        )),
                        None => {}
                    }
                }
            }
            DataType::Null => {}
            dt => self
                .problems
                .push(format!("column '{name}' holds {dt} values, not numbers")),
        }
        out
    }

    /// A column that must have a number in every row.
    fn required(&mut self, name: &str, what: &str) -> Vec<f64> {
        let v = self.numbers(name);
        v.iter()
            .enumerate()
            .map(|(i, x)| match x {
                Some(x) => *x,
                None => {
                    if !self
                        .problems
                        .iter()
                        .any(|p| p.starts_with(&self.at(i, name)))
                    {
                        let at = self.at(i, name);
                        self.problems
                            .push(format!("{at}: empty cell; expected {what}"));
                    }
                    f64::NAN
                }
            })
            .collect()
    }

    /// A column of texts (None where empty or absent).
    fn texts(&self, name: &str) -> Vec<Option<String>> {
        let n = self.rows();
        let Ok(col) = self.df.column(name) else {
            return vec![None; n];
        };
        match col.cast(&DataType::String) {
            Ok(c) => c
                .str()
                .expect("cast to strings")
                .iter()
                .map(|v| v.map(|s| s.trim().to_string()).filter(|s| !s.is_empty()))
                .collect(),
            Err(_) => vec![None; n],
        }
    }

    /// Every row's composition from the oxide columns (mole fractions), with
    /// problems recorded; None for a bad row.
    fn compositions(
        &mut self,
        basis: Basis,
        tolerance: f64,
    ) -> Result<Vec<Option<Composition>>, FitDataError> {
        let oxides: Vec<(Oxide, String)> = self
            .columns()
            .into_iter()
            .filter_map(|c| c.parse::<Oxide>().ok().map(|o| (o, c)))
            .collect();
        if oxides.is_empty() {
            return Err(FitDataError::Table(TableError::NoOxideColumn {
                path: self.path.clone(),
                found: self.columns().join(", "),
            }));
        }
        let values: Vec<(Oxide, String, Vec<Option<f64>>)> = oxides
            .into_iter()
            .map(|(o, c)| {
                let v = self.numbers(&c);
                (o, c, v)
            })
            .collect();
        let mut out = Vec::with_capacity(self.rows());
        for i in 0..self.rows() {
            let mut pairs = Vec::new();
            let mut ok = true;
            for (o, c, v) in &values {
                match v[i] {
                    Some(x) => pairs.push((*o, x)),
                    None => {
                        let at = self.at(i, c);
                        if !self.problems.iter().any(|p| p.starts_with(&at)) {
                            self.problems.push(format!(
                                "{at}: empty cell; write 0 for an oxide the glass does not contain"
                            ));
                        }
                        ok = false;
                    }
                }
            }
            if !ok {
                out.push(None);
                continue;
            }
            match Composition::new(&pairs, basis, tolerance) {
                Ok(c) => out.push(Some(c)),
                Err(e) => {
                    let row = if self.csv {
                        format!("row {} (line {})", i + 1, i + 2)
                    } else {
                        format!("row {}", i + 1)
                    };
                    self.problems
                        .push(format!("{row}, oxide columns: {e} ({basis})"));
                    out.push(None);
                }
            }
        }
        Ok(out)
    }

    fn finish(mut self, hint: &str) -> Result<(), FitDataError> {
        // In row order (cells are checked column by column).
        let row_of = |p: &String| -> usize {
            p.strip_prefix("row ")
                .and_then(|r| r.split(|c: char| !c.is_ascii_digit()).next())
                .and_then(|n| n.parse().ok())
                .unwrap_or(0)
        };
        self.problems.sort_by_key(row_of);
        if self.problems.is_empty() {
            Ok(())
        } else {
            Err(FitDataError::Cells {
                path: self.path,
                problems: self.problems,
                hint: hint.to_string(),
            })
        }
    }
}

/// How a table's oxide columns are read.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct CompositionColumns {
    pub basis: Basis,
    /// How far (percentage points) a row may sum from 100.
    pub sum_tolerance: f64,
}

/// The columns a table may carry besides oxides and measurements: they are
/// labels and are not read as data.
const LABEL_COLUMNS: [&str; 5] = ["glass", "name", "id", "label", "note"];

/// Viscosity points with a label per glass.
#[derive(Debug, Clone, PartialEq)]
pub struct ViscosityData {
    pub points: Vec<ViscosityPoint>,
    /// One label per glass (index = `ViscosityPoint::glass`).
    pub glasses: Vec<String>,
    /// Columns that were not read.
    pub ignored: Vec<String>,
}

fn ignored(columns: &[String], used: &[&str]) -> Vec<String> {
    columns
        .iter()
        .filter(|c| {
            c.parse::<Oxide>().is_err()
                && !used.contains(&c.as_str())
                && !LABEL_COLUMNS.contains(&c.as_str())
        })
        .cloned()
        .collect()
}

/// Read viscosity points: oxide columns, `temperature_k` or `temperature_c`,
/// `log10_viscosity_pa_s` or `log10_viscosity_dpa_s` (poise: one decade less
/// in Pa·s), and optionally `glass` (or `name`) to group points by glass;
/// without it, rows with the same composition are one glass.
///
/// # Errors
/// The file cannot be read; a column is missing; any bad cell (all reported).
pub fn read_viscosity_data(
    path: &Path,
    cols: CompositionColumns,
) -> Result<ViscosityData, FitDataError> {
    let mut r = Reader::open(path)?;
    let t_col = r
        .one_of("temperature_k", "temperature_c")?
        .ok_or_else(|| r.missing("temperature_k (or temperature_c)"))?;
    let eta_col = r
        .one_of("log10_viscosity_pa_s", "log10_viscosity_dpa_s")?
        .ok_or_else(|| r.missing("log10_viscosity_pa_s (or log10_viscosity_dpa_s)"))?;
    let comps = r.compositions(cols.basis, cols.sum_tolerance)?;
    let t = r.required(t_col, "a temperature");
    let eta = r.required(eta_col, "log10 of a viscosity");
    let labels = if r.has("glass") {
        r.texts("glass")
    } else {
        r.texts("name")
    };
    let mut glasses: Vec<(String, Composition, usize)> = Vec::new();
    let mut points = Vec::new();
    for i in 0..r.rows() {
        let Some(c) = &comps[i] else { continue };
        let kelvin = if t_col == "temperature_c" {
            Celsius(t[i]).to_kelvin().0
        } else {
            t[i]
        };
        if t[i].is_finite() && kelvin <= 0.0 {
            let at = r.at(i, t_col);
            r.problems
                .push(format!("{at}: {} is not above absolute zero", t[i]));
            continue;
        }
        // 1 Pa·s = 10 dPa·s (poise): log10(η/Pa·s) = log10(η/dPa·s) − 1.
        let log_eta = if eta_col == "log10_viscosity_dpa_s" {
            eta[i] - 1.0
        } else {
            eta[i]
        };
        let same = |g: &Composition| {
            g.mol_percent()
                .iter()
                .zip(c.mol_percent())
                .all(|(a, b)| (a - b).abs() < 1e-6)
        };
        let g = match &labels[i] {
            Some(label) => match glasses.iter().position(|(l, _, _)| l == label) {
                Some(k) => {
                    if !same(&glasses[k].1) {
                        let row = glasses[k].2;
                        r.problems.push(format!(
                            "row {}, oxide columns: glass '{label}' has another composition than in row {}",
                            i + 1,
                            row + 1
                        ));
                        continue;
                    }
                    k
                }
                None => {
                    glasses.push((label.clone(), c.clone(), i));
                    glasses.len() - 1
                }
            },
            None => match glasses.iter().position(|(_, g, _)| same(g)) {
                Some(k) => k,
                None => {
                    glasses.push((format!("glass of row {}", i + 1), c.clone(), i));
                    glasses.len() - 1
                }
            },
        };
        if !(t[i].is_finite() && eta[i].is_finite()) {
            continue;
        }
        points.push(ViscosityPoint {
            row: i + 1,
            glass: g,
            x: *c.fractions(),
            temperature: Kelvin(kelvin),
            log10_viscosity: Log10PaS(log_eta),
        });
    }
    let ignored = ignored(&r.columns(), &[t_col, eta_col]);
    r.finish("a viscosity table has one column per oxide (mol%, or wt% with --wt), temperature_k (or temperature_c) and log10_viscosity_pa_s (or log10_viscosity_dpa_s), and optionally glass")?;
    Ok(ViscosityData {
        points,
        glasses: glasses.into_iter().map(|(l, _, _)| l).collect(),
        ignored,
    })
}

/// Liquidus points, their phases checked against a model set.
#[derive(Debug, Clone, PartialEq)]
pub struct LiquidusData {
    pub points: Vec<LiquidusPoint>,
    pub ignored: Vec<String>,
}

/// The phase of a set named `name` (case and surrounding spaces ignored).
fn phase_index(set: &ModelSet, name: &str) -> Option<usize> {
    set.phases
        .iter()
        .position(|p| p.name.trim().eq_ignore_ascii_case(name.trim()))
}

fn known_phases(set: &ModelSet) -> String {
    set.phases
        .iter()
        .map(|p| format!("'{}'", p.name))
        .collect::<Vec<_>>()
        .join(", ")
}

/// Read liquidus points: oxide columns, `liquidus_k` or `liquidus_c`, and
/// `primary_phase` naming a phase of `set`.
///
/// # Errors
/// As [`read_viscosity_data`]; a phase the set lacks.
pub fn read_liquidus_data(
    path: &Path,
    cols: CompositionColumns,
    set: &ModelSet,
) -> Result<LiquidusData, FitDataError> {
    let mut r = Reader::open(path)?;
    let t_col = r
        .one_of("liquidus_k", "liquidus_c")?
        .ok_or_else(|| r.missing("liquidus_k (or liquidus_c)"))?;
    if !r.has("primary_phase") {
        return Err(r.missing("primary_phase"));
    }
    let comps = r.compositions(cols.basis, cols.sum_tolerance)?;
    let t = r.required(t_col, "a liquidus temperature");
    let phases = r.texts("primary_phase");
    let mut points = Vec::new();
    for i in 0..r.rows() {
        let phase = match &phases[i] {
            None => {
                let at = r.at(i, "primary_phase");
                r.problems.push(format!(
                    "{at}: empty cell; expected the phase that crystallised first, one of {}",
                    known_phases(set)
                ));
                continue;
            }
            Some(name) => match phase_index(set, name) {
                Some(k) => k,
                None => {
                    let at = r.at(i, "primary_phase");
                    r.problems.push(format!(
                        "{at}: the model set '{}' has no phase '{name}'; its phases are {}",
                        set.about.name,
                        known_phases(set)
                    ));
                    continue;
                }
            },
        };
        let (Some(c), true) = (&comps[i], t[i].is_finite()) else {
            continue;
        };
        let k = if t_col == "liquidus_c" {
            Celsius(t[i]).to_kelvin().0
        } else {
            t[i]
        };
        points.push(LiquidusPoint {
            row: i + 1,
            x: *c.fractions(),
            liquidus: Kelvin(k),
            phase,
        });
    }
    let ignored = ignored(&r.columns(), &[t_col, "primary_phase"]);
    r.finish("a liquidus table has one column per oxide (mol%, or wt% with --wt), liquidus_k (or liquidus_c) and primary_phase (a phase of the base model set)")?;
    Ok(LiquidusData { points, ignored })
}

/// One row of a kinetics table: a composition and what was measured on it.
#[derive(Debug, Clone, PartialEq)]
pub struct KineticRow {
    pub row: usize,
    pub composition: Composition,
    pub measurements: Vec<Measurement>,
    /// The phase measured or seen, if given (a phase of the set).
    pub phase: Option<String>,
}

/// Kinetic rows.
#[derive(Debug, Clone, PartialEq)]
pub struct KineticData {
    pub rows: Vec<KineticRow>,
    pub ignored: Vec<String>,
}

/// The measurement columns of a kinetics table.
pub const KINETIC_COLUMNS: [&str; 6] = [
    "critical_rate_k_per_s",
    "critical_rate_k_per_min",
    "nose_time_s",
    "nucleation_rate_per_m3_s",
    "growth_rate_m_per_s",
    "phase",
];

/// Read kinetic measurements: oxide columns and any of
/// `critical_rate_k_per_s` (or `_k_per_min`), `nose_time_s` (with
/// `nose_temperature_k` or `_c`: the isothermal time to the detectable
/// fraction at that temperature; without: the model's nose time),
/// `nucleation_rate_per_m3_s` and `growth_rate_m_per_s` (with
/// `temperature_k` or `_c`), and `phase` (a phase of `set`).
///
/// # Errors
/// As [`read_liquidus_data`]; a row without any measurement; a rate without
/// its temperature; a value that is not positive.
pub fn read_kinetic_data(
    path: &Path,
    cols: CompositionColumns,
    set: &ModelSet,
) -> Result<KineticData, FitDataError> {
    let mut r = Reader::open(path)?;
    let rate_col = r.one_of("critical_rate_k_per_s", "critical_rate_k_per_min")?;
    let nose_t_col = r.one_of("nose_temperature_k", "nose_temperature_c")?;
    let t_col = r.one_of("temperature_k", "temperature_c")?;
    let any = rate_col.is_some()
        || r.has("nose_time_s")
        || r.has("nucleation_rate_per_m3_s")
        || r.has("growth_rate_m_per_s");
    if !any {
        return Err(r.missing(
            "critical_rate_k_per_s (or critical_rate_k_per_min, nose_time_s, nucleation_rate_per_m3_s, growth_rate_m_per_s)",
        ));
    }
    let comps = r.compositions(cols.basis, cols.sum_tolerance)?;
    let rate = rate_col.map(|c| r.numbers(c));
    let nose = r.numbers("nose_time_s");
    let nose_t = nose_t_col.map(|c| r.numbers(c));
    let nuc = r.numbers("nucleation_rate_per_m3_s");
    let growth = r.numbers("growth_rate_m_per_s");
    let temp = t_col.map(|c| r.numbers(c));
    let phases = r.texts("phase");
    let to_k = |col: Option<&str>, v: f64| {
        if col.is_some_and(|c| c.ends_with("_c")) {
            Celsius(v).to_kelvin().0
        } else {
            v
        }
    };
    let mut rows = Vec::new();
    for i in 0..r.rows() {
        let mut ms = Vec::new();
        let positive = |r: &mut Reader, col: &str, v: Option<f64>| -> Option<f64> {
            match v {
                Some(x) if x > 0.0 => Some(x),
                Some(x) => {
                    let at = r.at(i, col);
                    r.problems
                        .push(format!("{at}: a measured value must be positive, got {x}"));
                    None
                }
                None => None,
            }
        };
        if let (Some(col), Some(v)) = (rate_col, rate.as_ref()) {
            if let Some(x) = positive(&mut r, col, v[i]) {
                ms.push(Measurement::CriticalRate(if col.ends_with("per_min") {
                    KelvinPerSecond::from_per_minute(x)
                } else {
                    KelvinPerSecond(x)
                }));
            }
        }
        if let Some(x) = positive(&mut r, "nose_time_s", nose[i]) {
            match nose_t.as_ref().and_then(|v| v[i]) {
                Some(t) => ms.push(Measurement::TimeAt {
                    temperature: Kelvin(to_k(nose_t_col, t)),
                    time_s: x,
                }),
                None => ms.push(Measurement::NoseTime(x)),
            }
        }
        for (col, v) in [
            ("nucleation_rate_per_m3_s", &nuc),
            ("growth_rate_m_per_s", &growth),
        ] {
            if let Some(x) = positive(&mut r, col, v[i]) {
                match temp.as_ref().and_then(|t| t[i]) {
                    Some(t) => {
                        let temperature = Kelvin(to_k(t_col, t));
                        ms.push(if col.starts_with("nucleation") {
                            Measurement::Nucleation {
                                temperature,
                                per_m3_s: x,
                            }
                        } else {
                            Measurement::Growth {
                                temperature,
                                m_per_s: x,
                            }
                        });
                    }
                    None => {
                        let at = r.at(i, t_col.unwrap_or("temperature_k"));
                        r.problems.push(format!(
                            "{at}: empty cell; a {} needs the temperature it was measured at",
                            col.trim_end_matches("_per_m3_s")
                                .trim_end_matches("_m_per_s")
                                .replace('_', " ")
                        ));
                    }
                }
            }
        }
        let phase = match &phases[i] {
            None => None,
            Some(name) => match phase_index(set, name) {
                Some(k) => Some(set.phases[k].name.clone()),
                None => {
                    let at = r.at(i, "phase");
                    r.problems.push(format!(
                        "{at}: the model set '{}' has no phase '{name}'; its phases are {}",
                        set.about.name,
                        known_phases(set)
                    ));
                    None
                }
            },
        };
        let Some(c) = &comps[i] else { continue };
        if ms.is_empty() {
            let row = if r.csv {
                format!("row {} (line {})", i + 1, i + 2)
            } else {
                format!("row {}", i + 1)
            };
            if !r.problems.iter().any(|p| p.starts_with(&row)) {
                r.problems
                    .push(format!("{row}: no measurement in this row"));
            }
            continue;
        }
        rows.push(KineticRow {
            row: i + 1,
            composition: c.clone(),
            measurements: ms,
            phase,
        });
    }
    let mut used: Vec<&str> = KINETIC_COLUMNS.to_vec();
    used.extend([
        "nose_temperature_k",
        "nose_temperature_c",
        "temperature_k",
        "temperature_c",
    ]);
    let ignored = ignored(&r.columns(), &used);
    r.finish("a kinetics table has one column per oxide and any of critical_rate_k_per_s (or _k_per_min), nose_time_s (with nose_temperature_k for an isothermal time), nucleation_rate_per_m3_s or growth_rate_m_per_s (with temperature_k), and optionally phase")?;
    Ok(KineticData { rows, ignored })
}

/// SHA-256 of a file's bytes, hexadecimal.
///
/// # Errors
/// The file cannot be read.
pub fn sha256_hex(path: &Path) -> Result<String, TableError> {
    let bytes = std::fs::read(path).map_err(|e| TableError::Read {
        path: path.display().to_string(),
        message: e.to_string(),
    })?;
    Ok(sha256_hex_of(&bytes))
}

/// SHA-256 of `bytes`, hexadecimal.
pub fn sha256_hex_of(bytes: &[u8]) -> String {
    Sha256::digest(bytes)
        .iter()
        .map(|b| format!("{b:02x}"))
        .collect()
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn sha256_of_a_known_text() {
        // Source: FIPS 180-2, Appendix B.1: SHA-256("abc").
        let d = std::env::temp_dir().join(format!("qw-sha-{}", std::process::id()));
        std::fs::write(&d, b"abc").unwrap();
        assert_eq!(
            sha256_hex(&d).unwrap(),
            "ba7816bf8f01cfea414140de5dae2223b00361a396177a9cb410ff61f20015ad"
        );
        let _ = std::fs::remove_file(&d);
    }
}
