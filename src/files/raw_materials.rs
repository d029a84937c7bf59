//! Raw-material tables: CSV or Parquet (one row per raw material) or TOML
//! (one `[[raw_material]]` per entry), each row from a formula or an analysis,
//! every bad row reported at once with its line.

use super::table::{float_column, missing, read_frame, string_column, TableError};
use crate::batch::RawMaterial;
use crate::composition::{Oxide, N_OXIDES};
use polars::prelude::*;
use std::path::Path;

/// The demo raw-materials table, embedded (used when no table is given).
pub const DEMO_RAW_MATERIALS: &str = include_str!("../../demo-datasets/raw-materials.csv");

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
pub fn read_raw_materials(path: Option<&Path>) -> Result<Vec<RawMaterial>, TableError> {
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
            return Err(TableError::UnknownColumn {
                path: label,
                column: n.clone(),
                allowed: format!(
                    "{}, and <Oxide>_wt_pct (e.g. SiO2_wt_pct)",
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
        let row = (|| -> Result<RawMaterial, String> {
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
                let mut a = [0.0; N_OXIDES];
                for (o, x) in given {
                    a[o.index()] = x;
                }
                let l = loi
                    .as_ref()
                    .and_then(|v| v[i])
                    .ok_or("an analysis needs loi_wt_pct")?;
                RawMaterial::from_analysis(&nm, f.as_deref(), &a, l, pur, p, av)
            } else {
                let f = f.ok_or("give a formula or an analysis (<Oxide>_wt_pct columns)")?;
                RawMaterial::from_formula(&nm, &f, pur, p, av)
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
fn raw_materials_toml(path: &Path) -> Result<Vec<RawMaterial>, TableError> {
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
        let res = (|| -> Result<RawMaterial, String> {
            let pur = r.purity_pct.unwrap_or(100.0);
            match (&r.analysis, &r.formula) {
                (Some(a), f) => {
                    let mut arr = [0.0; N_OXIDES];
                    for (o, v) in a {
                        let ox: Oxide = o
                            .parse()
                            .map_err(|e: crate::composition::CompositionError| e.to_string())?;
                        arr[ox.index()] = *v;
                    }
                    let loi = r.loi_wt_pct.ok_or("an analysis needs loi_wt_pct")?;
                    RawMaterial::from_analysis(
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
                (None, Some(f)) => {
                    RawMaterial::from_formula(&r.name, f, pur, r.price_per_kg, r.available_kg)
                        .map_err(|e| e.to_string())
                }
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
