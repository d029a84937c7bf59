//! Tables in and out (CSV or Parquet by extension, through polars): melt-card
//! and composition tables read into typed inputs, one per row, with a row's
//! problem kept as that row's error; evaluation results appended as columns.
//! Evaluating the rows is the caller's business (in parallel, in `app`).

use super::melt_card::{CrystalValues, MeltValues};
use crate::assess::Evaluation;
use crate::composition::Oxide;
use crate::error::{Diagnostic, ErrorKind};
use crate::kinetics::{DrivingForce, KineticOverrides};
use crate::properties::GrowthMode;
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
    #[error("{path}: {message}")]
    Write { path: String, message: String },
    #[error("{}", problems.join("\n"))]
    Rows { problems: Vec<String> },
    #[error("{path}: unsupported extension; use .csv or .parquet")]
    Extension { path: String },
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

/// Read a CSV or Parquet file into a data frame.
///
/// # Errors
/// An unknown extension, an unreadable or malformed file.
pub fn read_frame(path: &Path) -> Result<DataFrame, TableError> {
    let p = path.display().to_string();
    let err = |e: PolarsError| TableError::Read {
        path: p.clone(),
        message: e.to_string(),
    };
    match kind(path) {
        Some(Kind::Csv) => CsvReadOptions::default()
            .with_has_header(true)
            .with_infer_schema_length(None)
            .try_into_reader_with_file_path(Some(path.to_path_buf()))
            .and_then(|r| r.finish())
            .map_err(err),
        Some(Kind::Parquet) => {
            let f = std::fs::File::open(path).map_err(|e| TableError::Read {
                path: p.clone(),
                message: e.to_string(),
            })?;
            ParquetReader::new(f).finish().map_err(err)
        }
        None => Err(TableError::Extension { path: p }),
    }
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

/// A column as numbers (None where empty or NaN), if it exists and casts.
pub(crate) fn float_column(df: &DataFrame, name: &str) -> Option<Vec<Option<f64>>> {
    let c = df.column(name).ok()?;
    let c = c.cast(&DataType::Float64).ok()?;
    let ca = c.f64().ok()?.clone();
    Some(ca.iter().map(|v| v.filter(|x| !x.is_nan())).collect())
}

/// A column as texts, if it exists and casts.
pub(crate) fn string_column(df: &DataFrame, name: &str) -> Option<Vec<Option<String>>> {
    let c = df.column(name).ok()?;
    let c = c.cast(&DataType::String).ok()?;
    let ca = c.str().ok()?.clone();
    Some(ca.iter().map(|v| v.map(|s| s.to_string())).collect())
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

fn require(df: &DataFrame, path: &Path, name: &str) -> Result<Vec<Option<f64>>, TableError> {
    float_column(df, name).ok_or_else(|| missing(df, &path.display().to_string(), name))
}

/// A table as read: the frame (its columns pass through to the output) and
/// one input per row, or why that row cannot be used.
pub struct Table<T> {
    pub frame: DataFrame,
    pub rows: Vec<Result<T, String>>,
}

/// Read a table of melt cards, one per row; columns are named like the
/// card's keys.
///
/// # Errors
/// The file cannot be read, or a required column is missing. Bad rows are
/// not errors: each keeps its reason.
pub fn read_melt_table(path: &Path) -> Result<Table<MeltValues>, TableError> {
    let df = read_frame(path)?;
    let n = df.height();
    let a = require(&df, path, "a")?;
    let b = require(&df, path, "b_k")?;
    let c = require(&df, path, "c_k")?;
    let tl = require(&df, path, "liquidus_k")?;
    let dh = require(&df, path, "enthalpy_of_fusion_j_per_mol")?;
    let vm = require(&df, path, "molar_volume_m3_per_mol")?;
    let alpha = float_column(&df, "turnbull_alpha");
    let sigma = float_column(&df, "interface_energy_j_per_m2");
    if alpha.is_none() && sigma.is_none() {
        return Err(missing(
            &df,
            &path.display().to_string(),
            "turnbull_alpha (or interface_energy_j_per_m2)",
        ));
    }
    let growth = string_column(&df, "growth")
        .ok_or_else(|| missing(&df, &path.display().to_string(), "growth"))?;
    let xc = float_column(&df, "detectable_fraction");
    let df_kind = string_column(&df, "driving_force");
    let nh = float_column(&df, "heterogeneous_nuclei_per_m3");
    let theta = float_column(&df, "contact_angle_deg");
    let thick = float_column(&df, "sample_thickness_m");
    let dcp = float_column(&df, "heat_capacity_change_j_per_mol_k");
    let pick = |v: &Option<Vec<Option<f64>>>, i: usize| v.as_ref().and_then(|v| v[i]);
    let rows = (0..n)
        .map(|i| -> Result<MeltValues, String> {
            let need =
                |v: &Vec<Option<f64>>, name: &str| v[i].ok_or_else(|| format!("{name} is empty"));
            let growth = match growth[i].as_deref().map(str::trim) {
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
                .and_then(|v| v[i].clone())
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
    Ok(Table { frame: df, rows })
}

/// One composition as (oxide, amount) pairs, in the table's basis.
pub type OxideAmounts = Vec<(Oxide, f64)>;

/// A composition table: one column per oxide (mol% or wt%, read as given),
/// other columns passed through. Returns the table and the columns that were
/// not read as oxides.
///
/// # Errors
/// The file cannot be read, or has no oxide column.
pub fn read_composition_table(
    path: &Path,
) -> Result<(Table<OxideAmounts>, Vec<String>), TableError> {
    let df = read_frame(path)?;
    let mut oxide_cols = Vec::new();
    let mut other = Vec::new();
    for name in df.get_column_names() {
        match name.as_str().parse::<Oxide>() {
            Ok(o) => oxide_cols.push((o, float_column(&df, name.as_str()).unwrap_or_default())),
            Err(_) => other.push(name.to_string()),
        }
    }
    if oxide_cols.is_empty() {
        return Err(TableError::NoOxideColumn {
            path: path.display().to_string(),
            found: other.join(", "),
        });
    }
    let rows = (0..df.height())
        .map(|i| {
            Ok(oxide_cols
                .iter()
                .map(|(o, v)| (*o, v.get(i).copied().flatten().unwrap_or(0.0)))
                .collect())
        })
        .collect();
    Ok((Table { frame: df, rows }, other))
}

/// A column name safe for any table tool: letters, digits and underscores.
fn column_safe(name: &str) -> String {
    name.chars()
        .map(|c| if c.is_ascii_alphanumeric() { c } else { '_' })
        .collect()
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

/// The input frame with the evaluation columns and an `error` column appended.
///
/// # Errors
/// Polars refuses the columns (a name clash is avoided by suffixing `_out`).
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
    let existing: Vec<String> = df
        .get_column_names()
        .iter()
        .map(|s| s.to_string())
        .collect();
    for k in keys {
        let name = if existing.contains(&k) {
            format!("{k}_out")
        } else {
            k.clone()
        };
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
