//! `quenchwise batch`: the least-cost weigh-out of raw materials for a glass,
//! as a sheet, CSV or JSON.

use super::input;
use super::{in_range, Outcome};
use crate::cli::BatchArgs;
use quenchwise::batch::{least_cost_batch, BatchSettings, MAX_BATCH_TOLERANCE_WT_PCT};
use quenchwise::composition::{parse_pairs, MAX_SUM_TOLERANCE};
use quenchwise::error::{Error, ResultExt};
use quenchwise::files::raw_materials::read_raw_materials;
use quenchwise::report::text::{batch_csv, batch_text, DEMO_SHELF_LABEL};
use std::io::Write;

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
    let glass = input::composition(
        a.mol.as_deref(),
        a.wt.as_deref(),
        a.recipe.as_deref(),
        a.sum_tolerance,
    )?;
    let mut settings = BatchSettings {
        tolerance_wt_pct: a.tolerance_wt_pct,
        ..BatchSettings::default()
    };
    if let Some(r) = &a.retention {
        for (o, v) in parse_pairs(r).context("in --retention")? {
            if !(v > 0.0 && v <= 1.0) {
                return Err(Error::bad_input(format!(
                    "--retention: {o} must be in (0, 1], got {v}"
                )));
            }
            settings.retention[o.index()] = v;
        }
    }
    let raws = read_raw_materials(a.raw_materials.as_deref())?;
    let sheet = least_cost_batch(&raws, &glass, a.glass_kg, &settings)?;
    let shelf = a
        .raw_materials
        .as_ref()
        .map(|p| p.display().to_string())
        .unwrap_or_else(|| DEMO_SHELF_LABEL.into());
    let text = if a.json {
        serde_json::to_string_pretty(&sheet)
            .map_err(|e| Error::internal(format!("writing JSON: {e}")))?
            + "\n"
    } else if a.csv {
        batch_csv(&sheet, "mass_kg")
    } else {
        batch_text(&sheet, &glass, &shelf)
    };
    std::io::stdout()
        .lock()
        .write_all(text.as_bytes())
        .map_err(|e| Error::internal(format!("writing to stdout: {e}")))?;
    Ok(Outcome::Finished)
}
