//! Tables of melts or compositions in, tables of evaluations out (CSV or
//! Parquet by extension, through polars). Rows are evaluated in parallel; a
//! row that fails gets its error in an `error` column and the rest still run.

use crate::composition::{Basis, Composition, Oxide};
use crate::data::MeltValues;
use crate::evaluate::{evaluate_composition, evaluate_melt, Calibration, Evaluation, SlabQuench};
use crate::kinetics::{DrivingForce, GrowthMode, KineticOptions};
use crate::models::ModelSet;
use polars::prelude::*;
use rayon::prelude::*;
use std::path::Path;

/// Why a table could not be read or written as a whole.
#[derive(Debug, thiserror::Error)]
pub enum TableError {
    #[error("{path}: {message}")]
    Read { path: String, message: String },
    #[error("{path}: missing column '{column}'\nhint: the columns found are: {found}")]
    MissingColumn {
        path: String,
        column: String,
        found: String,
    },
    #[error("{path}: {message}")]
    Write { path: String, message: String },
    #[error("{}", problems.join("\n"))]
    Rows { problems: Vec<String> },
    #[error("{path}: unsupported extension; use .csv or .parquet")]
    Extension { path: String },
}

/// Per-row outcomes: an evaluation, or the reason the row failed.
pub type RowResults = Vec<Result<Evaluation, String>>;

/// Progress reports from a table run.
pub trait Progress: Sync {
    fn row_done(&self);
}

/// No progress reports.
pub struct Silent;
impl Progress for Silent {
    fn row_done(&self) {}
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

fn float_column(df: &DataFrame, name: &str) -> Option<Vec<Option<f64>>> {
    let c = df.column(name).ok()?;
    let c = c.cast(&DataType::Float64).ok()?;
    let ca = c.f64().ok()?.clone();
    Some(ca.iter().map(|v| v.filter(|x| !x.is_nan())).collect())
}

fn string_column(df: &DataFrame, name: &str) -> Option<Vec<Option<String>>> {
    let c = df.column(name).ok()?;
    let c = c.cast(&DataType::String).ok()?;
    let ca = c.str().ok()?.clone();
    Some(ca.iter().map(|v| v.map(|s| s.to_string())).collect())
}

/// The error for a missing column, listing the columns that are there.
fn missing(df: &DataFrame, path: &str, column: &str) -> TableError {
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

/// Evaluate a table of melt cards, one per row.
///
/// # Errors
/// The file cannot be read, or a required column is missing. Bad rows are not errors.
pub fn evaluate_melt_table(
    path: &Path,
    base: &KineticOptions,
    slab: Option<SlabQuench>,
    progress: &dyn Progress,
) -> Result<(DataFrame, RowResults), TableError> {
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
    let pick = |v: &Option<Vec<Option<f64>>>, i: usize| v.as_ref().and_then(|v| v[i]);
    let results: Vec<Result<Evaluation, String>> = (0..n)
        .into_par_iter()
        .map(|i| {
            let r = (|| -> Result<Evaluation, String> {
                let need = |v: &Vec<Option<f64>>, name: &str| {
                    v[i].ok_or_else(|| format!("{name} is empty"))
                };
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
                let values = MeltValues {
                    a: need(&a, "a")?,
                    b_k: need(&b, "b_k")?,
                    c_k: need(&c, "c_k")?,
                    liquidus_k: need(&tl, "liquidus_k")?,
                    enthalpy_of_fusion_j_per_mol: need(&dh, "enthalpy_of_fusion_j_per_mol")?,
                    molar_volume_m3_per_mol: need(&vm, "molar_volume_m3_per_mol")?,
                    turnbull_alpha: pick(&alpha, i),
                    interface_energy_j_per_m2: pick(&sigma, i),
                    growth,
                    detectable_fraction: pick(&xc, i),
                    driving_force,
                    heterogeneous_nuclei_per_m3: pick(&nh, i),
                    contact_angle_deg: pick(&theta, i),
                };
                let (melt, opts) = values
                    .build(base)
                    .map_err(|e| crate::report::first_line(&e.to_string()))?;
                evaluate_melt(&melt, &opts, slab, &Calibration::None)
                    .map_err(|e| crate::report::first_line(&e.to_string()))
            })();
            progress.row_done();
            r
        })
        .collect();
    Ok((df, results))
}

/// Evaluate a table of compositions: one column per oxide (mol% or wt%), other
/// columns passed through. Returns the input, the results and the columns
/// that were not read as oxides.
///
/// # Errors
/// The file cannot be read, or has no oxide column.
pub fn evaluate_composition_table(
    path: &Path,
    models: &ModelSet,
    basis: Basis,
    tolerance: f64,
    opts: &KineticOptions,
    slab: Option<SlabQuench>,
    progress: &dyn Progress,
) -> Result<(DataFrame, RowResults, Vec<String>), TableError> {
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
        return Err(TableError::MissingColumn {
            path: path.display().to_string(),
            column: "<oxide>".into(),
            found: format!(
                "{}\nhint: name one column per oxide, e.g. SiO2, Na2O; known oxides are {}",
                other.join(", "),
                Oxide::known_list()
            ),
        });
    }
    let results = (0..df.height())
        .into_par_iter()
        .map(|i| {
            let r = (|| -> Result<Evaluation, String> {
                let pairs: Vec<(Oxide, f64)> = oxide_cols
                    .iter()
                    .map(|(o, v)| (*o, v.get(i).copied().flatten().unwrap_or(0.0)))
                    .collect();
                let comp = Composition::new(&pairs, basis, tolerance)
                    .map_err(|e| crate::report::first_line(&e.to_string()))?;
                evaluate_composition(models, &comp, opts, slab, &Calibration::None)
                    .map_err(|e| crate::report::first_line(&e.to_string()))
            })();
            progress.row_done();
            r
        })
        .collect();
    Ok((df, results, other))
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
                Ok(serde_json::Value::Object(m)) => Some(m),
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

/// The demo raw-materials table, embedded (used when no table is given).
pub const DEMO_RAW_MATERIALS: &str = include_str!("../demo-datasets/raw-materials.csv");

/// Columns a raw-materials table may have besides `<Oxide>_wt_pct`.
const RAW_COLUMNS: [&str; 7] = [
    "name",
    "formula",
    "price_per_kg",
    "purity_pct",
    "available_kg",
    "loi_wt_pct",
    "note",
];

/// Read a raw-materials table (CSV or Parquet), or the embedded demo when `path` is None.
///
/// Each row needs a `name` and a `price_per_kg`, and either a `formula` (ideal
/// analysis from IUPAC masses) or `<Oxide>_wt_pct` columns with `loi_wt_pct`.
///
/// # Errors
/// Unreadable file, unknown or missing columns; every bad row is reported at once
/// with its line number.
pub fn read_raw_materials(
    path: Option<&Path>,
) -> Result<Vec<crate::batch::RawMaterial>, TableError> {
    if let Some(p) = path.filter(|p| {
        p.extension()
            .is_some_and(|e| e.eq_ignore_ascii_case("toml"))
    }) {
        return raw_materials_toml(p);
    }
    let (label, df) = match path {
        Some(p) => (p.display().to_string(), read_frame(p)?),
        None => {
            let label = "<built-in demo-datasets/raw-materials.csv>".to_string();
            let df = CsvReadOptions::default()
                .with_has_header(true)
                .with_infer_schema_length(None)
                .into_reader_with_file_handle(std::io::Cursor::new(DEMO_RAW_MATERIALS.as_bytes()))
                .finish()
                .map_err(|e| TableError::Read {
                    path: label.clone(),
                    message: e.to_string(),
                })?;
            (label, df)
        }
    };
    let names: Vec<String> = df
        .get_column_names()
        .iter()
        .map(|s| s.to_string())
        .collect();
    let mut oxide_cols = Vec::new();
    for n in &names {
        if let Some(ox) = n
            .strip_suffix("_wt_pct")
            .and_then(|o| o.parse::<Oxide>().ok())
        {
            oxide_cols.push((ox, float_column(&df, n).unwrap_or_default()));
        } else if !RAW_COLUMNS.contains(&n.as_str()) {
            return Err(TableError::Read {
                path: label,
                message: format!(
                    "unknown column '{n}'\nhint: allowed columns are {}, and <Oxide>_wt_pct (e.g. SiO2_wt_pct)",
                    RAW_COLUMNS.join(", ")
                ),
            });
        }
    }
    for need in ["name", "price_per_kg"] {
        if !names.iter().any(|n| n == need) {
            return Err(missing(&df, &label, need));
        }
    }
    let name = string_column(&df, "name").unwrap_or_default();
    let formula = string_column(&df, "formula");
    let price = float_column(&df, "price_per_kg").unwrap_or_default();
    let purity = float_column(&df, "purity_pct");
    let avail = float_column(&df, "available_kg");
    let loi = float_column(&df, "loi_wt_pct");
    let mut out = Vec::new();
    let mut problems = Vec::new();
    for i in 0..df.height() {
        let line = i + 2; // header is line 1
        let nm = name[i].clone().unwrap_or_default();
        let row = (|| -> Result<crate::batch::RawMaterial, String> {
            if nm.trim().is_empty() {
                return Err("name is empty".into());
            }
            let p = price[i].ok_or("price_per_kg is empty")?;
            let pur = purity.as_ref().and_then(|v| v[i]).unwrap_or(100.0);
            let av = avail.as_ref().and_then(|v| v[i]);
            let f = formula
                .as_ref()
                .and_then(|v| v[i].clone())
                .filter(|s| !s.trim().is_empty());
            let given: Vec<(Oxide, f64)> = oxide_cols
                .iter()
                .filter_map(|(o, v)| v.get(i).copied().flatten().map(|x| (*o, x)))
                .collect();
            let r = if !given.is_empty() {
                let mut a = [0.0; crate::composition::N_OXIDES];
                for (o, x) in given {
                    a[o.index()] = x;
                }
                let l = loi
                    .as_ref()
                    .and_then(|v| v[i])
                    .ok_or("an analysis needs loi_wt_pct")?;
                crate::batch::RawMaterial::from_analysis(&nm, f.as_deref(), &a, l, pur, p, av)
            } else {
                let f = f.ok_or("give a formula or an analysis (<Oxide>_wt_pct columns)")?;
                crate::batch::RawMaterial::from_formula(&nm, &f, pur, p, av)
            };
            r.map_err(|e| e.to_string())
        })();
        match row {
            Ok(r) => out.push(r),
            Err(e) => problems.push(format!(
                "{label}:{line}: {}: {e}",
                if nm.is_empty() { "(no name)" } else { &nm }
            )),
        }
    }
    if !problems.is_empty() {
        return Err(TableError::Rows { problems });
    }
    if out.is_empty() {
        return Err(TableError::Read {
            path: label,
            message: "the raw-materials table has no rows".into(),
        });
    }
    Ok(out)
}

#[derive(serde::Deserialize)]
#[serde(deny_unknown_fields)]
struct RawFile {
    raw_material: Vec<RawEntry>,
}

#[derive(serde::Deserialize)]
#[serde(deny_unknown_fields)]
struct RawEntry {
    name: String,
    formula: Option<String>,
    price_per_kg: f64,
    purity_pct: Option<f64>,
    available_kg: Option<f64>,
    /// wt% of each oxide, e.g. { SiO2 = 64.8, Al2O3 = 18.3, K2O = 16.9 }
    analysis: Option<std::collections::BTreeMap<String, f64>>,
    loi_wt_pct: Option<f64>,
    #[allow(dead_code)]
    note: Option<String>,
}

/// The TOML form of a raw-materials table: one `[[raw_material]]` per entry.
fn raw_materials_toml(path: &Path) -> Result<Vec<crate::batch::RawMaterial>, TableError> {
    let label = path.display().to_string();
    let text = std::fs::read_to_string(path).map_err(|e| TableError::Read {
        path: label.clone(),
        message: e.to_string(),
    })?;
    let file: RawFile = toml::from_str(&text).map_err(|e| {
        let line = e
            .span()
            .map(|s| text[..s.start].matches('\n').count() + 1)
            .unwrap_or(0);
        TableError::Read {
            path: format!("{label}:{line}"),
            message: e.message().trim().to_string(),
        }
    })?;
    let mut out = Vec::new();
    let mut problems = Vec::new();
    for (k, r) in file.raw_material.iter().enumerate() {
        let res = (|| -> Result<crate::batch::RawMaterial, String> {
            let pur = r.purity_pct.unwrap_or(100.0);
            match (&r.analysis, &r.formula) {
                (Some(a), f) => {
                    let mut arr = [0.0; crate::composition::N_OXIDES];
                    for (o, v) in a {
                        let ox: Oxide = o
                            .parse()
                            .map_err(|e: crate::composition::CompositionError| e.to_string())?;
                        arr[ox.index()] = *v;
                    }
                    let loi = r.loi_wt_pct.ok_or("an analysis needs loi_wt_pct")?;
                    crate::batch::RawMaterial::from_analysis(
                        &r.name,
                        f.as_deref(),
                        &arr,
                        loi,
                        pur,
                        r.price_per_kg,
                        r.available_kg,
                    )
                    .map_err(|e| e.to_string())
                }
                (None, Some(f)) => crate::batch::RawMaterial::from_formula(
                    &r.name,
                    f,
                    pur,
                    r.price_per_kg,
                    r.available_kg,
                )
                .map_err(|e| e.to_string()),
                (None, None) => Err("give a formula or an analysis".into()),
            }
        })();
        match res {
            Ok(m) => out.push(m),
            Err(e) => problems.push(format!(
                "{label}: raw_material #{} ({}): {e}",
                k + 1,
                r.name
            )),
        }
    }
    if !problems.is_empty() {
        return Err(TableError::Rows { problems });
    }
    Ok(out)
}
