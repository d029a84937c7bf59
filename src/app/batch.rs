//! `quenchwise batch`: the least-cost weigh-out of raw materials for a glass
//! (or for every glass of a table), as a sheet, CSV or JSON.

use super::input;
use super::{in_range, Outcome};
use crate::cli::BatchArgs;
use polars::prelude::{DataFrame, DataType};
use quenchwise::batch::{
    least_cost_batch, Batch, BatchSettings, RawMaterial, MAX_BATCH_TOLERANCE_WT_PCT,
};
use quenchwise::composition::{parse_pairs, Basis, Composition, MAX_SUM_TOLERANCE};
use quenchwise::error::{Error, ResultExt};
use quenchwise::files::raw_materials::read_raw_materials;
use quenchwise::files::recipe::parse_named_recipe;
use quenchwise::files::source::{read_text, Source};
use quenchwise::files::table::read_composition_table;
use quenchwise::report::text::{batch_csv, batch_text, count, DEMO_SHELF_LABEL};
use std::io::Write;

/// One glass to batch: its name (where it has one) and composition, or why
/// its row cannot be read.
pub struct Glass {
    pub name: Option<String>,
    pub composition: Result<Composition, String>,
}

pub fn batch(a: BatchArgs) -> Result<Outcome, Error> {
    in_range(
        "--sum-tolerance",
        a.sum_tolerance,
        (0.0, MAX_SUM_TOLERANCE),
        false,
        "percentage points",
    )?;
    in_range("--glass-kg", a.glass_kg, (0.0, f64::INFINITY), true, "kg")?;
    // At most 10 wt%: a wider tolerance lets a batch miss an oxide entirely.
    in_range(
        "--tolerance-wt-pct",
        a.tolerance_wt_pct,
        (0.0, MAX_BATCH_TOLERANCE_WT_PCT),
        true,
        "wt%",
    )?;
    let settings = settings(a.tolerance_wt_pct, a.retention.as_deref())?;
    let wt = a.wt.as_deref().filter(|t| !t.is_empty());
    let bare_wt = a.wt.as_deref() == Some("");
    let given = [
        a.mol.is_some(),
        wt.is_some(),
        a.recipe.is_some(),
        a.compositions.is_some(),
    ];
    if given.iter().filter(|&&g| g).count() != 1 {
        return Err(Error::bad_input(
            "give exactly one glass: --mol, --wt, --recipe or --compositions",
        ));
    }
    if bare_wt && a.compositions.is_none() {
        return Err(Error::bad_input(
            "--wt without a value reads a --compositions table as wt%; give a composition or a table",
        ));
    }
    let raws = read_raw_materials(a.raw_materials.as_deref())?;
    let shelf = a
        .raw_materials
        .as_ref()
        .map(|p| p.display().to_string())
        .unwrap_or_else(|| DEMO_SHELF_LABEL.into());
    let glasses = match (&a.compositions, &a.recipe) {
        (Some(p), _) => {
            let basis = if bare_wt {
                Basis::WtPercent
            } else {
                Basis::MolPercent
            };
            glasses_of_table(p, basis, a.sum_tolerance)?
        }
        (None, Some(p)) => {
            let text = read_text(p)?;
            let (name, c) = parse_named_recipe(
                &Source::new(p.display().to_string(), &text),
                a.sum_tolerance,
            )?;
            vec![Glass {
                name,
                composition: Ok(c),
            }]
        }
        (None, None) => vec![Glass {
            name: None,
            composition: Ok(input::composition(
                a.mol.as_deref(),
                wt,
                None,
                a.sum_tolerance,
            )?),
        }],
    };
    if a.compositions.is_none() {
        // One glass: its error is the command's error.
        let g = &glasses[0];
        let glass = g
            .composition
            .as_ref()
            .map_err(|e| Error::bad_input(e.clone()))?;
        let sheet = least_cost_batch(&raws, glass, a.glass_kg, &settings)?;
        let text = if a.json {
            to_json(&sheet)?
        } else if a.csv {
            batch_csv(&sheet, "mass_kg")
        } else {
            named_sheet(g.name.as_deref(), &batch_text(&sheet, glass, &shelf))
        };
        write_stdout(&text)?;
        return Ok(Outcome::Finished);
    }
    let sheets = sheets(&raws, &glasses, a.glass_kg, &settings);
    let label = |i: usize| glass_label(&glasses[i], i);
    let text = if a.json {
        let list: Vec<serde_json::Value> = sheets
            .iter()
            .enumerate()
            .map(|(i, s)| match s {
                Ok(b) => serde_json::json!({ "recipe": label(i), "sheet": b }),
                Err(e) => serde_json::json!({ "recipe": label(i), "error": e }),
            })
            .collect();
        serde_json::to_string_pretty(&list)
            .map_err(|e| Error::internal(format!("writing JSON: {e}")))?
            + "\n"
    } else if a.csv {
        let mut out = String::from("recipe,raw_material,mass_kg,cost\n");
        for (i, s) in sheets.iter().enumerate() {
            if let Ok(b) = s {
                let name = format!("\"{}\"", label(i).replace('"', "\"\""));
                for line in batch_csv(b, "mass_kg").lines().skip(1) {
                    out.push_str(&format!("{name},{line}\n"));
                }
            }
        }
        out
    } else {
        let mut out = String::new();
        for (i, s) in sheets.iter().enumerate() {
            out.push_str(&format!(
                "=== {} ({} of {}) ===\n",
                label(i),
                i + 1,
                sheets.len()
            ));
            match (s, &glasses[i].composition) {
                (Ok(b), Ok(c)) => out.push_str(&batch_text(b, c, &shelf)),
                (Err(e), _) | (Ok(_), Err(e)) => out.push_str(&format!("no sheet: {e}\n")),
            }
            out.push('\n');
        }
        out
    };
    write_stdout(&text)?;
    let failed: Vec<String> = sheets
        .iter()
        .enumerate()
        .filter(|(_, s)| s.is_err())
        .map(|(i, _)| label(i))
        .collect();
    if failed.is_empty() {
        Ok(Outcome::Finished)
    } else {
        Err(Error::bad_input(format!(
            "{} of {} {} no batch sheet: {} (the reason is on each sheet)",
            failed.len(),
            count(sheets.len(), "recipe", "recipes"),
            if failed.len() == 1 { "has" } else { "have" },
            failed.join(", ")
        )))
    }
}

/// The batch settings from `--tolerance-wt-pct` and `--retention`.
///
/// # Errors
/// A retention that is not OXIDE=FRACTION with a fraction in (0, 1].
pub fn settings(tolerance_wt_pct: f64, retention: Option<&str>) -> Result<BatchSettings, Error> {
    let mut settings = BatchSettings {
        tolerance_wt_pct,
        ..BatchSettings::default()
    };
    if let Some(r) = retention {
        for (o, v) in parse_pairs(r).context("in --retention")? {
            if !(v > 0.0 && v <= 1.0) {
                return Err(Error::bad_input(format!(
                    "--retention: {o} must be in (0, 1], got {v}"
                )));
            }
            settings.retention[o.index()] = v;
        }
    }
    Ok(settings)
}

/// Every glass of a composition table, with its name (`name`, `id` or
/// `label` column).
///
/// # Errors
/// The table cannot be read (see `read_composition_table`).
pub fn glasses_of_table(
    path: &std::path::Path,
    basis: Basis,
    tolerance: f64,
) -> Result<Vec<Glass>, Error> {
    let (table, _) = read_composition_table(path)?;
    let names = name_column(&table.frame);
    Ok(table
        .rows
        .iter()
        .enumerate()
        .map(|(i, row)| Glass {
            name: names.get(i).cloned().flatten(),
            composition: row.clone().and_then(|pairs| {
                Composition::new(&pairs, basis, tolerance)
                    .map_err(|e| format!("{}: {e}", table.places.row(i)))
            }),
        })
        .collect())
}

/// The recipe names of a table: its `name`, `id` or `label` column.
fn name_column(df: &DataFrame) -> Vec<Option<String>> {
    ["name", "id", "label"]
        .iter()
        .find_map(|c| {
            let col = df.column(c).ok()?.cast(&DataType::String).ok()?;
            let ca = col.str().ok()?.clone();
            Some(ca.iter().map(|v| v.map(str::to_string)).collect())
        })
        .unwrap_or_default()
}

/// A glass's name, or "row N" (1-based) where it has none.
pub fn glass_label(g: &Glass, i: usize) -> String {
    g.name
        .clone()
        .filter(|n| !n.trim().is_empty())
        .unwrap_or_else(|| format!("row {}", i + 1))
}

/// The sheet of every glass, or why it has none.
pub fn sheets(
    raws: &[RawMaterial],
    glasses: &[Glass],
    glass_kg: f64,
    settings: &BatchSettings,
) -> Vec<Result<Batch, String>> {
    glasses
        .iter()
        .map(|g| {
            let c = g.composition.as_ref().map_err(Clone::clone)?;
            least_cost_batch(raws, c, glass_kg, settings).map_err(|e| {
                let e = Error::from(e);
                match e.hint() {
                    Some(h) => format!("{e} (hint: {h})"),
                    None => e.to_string(),
                }
            })
        })
        .collect()
}

/// A sheet headed by its recipe's name, where it has one.
fn named_sheet(name: Option<&str>, sheet: &str) -> String {
    match name {
        Some(n) => format!("recipe         {n}\n{sheet}"),
        None => sheet.to_string(),
    }
}

fn to_json(b: &Batch) -> Result<String, Error> {
    serde_json::to_string_pretty(b)
        .map(|s| s + "\n")
        .map_err(|e| Error::internal(format!("writing JSON: {e}")))
}

fn write_stdout(text: &str) -> Result<(), Error> {
    std::io::stdout()
        .lock()
        .write_all(text.as_bytes())
        .map_err(|e| Error::internal(format!("writing to stdout: {e}")))
}
