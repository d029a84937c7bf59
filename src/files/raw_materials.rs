//! Raw-material tables: CSV or Parquet (one row per raw material) or TOML
//! (one `[[raw_material]]` per entry), each row from a formula or an analysis,
//! every bad row reported at once with its line.
//!
//! A CSV saved by a spreadsheet set to a decimal comma (fields separated by
//! `;`, numbers like `0,45`) is read as such: the header decides (`;` and no
//! `,` in it).
//!
//! Empty cells: an empty `purity_pct` is 100 %, an empty `available_kg` is
//! an unlimited stock, an empty `<Oxide>_wt_pct` is 0 (the oxide is not in
//! the analysis). A cell that holds anything but a number ("9O", "n/a") is an
//! error naming its row, line and column: never a default.

use super::source::{Collector, Source};
use super::table::{
    missing, number_column, read_csv_text, read_table, text_column, Places, TableError,
};
use crate::batch::RawMaterial;
use crate::composition::{Oxide, N_OXIDES};
use polars::prelude::*;
use std::collections::BTreeMap;
use std::path::Path;
use toml::Spanned;

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

/// Read a raw-materials table (CSV, Parquet or TOML), or the embedded demo
/// when `path` is None.
///
/// Each row needs a `name` and a `price_per_kg`, and either a `formula` (ideal
/// analysis from IUPAC masses) or `<Oxide>_wt_pct` columns with `loi_wt_pct`.
///
/// # Errors
/// Unreadable file, unknown, duplicate or missing columns, cells that are not
/// numbers (or text) where the column needs them; every bad row is reported
/// at once with its line number.
pub fn read_raw_materials(path: Option<&Path>) -> Result<Vec<RawMaterial>, TableError> {
    if let Some(p) = path.filter(|p| {
        p.extension()
            .is_some_and(|e| e.eq_ignore_ascii_case("toml"))
    }) {
        return raw_materials_toml(p);
    }
    let semicolon = path
        .filter(|p| p.extension().is_some_and(|e| e.eq_ignore_ascii_case("csv")))
        .map(|p| {
            std::fs::read_to_string(p)
                .map_err(|e| TableError::Read {
                    path: p.display().to_string(),
                    message: e.to_string(),
                })
                .map(|text| (p, semicolon_csv(&text)))
        })
        .transpose()?;
    let (df, places) = match (path, semicolon) {
        (Some(p), Some((_, Some(text)))) => read_csv_text(&text, &p.display().to_string())?,
        (Some(p), _) => read_table(p)?,
        (None, _) => read_csv_text(
            DEMO_RAW_MATERIALS,
            "<built-in demo-datasets/raw-materials.csv>",
        )?,
    };
    raw_materials_frame(&df, &places)
}

/// A CSV text with `;` between fields and decimal commas (as spreadsheets
/// set to such a locale save it) rewritten with `,` and decimal points, line
/// for line, so that rows keep their line numbers; `None` when the header
/// has a `,` or no `;` (an ordinary CSV).
fn semicolon_csv(text: &str) -> Option<String> {
    let header = text.lines().find(|l| !l.trim().is_empty())?;
    if !header.contains(';') || header.contains(',') {
        return None;
    }
    let mut out = String::with_capacity(text.len());
    for line in text.split_inclusive('\n') {
        let (body, end) = match line.strip_suffix("\r\n") {
            Some(b) => (b, "\r\n"),
            None => match line.strip_suffix('\n') {
                Some(b) => (b, "\n"),
                None => (line, ""),
            },
        };
        let fields: Vec<String> = split_quoted(body, ';')
            .into_iter()
            .map(|f| {
                let t = f.trim();
                if is_decimal_comma(t) {
                    t.replace(',', ".")
                } else if f.contains([',', '"']) {
                    format!("\"{}\"", f.replace('"', "\"\""))
                } else {
                    f
                }
            })
            .collect();
        out.push_str(&fields.join(","));
        out.push_str(end);
    }
    Some(out)
}

/// Split a line at `sep` outside double quotes, unquoting the fields.
fn split_quoted(line: &str, sep: char) -> Vec<String> {
    let mut fields = vec![String::new()];
    let mut quoted = false;
    let mut chars = line.chars().peekable();
    while let Some(c) = chars.next() {
        match c {
            '"' if quoted && chars.peek() == Some(&'"') => {
                chars.next();
                fields.last_mut().unwrap_or(&mut String::new()).push('"');
            }
            '"' => quoted = !quoted,
            c if c == sep && !quoted => fields.push(String::new()),
            c => {
                if let Some(f) = fields.last_mut() {
                    f.push(c);
                }
            }
        }
    }
    fields
}

/// A number written with a decimal comma: digits, one comma, digits, an
/// optional exponent ("0,45", "-1,5e3").
fn is_decimal_comma(t: &str) -> bool {
    let t = t.strip_prefix(['+', '-']).unwrap_or(t);
    let (mantissa, exponent) = match t.find(['e', 'E']) {
        Some(i) => (&t[..i], Some(&t[i + 1..])),
        None => (t, None),
    };
    let digits = |s: &str| !s.is_empty() && s.bytes().all(|b| b.is_ascii_digit());
    let ok_exp = exponent.is_none_or(|e| digits(e.strip_prefix(['+', '-']).unwrap_or(e)));
    match mantissa.split_once(',') {
        Some((a, b)) => digits(a) && digits(b) && ok_exp,
        None => false,
    }
}

/// The raw materials of a table already read.
fn raw_materials_frame(df: &DataFrame, places: &Places) -> Result<Vec<RawMaterial>, TableError> {
    let label = places.path().to_string();
    let names: Vec<String> = df
        .get_column_names()
        .iter()
        .map(|s| s.to_string())
        .collect();
    let mut bad = Vec::new();
    let mut oxide_cols: Vec<(Oxide, String, Vec<Option<f64>>)> = Vec::new();
    for n in &names {
        if let Some(ox) = n
            .strip_suffix("_wt_pct")
            .and_then(|o| o.parse::<Oxide>().ok())
        {
            if let Some((_, first, _)) = oxide_cols.iter().find(|(o, ..)| *o == ox) {
                return Err(TableError::DuplicateColumn {
                    path: label,
                    first: first.clone(),
                    second: n.clone(),
                    what: ox.formula().to_string(),
                });
            }
            let v = number_column(df, places, n, &mut bad).unwrap_or_default();
            oxide_cols.push((ox, n.clone(), v));
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
            return Err(missing(df, &label, need));
        }
    }
    let name = text_column(df, places, "name", &mut bad).unwrap_or_default();
    let formula = text_column(df, places, "formula", &mut bad);
    let price = number_column(df, places, "price_per_kg", &mut bad).unwrap_or_default();
    let purity = number_column(df, places, "purity_pct", &mut bad);
    let avail = number_column(df, places, "available_kg", &mut bad);
    let loi = number_column(df, places, "loi_wt_pct", &mut bad);
    let _ = text_column(df, places, "note", &mut bad);
    if !bad.is_empty() {
        return Err(TableError::Cells { problems: bad });
    }
    let cell = |v: &Option<Vec<Option<f64>>>, i: usize| {
        v.as_ref().and_then(|v| v.get(i).copied().flatten())
    };
    let mut out = Vec::new();
    let mut problems = Vec::new();
    for i in 0..df.height() {
        let nm = name.get(i).cloned().flatten().unwrap_or_default();
        let row = (|| -> Result<RawMaterial, String> {
            if nm.trim().is_empty() {
                return Err("name is empty".into());
            }
            let p = price
                .get(i)
                .copied()
                .flatten()
                .ok_or("price_per_kg is empty")?;
            let pur = cell(&purity, i).unwrap_or(100.0);
            let av = cell(&avail, i);
            let f = formula
                .as_ref()
                .and_then(|v| v.get(i).cloned().flatten())
                .filter(|s| !s.trim().is_empty());
            let given: Vec<(Oxide, f64)> = oxide_cols
                .iter()
                .filter_map(|(o, _, v)| v.get(i).copied().flatten().map(|x| (*o, x)))
                .collect();
            let r = if !given.is_empty() {
                let mut a = [0.0; N_OXIDES];
                for (o, x) in given {
                    a[o.index()] = x;
                }
                let l = cell(&loi, i).ok_or("an analysis needs loi_wt_pct")?;
                RawMaterial::from_analysis(&nm, f.as_deref(), &a, l, pur, p, av)
            } else {
                let f = f.ok_or("give a formula or an analysis (<Oxide>_wt_pct columns)")?;
                RawMaterial::from_formula(&nm, &f, pur, p, av)
            };
            r.map_err(|e| e.to_string())
        })();
        match row {
            Ok(r) => out.push(r),
            Err(e) => {
                let at = match places.line(i) {
                    Some(line) => format!("{label}:{line}"),
                    None => format!("{label}: row {}", i + 1),
                };
                problems.push(format!(
                    "{at}: {}: {e}",
                    if nm.is_empty() { "(no name)" } else { &nm }
                ))
            }
        }
    }
    if !problems.is_empty() {
        return Err(TableError::Rows { problems });
    }
    if out.is_empty() {
        return Err(TableError::NoRows { path: label });
    }
    Ok(out)
}

#[derive(serde::Deserialize)]
#[serde(deny_unknown_fields)]
struct RawFile {
    raw_material: Vec<Spanned<RawEntry>>,
}

#[derive(serde::Deserialize)]
#[serde(deny_unknown_fields)]
struct RawEntry {
    name: Spanned<String>,
    formula: Option<String>,
    price_per_kg: Spanned<f64>,
    purity_pct: Option<Spanned<f64>>,
    available_kg: Option<Spanned<f64>>,
    /// wt% of each oxide, e.g. { SiO2 = 64.8, Al2O3 = 18.3, K2O = 16.9 }
    analysis: Option<BTreeMap<Spanned<String>, Spanned<f64>>>,
    loi_wt_pct: Option<Spanned<f64>>,
    #[allow(dead_code)]
    note: Option<String>,
}

/// The TOML form of a raw-materials table: one `[[raw_material]]` per entry.
/// Problems name the line of the entry's value they are about.
fn raw_materials_toml(path: &Path) -> Result<Vec<RawMaterial>, TableError> {
    let label = path.display().to_string();
    let text = std::fs::read_to_string(path).map_err(|e| TableError::Read {
        path: label.clone(),
        message: e.to_string(),
    })?;
    let src = Source::new(label.clone(), &text);
    let hint = "a raw-materials TOML file has one [[raw_material]] per entry with name, price_per_kg, and formula or analysis + loi_wt_pct; see tests/fixtures/shelf.toml";
    let file: RawFile = src.parse(hint)?;
    let mut c = Collector::new(&src);
    let mut out = Vec::new();
    for entry in &file.raw_material {
        let r = entry.get_ref();
        let name = r.name.get_ref();
        let v = |s: &Option<Spanned<f64>>| s.as_ref().map(|x| *x.get_ref());
        let res = match (&r.analysis, &r.formula) {
            (Some(a), f) => {
                let mut arr = [0.0; N_OXIDES];
                let mut seen = Vec::new();
                for (k, x) in a {
                    if let Some(ox) = c.oxide_once(k, &mut seen) {
                        arr[ox.index()] = *x.get_ref();
                    }
                }
                match &r.loi_wt_pct {
                    None => Err((r.name.span(), "an analysis needs loi_wt_pct".to_string())),
                    Some(loi) => RawMaterial::from_analysis(
                        name,
                        f.as_deref(),
                        &arr,
                        *loi.get_ref(),
                        v(&r.purity_pct).unwrap_or(100.0),
                        *r.price_per_kg.get_ref(),
                        v(&r.available_kg),
                    )
                    .map_err(|e| (entry_span(r, &e.to_string()), e.to_string())),
                }
            }
            (None, Some(f)) => RawMaterial::from_formula(
                name,
                f,
                v(&r.purity_pct).unwrap_or(100.0),
                *r.price_per_kg.get_ref(),
                v(&r.available_kg),
            )
            .map_err(|e| (entry_span(r, &e.to_string()), e.to_string())),
            (None, None) => Err((
                r.name.span(),
                format!("raw material '{name}': give a formula or an analysis"),
            )),
        };
        match res {
            Ok(m) => out.push(m),
            Err((span, why)) => c.push(span, why),
        }
    }
    c.finish(hint)?;
    if out.is_empty() {
        return Err(TableError::NoRows { path: label });
    }
    Ok(out)
}

/// The span of the value an entry's error is about (by the words of the
/// message), else its name.
fn entry_span(r: &RawEntry, message: &str) -> std::ops::Range<usize> {
    let s = |o: &Option<Spanned<f64>>| o.as_ref().map(|x| x.span());
    if message.contains("purity") {
        s(&r.purity_pct)
    } else if message.contains("price") {
        Some(r.price_per_kg.span())
    } else if message.contains("available") {
        s(&r.available_kg)
    } else if message.contains("loss on ignition") {
        s(&r.loi_wt_pct)
    } else {
        None
    }
    .unwrap_or_else(|| r.name.span())
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn semicolons_and_decimal_commas_become_an_ordinary_csv() {
        let text = "name;formula;price_per_kg;note\r\nsoda ash;Na2CO3;0,45;\"dense, light\"\nsand;SiO2;1,2e-1;\n";
        assert_eq!(
            semicolon_csv(text).unwrap(),
            "name,formula,price_per_kg,note\r\nsoda ash,Na2CO3,0.45,\"dense, light\"\nsand,SiO2,1.2e-1,\n"
        );
        assert_eq!(semicolon_csv("name,formula\nsand,SiO2\n"), None);
        assert!(
            !is_decimal_comma("1.234,5") && !is_decimal_comma(",5") && is_decimal_comma("-0,5")
        );
    }

    #[test]
    fn the_demo_shelf_reads() {
        let raws = read_raw_materials(None).unwrap();
        assert!(raws.iter().any(|r| r.name == "quartz sand"));
    }
}
