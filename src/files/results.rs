//! The result files of a screen, written and read back: the shortlist and
//! candidates tables (columns from `report::records`, defined once), the
//! batch sheets, and what `quenchwise report` needs to draw a finished run.

use super::run_folder::{part_files, part_name, RunFolder, CANDIDATES_DIR};
use super::screen_config::{self, RunPlan};
use super::table::read_frame;
use crate::batch::least_cost_batch;
use crate::composition::{Composition, Oxide, N_OXIDES};
use crate::error::{Error, ResultExt};
use crate::report::html::{ReportRecipe, ScreenReport};
use crate::report::plot::{ProbabilityPoint, TradePoint};
use crate::report::records::{
    csv_digits, equipment_fields, fields, oxide_column, oxide_of_column, oxide_wt_column, rounded,
    Cell, EquipmentColumn, EQUIPMENT_FIELDS_AFTER,
};
use crate::report::text::{batch_csv, batch_text, evaluation_text};
use crate::screen::{evaluate_candidate_with, Pass, Row, ScreenProblem, Shortlisted};
use crate::units::kelvin_to_celsius;
use polars::prelude::*;
use std::path::{Path, PathBuf};

/// The table of every recipe a screen's Monte Carlo stage drew.
pub const DRAWN_TABLE: &str = "drawn-recipes.csv";
/// The shortlist with every digit (what `report` reads back; the CSV file
/// is rounded to meaningful digits).
pub const SHORTLIST_FULL: &str = "shortlist.parquet";

/// The screen's table of rows: `rank` and the result columns for the
/// shortlist; index, pass, feasibility, broken limits, objective, the result
/// columns and the error for the candidates.
///
/// # Errors
/// Polars refuses the columns.
pub(crate) fn rows_frame(
    problem: &ScreenProblem,
    rows: &[&Row],
    with_rank: bool,
) -> PolarsResult<DataFrame> {
    rows_frame_with(problem, rows, with_rank, false)
}

/// As [`rows_frame`], with the Monte Carlo columns after the result columns
/// when `probability` (the shortlist and the drawn recipes of a screen with
/// `[uncertainty]`).
///
/// # Errors
/// Polars refuses the columns.
pub(crate) fn rows_frame_with(
    problem: &ScreenProblem,
    rows: &[&Row],
    with_rank: bool,
    probability: bool,
) -> PolarsResult<DataFrame> {
    let mut cols: Vec<Column> = Vec::new();
    if with_rank {
        cols.push(Column::new(
            "rank".into(),
            (1..=rows.len() as u32).collect::<Vec<_>>(),
        ));
    } else {
        cols.push(Column::new(
            "index".into(),
            rows.iter().map(|r| r.index).collect::<Vec<_>>(),
        ));
        cols.push(Column::new(
            "refined".into(),
            rows.iter().map(|r| r.refined).collect::<Vec<_>>(),
        ));
        cols.push(Column::new(
            "feasible".into(),
            rows.iter().map(|r| r.feasible).collect::<Vec<_>>(),
        ));
        cols.push(Column::new(
            "broken_limits".into(),
            rows.iter().map(|r| r.broken.labels()).collect::<Vec<_>>(),
        ));
        cols.push(Column::new(
            "objective".into(),
            rows.iter().map(|r| r.objective).collect::<Vec<_>>(),
        ));
    }
    for (o, ..) in &problem.oxides {
        cols.push(Column::new(
            oxide_column(*o).into(),
            rows.iter()
                .map(|r| r.mol_pct[o.index()])
                .collect::<Vec<_>>(),
        ));
    }
    if with_rank {
        // What a person weighs: the same recipe in wt%.
        let wt: Vec<Option<[f64; N_OXIDES]>> = rows.iter().map(|r| wt_percent(r)).collect();
        for (o, ..) in &problem.oxides {
            cols.push(Column::new(
                oxide_wt_column(*o).into(),
                wt.iter()
                    .map(|w| w.map(|w| w[o.index()]))
                    .collect::<Vec<_>>(),
            ));
        }
    }
    for f in fields(probability) {
        let cells: Vec<Cell> = rows.iter().map(|r| (f.get)(r)).collect();
        let col = if cells.iter().all(|c| matches!(c, Cell::Num(_))) {
            Column::new(
                f.name.into(),
                cells
                    .iter()
                    .map(|c| match c {
                        Cell::Num(v) => *v,
                        _ => None,
                    })
                    .collect::<Vec<_>>(),
            )
        } else if cells.iter().all(|c| matches!(c, Cell::Bool(_))) {
            Column::new(
                f.name.into(),
                cells
                    .iter()
                    .map(|c| match c {
                        Cell::Bool(v) => *v,
                        _ => None,
                    })
                    .collect::<Vec<_>>(),
            )
        } else {
            Column::new(
                f.name.into(),
                cells
                    .iter()
                    .map(|c| match c {
                        Cell::Text(v) => v.map(str::to_string),
                        Cell::Num(v) => v.map(|x| x.to_string()),
                        Cell::Bool(v) => v.map(|x| x.to_string()),
                    })
                    .collect::<Vec<_>>(),
            )
        };
        cols.push(col);
    }
    // One verdict per quench option, after the deciding option's margin.
    let at = cols
        .iter()
        .position(|c| c.name().as_str() == EQUIPMENT_FIELDS_AFTER)
        .map_or(cols.len(), |i| i + 1);
    for (k, f) in equipment_fields(problem).into_iter().enumerate() {
        let col = if f.is_number() {
            let v: Vec<Option<f64>> = rows
                .iter()
                .map(|r| match f.get(r) {
                    Cell::Num(v) => v,
                    _ => None,
                })
                .collect();
            Column::new(f.name.as_str().into(), v)
        } else {
            let v: Vec<Option<bool>> = rows
                .iter()
                .map(|r| match f.get(r) {
                    Cell::Bool(v) => v,
                    _ => None,
                })
                .collect();
            Column::new(f.name.as_str().into(), v)
        };
        cols.insert(at + k, col);
    }
    if with_rank {
        // The melting criterion beside the melting temperature
        // (`[furnace] melting_viscosity_pa_s`).
        if let Some(at) = cols
            .iter()
            .position(|c| c.name().as_str() == "melting_temperature_c")
        {
            let v = problem.models.melting_viscosity_pa_s;
            cols.insert(
                at + 1,
                Column::new("melting_viscosity_pa_s".into(), vec![Some(v); rows.len()]),
            );
        }
    }
    if !with_rank {
        cols.push(Column::new(
            "error".into(),
            rows.iter().map(|r| r.error.clone()).collect::<Vec<_>>(),
        ));
    }
    DataFrame::new_infer_height(cols)
}

/// A row's composition in wt% (None if it is not a composition).
fn wt_percent(r: &Row) -> Option<[f64; N_OXIDES]> {
    Composition::from_mol_percent_array(&r.composition(), 1e-3)
        .ok()
        .map(|c| c.wt_percent())
}

/// The frame as a CSV file shows it: every number column rounded to its
/// meaningful digits ([`csv_digits`]), and the warnings every row carries
/// replaced by their codes (`codes`: text → code; the legend goes to
/// summary.txt).
///
/// # Errors
/// Polars refuses a column.
pub fn csv_frame(df: &DataFrame, codes: &[(String, String)]) -> PolarsResult<DataFrame> {
    let mut cols: Vec<Column> = Vec::with_capacity(df.width());
    for c in df.columns() {
        let name = c.name().to_string();
        let col = match (csv_digits(&name), c.dtype()) {
            (Some(d), DataType::Float64) => {
                let v: Vec<Option<f64>> =
                    c.f64()?.iter().map(|x| x.map(|x| rounded(x, d))).collect();
                Column::new(name.as_str().into(), v)
            }
            (_, DataType::String) if name == "warnings" && !codes.is_empty() => {
                let v: Vec<Option<String>> = c
                    .str()?
                    .iter()
                    .map(|w| w.map(|w| coded_warnings(w, codes)))
                    .collect();
                Column::new(name.as_str().into(), v)
            }
            _ => c.clone(),
        };
        cols.push(col);
    }
    DataFrame::new_infer_height(cols)
}

/// The warnings every one of several rows carries, each with its code
/// (`W1`, `W2`, ... in the order of the first row): stated once in the
/// summary, written as the code in each row of the CSV file.
pub(crate) fn common_warnings(rows: &[&Row]) -> Vec<(String, String)> {
    if rows.len() < 2 {
        return Vec::new();
    }
    let split = |w: &str| -> Vec<String> {
        w.split("; ")
            .filter(|p| !p.is_empty())
            .map(str::to_string)
            .collect()
    };
    let first = split(&rows[0].warnings);
    first
        .into_iter()
        .filter(|w| rows.iter().all(|r| split(&r.warnings).contains(w)))
        .enumerate()
        .map(|(i, w)| (w, format!("W{}", i + 1)))
        .collect()
}

/// A row's warnings with the common ones replaced by their codes.
fn coded_warnings(w: &str, codes: &[(String, String)]) -> String {
    w.split("; ")
        .filter(|p| !p.is_empty())
        .map(|p| {
            codes
                .iter()
                .find(|(t, _)| t == p)
                .map_or(p, |(_, c)| c.as_str())
        })
        .collect::<Vec<_>>()
        .join("; ")
}

/// The shortlist as JSON: one object per recipe, its keys in the order of
/// the shortlist's table (`df`, from [`rows_frame_with`], every digit):
/// rank, composition in mol% then wt%, the decisive numbers, the rest,
/// warnings last, as shortlist.csv has them.
pub(crate) fn shortlist_json(df: &DataFrame) -> String {
    let rows: Vec<OrderedObject> = (0..df.height())
        .map(|i| {
            OrderedObject(
                df.columns()
                    .iter()
                    .map(|c| (c.name().to_string(), json_value(c.get(i).ok())))
                    .collect(),
            )
        })
        .collect();
    serde_json::to_string_pretty(&rows).unwrap_or_else(|_| "[]".into())
}

/// A JSON object that keeps its keys in the order given (serde_json's own
/// map sorts them).
struct OrderedObject(Vec<(String, serde_json::Value)>);

impl serde::Serialize for OrderedObject {
    fn serialize<S: serde::Serializer>(&self, s: S) -> Result<S::Ok, S::Error> {
        use serde::ser::SerializeMap;
        let mut m = s.serialize_map(Some(self.0.len()))?;
        for (k, v) in &self.0 {
            m.serialize_entry(k, v)?;
        }
        m.end()
    }
}

/// One cell of a table as JSON (null where empty or not a number, text or
/// yes/no).
fn json_value(v: Option<AnyValue<'_>>) -> serde_json::Value {
    let Some(v) = v else {
        return serde_json::Value::Null;
    };
    match v {
        AnyValue::Null => serde_json::Value::Null,
        AnyValue::Boolean(b) => b.into(),
        AnyValue::UInt32(n) => n.into(),
        AnyValue::UInt64(n) => n.into(),
        AnyValue::Int32(n) => n.into(),
        AnyValue::Int64(n) => n.into(),
        other => match other.get_str() {
            Some(t) => t.into(),
            None => other
                .extract::<f64>()
                .map(serde_json::Value::from)
                .unwrap_or_default(),
        },
    }
}

/// The least-cost batch sheet of a glass (text and CSV), when the plan prices glasses.
fn batch_sheet(plan: &RunPlan, comp: &Composition) -> Result<Option<(String, String)>, Error> {
    let (Some(model), Some(limit)) = (&plan.batch_model, &plan.problem.cost) else {
        return Ok(None);
    };
    let b = least_cost_batch(&model.raws, comp, plan.batch_glass_kg, &model.settings)?;
    let text = batch_text(&b, comp, &limit.label);
    let csv = batch_csv(&b, "mass_kg");
    Ok(Some((text, csv)))
}

/// Write `batch-sheets/rank-NN.txt` (and `.csv` when priced) for the shortlist.
///
/// # Errors
/// A write fails, or a batch cannot be made.
pub(crate) fn write_batch_sheets(
    plan: &RunPlan,
    folder: &RunFolder,
    shortlist: &[Shortlisted],
) -> Result<(), Error> {
    folder.sub_folder("batch-sheets")?;
    for (i, s) in shortlist.iter().enumerate() {
        let Some(e) = &s.candidate.evaluation else {
            continue;
        };
        let comp = Composition::from_mol_percent_array(&s.row.composition(), 1e-6)?;
        let mut text = evaluation_text(e);
        text.push_str(&format!("\n{}\n", crate::report::CAUTION));
        if let Some((sheet, csv)) = batch_sheet(plan, &comp)? {
            text.push('\n');
            text.push_str(&sheet);
            folder.write(
                &format!("batch-sheets/rank-{:02}.csv", i + 1),
                csv.as_bytes(),
            )?;
        }
        folder.write(
            &format!("batch-sheets/rank-{:02}.txt", i + 1),
            text.as_bytes(),
        )?;
    }
    Ok(())
}

/// A number column of a table, if it has one by that name.
fn number_column(
    df: &DataFrame,
    name: &str,
    file: &str,
) -> Result<Option<Vec<Option<f64>>>, Error> {
    let Ok(c) = df.column(name) else {
        return Ok(None);
    };
    let bad = |e: PolarsError| Error::bad_input(format!("{file}: column {name}: {e}"));
    let v = c.cast(&DataType::Float64).map_err(bad)?;
    Ok(Some(v.f64().map_err(bad)?.iter().collect()))
}

/// The Monte Carlo columns of shortlist.csv, put back on the re-evaluated
/// rows (a screen without `[uncertainty]` has none).
fn restore_probability(
    dir: &Path,
    problem: &ScreenProblem,
    rows: &mut [&mut Row],
) -> Result<(), Error> {
    let file = SHORTLIST_FULL;
    let df = read_frame(&dir.join(file))?;
    let p = number_column(&df, "probability_glassy", file)?;
    let p_lower = number_column(&df, "probability_glassy_lower95", file)?;
    // Each quench option's probability, where the probability decides.
    let mut per_option = Vec::new();
    for f in equipment_fields(problem)
        .into_iter()
        .filter(|f| f.kind == EquipmentColumn::Probability)
    {
        per_option.push(number_column(&df, &f.name, file)?);
    }
    let lo = number_column(&df, "critical_rate_p05_k_per_s", file)?;
    let hi = number_column(&df, "critical_rate_p95_k_per_s", file)?;
    let vouched: Option<Vec<Option<bool>>> = df
        .column("band_vouched")
        .ok()
        .and_then(|c| c.bool().ok().map(|b| b.iter().collect()));
    for (i, r) in rows.iter_mut().enumerate() {
        let at =
            |c: &Option<Vec<Option<f64>>>| c.as_ref().and_then(|v| v.get(i).copied().flatten());
        r.probability_glassy = at(&p);
        r.probability_glassy_lower95 = at(&p_lower);
        r.probability_glassy_with = if per_option.iter().any(Option::is_some) {
            per_option.iter().map(at).collect()
        } else {
            Vec::new()
        };
        r.critical_rate_p05_k_per_s = at(&lo);
        r.critical_rate_p95_k_per_s = at(&hi);
        r.band_vouched = vouched.as_ref().and_then(|v| v.get(i).copied().flatten());
    }
    Ok(())
}

/// Every recipe the Monte Carlo stage drew against cost per kg (or, for a
/// screen without prices, melting temperature in °C), the shortlist marked.
fn probability_points(
    dir: &Path,
    short: &[ReportRecipe],
    by_cost: bool,
) -> Result<Vec<ProbabilityPoint>, Error> {
    let path = dir.join(DRAWN_TABLE);
    if !path.exists() {
        return Ok(Vec::new());
    }
    let df = read_frame(&path)?;
    let x_name = if by_cost {
        "cost_per_kg"
    } else {
        "melting_temperature_k"
    };
    let x = number_column(&df, x_name, DRAWN_TABLE)?.unwrap_or_default();
    let p = number_column(&df, "probability_glassy", DRAWN_TABLE)?.unwrap_or_default();
    let shown = |v: f64| if by_cost { v } else { kelvin_to_celsius(v) };
    let mut out: Vec<ProbabilityPoint> = x
        .iter()
        .zip(&p)
        .filter_map(|(x, p)| {
            Some(ProbabilityPoint {
                x: shown((*x)?),
                probability: (*p)?,
                shortlisted: false,
            })
        })
        .collect();
    for s in short {
        let x = if by_cost {
            s.row.cost_per_kg
        } else {
            s.row.melting_temperature_k
        };
        if let (Some(x), Some(p)) = (x, s.row.probability_glassy) {
            out.push(ProbabilityPoint {
                x: shown(x),
                probability: p,
                shortlisted: true,
            });
        }
    }
    Ok(out)
}

/// The shortlisted compositions as written to shortlist.parquet (every
/// digit; the CSV file is rounded), in rank order.
fn read_shortlist(dir: &Path) -> Result<Vec<Vec<(Oxide, f64)>>, Error> {
    let df = read_frame(&dir.join(SHORTLIST_FULL))?;
    let mut cols = Vec::new();
    for name in df.get_column_names() {
        if let Some(o) = oxide_of_column(name.as_str()) {
            let v = df
                .column(name.as_str())
                .and_then(|c| c.cast(&DataType::Float64))
                .map_err(|e| Error::bad_input(format!("{SHORTLIST_FULL}: {e}")))?;
            let v = v
                .f64()
                .map_err(|e| Error::bad_input(format!("{SHORTLIST_FULL}: {e}")))?
                .iter()
                .map(|x| x.unwrap_or(0.0))
                .collect::<Vec<_>>();
            cols.push((o, v));
        }
    }
    Ok((0..df.height())
        .map(|i| cols.iter().map(|(o, v)| (*o, v[i])).collect())
        .collect())
}

fn open_file(path: &Path) -> Result<std::fs::File, Error> {
    std::fs::File::open(path).map_err(|e| Error::io("reading", path, e))
}

/// The candidates table of a run folder: the files of `candidates/` in
/// row order (their names sort as their rows do), or the single
/// `candidates.parquet` of a folder written before the table was split.
///
/// # Errors
/// The folder holds neither, `candidates/` cannot be listed, holds no part,
/// or a part is missing.
pub fn candidate_files(dir: &Path) -> Result<Vec<PathBuf>, Error> {
    let parts = dir.join(CANDIDATES_DIR);
    if parts.is_dir() {
        let files = part_files(&parts).map_err(|e| Error::io("listing", &parts, e))?;
        // Numbered from 0 without a gap: a part lost in a copy is named.
        for (n, f) in files.iter().enumerate() {
            if f.file_name().and_then(|x| x.to_str()) != Some(part_name(n).as_str()) {
                return Err(Error::bad_input(format!(
                    "{}: {} is missing (the parts are numbered from 0 without gaps)",
                    parts.display(),
                    part_name(n)
                )));
            }
        }
        if files.is_empty() {
            return Err(Error::bad_input(format!(
                "{} holds no part-NNNNNN.parquet files",
                parts.display()
            )));
        }
        return Ok(files);
    }
    let single = dir.join("candidates.parquet");
    if single.is_file() {
        return Ok(vec![single]);
    }
    Err(Error::bad_input(format!(
        "{} holds no candidates table ({CANDIDATES_DIR}/)",
        dir.display()
    ))
    .with_hint("the table is written when a screen finishes; run or --resume the screen first"))
}

/// The whole candidates table of a run folder as one frame, parts in order
/// (for tests and small runs: a 10⁸-candidate table is some 11 GB).
///
/// # Errors
/// As [`candidate_files`]; a part that cannot be read.
pub fn read_candidates(dir: &Path) -> Result<DataFrame, Error> {
    let mut all: Option<DataFrame> = None;
    for f in candidate_files(dir)? {
        let df = read_frame(&f)?;
        match all.as_mut() {
            Some(a) => {
                a.vstack_mut(&df)
                    .map_err(|e| Error::bad_input(format!("{}: {e}", f.display())))?;
            }
            None => all = Some(df),
        }
    }
    let mut all = all.unwrap_or_default();
    all.rechunk_mut();
    Ok(all)
}

/// Every candidate (thinned to at most about 4000) against cost and against
/// melting temperature, and the shortlisted recipes marked.
///
/// The candidates table grows with the screen (10⁸ rows overnight), so it is
/// read one row group at a time, only the four columns drawn, keeping every
/// `stride`-th row: memory stays that of a row group.
fn trade_points(
    dir: &Path,
    short: &[ReportRecipe],
) -> Result<(Vec<TradePoint>, Vec<TradePoint>), Error> {
    let mut files = Vec::new();
    for path in candidate_files(dir)? {
        let metadata = ParquetReader::new(open_file(&path)?)
            .get_metadata()
            .map_err(|e| Error::bad_input(format!("{}: {e}", path.display())))?
            .clone();
        let groups: Vec<usize> = metadata.row_groups.iter().map(|g| g.num_rows()).collect();
        files.push((path, metadata, groups));
    }
    let height: usize = files.iter().flat_map(|f| &f.2).sum();
    // A fixed stride keeps the file small and the picture reproducible.
    let stride = (height / 4000).max(1);
    let mut by_cost = Vec::new();
    let mut by_tm = Vec::new();
    let mut add = |rc: Option<f64>, c: Option<f64>, t: Option<f64>, feasible, shortlisted| {
        if let Some(r) = rc {
            if let Some(c) = c {
                by_cost.push(TradePoint {
                    x: c,
                    critical_rate: r,
                    feasible,
                    shortlisted,
                });
            }
            if let Some(t) = t {
                by_tm.push(TradePoint {
                    x: kelvin_to_celsius(t),
                    critical_rate: r,
                    feasible,
                    shortlisted,
                });
            }
        }
    };
    let columns = [
        "critical_rate_k_per_s",
        "cost_per_kg",
        "melting_temperature_k",
        "feasible",
    ];
    let mut first = 0;
    for (path, metadata, groups) in files {
        let bad = |e: PolarsError| Error::bad_input(format!("{}: {e}", path.display()));
        let mut at = 0;
        for len in groups {
            let mut reader = ParquetReader::new(open_file(&path)?)
                .with_slice(Some((at, len)))
                .with_columns(Some(columns.iter().map(|c| c.to_string()).collect()));
            reader.set_metadata(metadata.clone());
            let df = reader.finish().map_err(bad)?;
            let get = |n: &str| -> Result<Vec<Option<f64>>, Error> {
                Ok(df
                    .column(n)
                    .and_then(|c| c.cast(&DataType::Float64))
                    .map_err(bad)?
                    .f64()
                    .map_err(bad)?
                    .iter()
                    .collect())
            };
            let rc = get("critical_rate_k_per_s")?;
            let cost = get("cost_per_kg")?;
            let tm = get("melting_temperature_k")?;
            let feasible: Vec<bool> = df
                .column("feasible")
                .map_err(bad)?
                .bool()
                .map_err(bad)?
                .iter()
                .map(|b| b.unwrap_or(false))
                .collect();
            // Rows first, first + stride, ... of the table that fall in this group.
            let skip = (stride - first % stride) % stride;
            for i in (skip..df.height()).step_by(stride) {
                add(rc[i], cost[i], tm[i], feasible[i], false);
            }
            first += len;
            at += len;
        }
    }
    for s in short {
        let r = &s.row;
        add(
            r.critical_rate_k_per_s,
            r.cost_per_kg,
            r.melting_temperature_k,
            true,
            true,
        );
    }
    Ok((by_cost, by_tm))
}

/// Everything `report` needs from a finished run's folder: the plan as run,
/// the shortlist re-evaluated from its compositions, the trade-offs and the
/// summary.
///
/// # Errors
/// The folder holds no finished screen, or its files cannot be read.
pub(crate) fn read_finished_run(dir: &Path) -> Result<(RunPlan, Vec<ReportRecipe>, String), Error> {
    if !dir.join("provenance.json").exists() {
        return Err(Error::bad_input(format!(
            "{} holds no screen results (no provenance.json)",
            dir.display()
        ))
        .with_hint("give the --out folder of a finished `quenchwise screen` run"));
    }
    let prov_path = dir.join("provenance.json");
    let text =
        std::fs::read_to_string(&prov_path).map_err(|e| Error::io("reading", &prov_path, e))?;
    let prov: serde_json::Value = serde_json::from_str(&text)
        .map_err(|e| Error::bad_input(format!("{}: {e}", prov_path.display())))?;
    let base = prov["config_dir"].as_str().map(PathBuf::from);
    let plan = screen_config::load_with_base(&dir.join("config-as-run.toml"), base.as_deref())?;
    let problem = &plan.problem;
    let mut recipes = Vec::new();
    for (i, listed) in read_shortlist(dir)?.into_iter().enumerate() {
        let mut x = [0.0; N_OXIDES];
        for &(o, v) in &listed {
            x[o.index()] = v;
        }
        let comp = Composition::from_mol_percent_array(&x, 1e-3)
            .with_context(|| format!("{SHORTLIST_FULL}, rank {}", i + 1))?;
        let c = evaluate_candidate_with(
            problem,
            i as u64,
            Pass::SpaceFilling,
            x,
            Some(crate::assess::SlabQuench::default()),
        );
        let row = Row::new(&c, problem);
        let evaluation = c.evaluation.ok_or_else(|| {
            c.error
                .clone()
                .unwrap_or_else(|| "the chain could not be evaluated".into())
        });
        let batch = batch_sheet(&plan, &comp).ok().flatten().map(|(t, _)| t);
        recipes.push(ReportRecipe {
            rank: i + 1,
            mol_pct: listed,
            row,
            evaluation,
            batch_text: batch,
        });
    }
    let mut rows: Vec<&mut Row> = recipes.iter_mut().map(|r| &mut r.row).collect();
    restore_probability(dir, &plan.problem, &mut rows)?;
    let summary = std::fs::read_to_string(dir.join("summary.txt")).unwrap_or_default();
    Ok((plan, recipes, summary))
}

/// Write `DIR/report.html` for a finished screen and return its path.
///
/// # Errors
/// Missing or unreadable result files, or a config that no longer loads.
pub fn write_report(folder: &RunFolder) -> Result<PathBuf, Error> {
    let dir = folder.root();
    let (plan, recipes, summary) = read_finished_run(dir)?;
    let (by_cost, by_melting) = trade_points(dir, &recipes)?;
    let by_probability = probability_points(dir, &recipes, plan.problem.cost.is_some())?;
    let html = crate::report::html::screen_report_html(&ScreenReport {
        problem: &plan.problem,
        seed: plan.search.seed,
        recipes,
        by_cost,
        by_melting,
        by_probability,
        summary,
    });
    folder.write("report.html", html.as_bytes())
}

#[cfg(test)]
mod tests {
    use super::*;

    /// Rows `rows` of a candidates table with the columns the trade-off
    /// plot draws: row i costs i per kg, melts at 1000 + i K, has R_c = i + 1
    /// K/s and is feasible when i is even.
    fn table(rows: std::ops::Range<usize>) -> DataFrame {
        let i: Vec<f64> = rows.clone().map(|i| i as f64).collect();
        df!(
            "critical_rate_k_per_s" => i.iter().map(|v| v + 1.0).collect::<Vec<_>>(),
            "cost_per_kg" => i.clone(),
            "melting_temperature_k" => i.iter().map(|v| 1000.0 + v).collect::<Vec<_>>(),
            "feasible" => rows.map(|i| i % 2 == 0).collect::<Vec<_>>(),
        )
        .unwrap()
    }

    /// A run folder holding `parts` (rows from..to) as candidates/part-NNNNNN.parquet.
    fn folder(name: &str, parts: &[(usize, usize)], group_rows: usize) -> PathBuf {
        let d = std::env::temp_dir().join(format!("qw-trade-{name}-{}", std::process::id()));
        let _ = std::fs::remove_dir_all(&d);
        std::fs::create_dir_all(d.join(CANDIDATES_DIR)).unwrap();
        for (n, &(from, to)) in parts.iter().enumerate() {
            let f = std::fs::File::create(d.join(CANDIDATES_DIR).join(part_name(n))).unwrap();
            ParquetWriter::new(f)
                .with_row_group_size(Some(group_rows))
                .finish(&mut table(from..to))
                .unwrap();
        }
        d
    }

    #[test]
    fn the_plot_thins_the_same_rows_however_the_table_is_cut() {
        // Source: the table itself (row i costs i), so the rows drawn are
        // known by construction. 12 001 rows: every 3rd row is drawn (about
        // 4000 points). Parts and row groups whose sizes are not multiples
        // of 3.
        let whole = folder("whole", &[(0, 12_001)], 1000);
        let cut = folder("cut", &[(0, 1237), (1237, 4238), (4238, 12_001)], 500);
        let (a_cost, a_tm) = trade_points(&whole, &[]).unwrap();
        let (b_cost, b_tm) = trade_points(&cut, &[]).unwrap();
        let drawn: Vec<f64> = (0..12_001).step_by(3).map(|i| i as f64).collect();
        assert_eq!(a_cost.iter().map(|p| p.x).collect::<Vec<_>>(), drawn);
        assert_eq!(a_cost, b_cost);
        assert_eq!(a_tm, b_tm);
        assert!(b_cost
            .iter()
            .all(|p| p.feasible == (p.x as usize).is_multiple_of(2)));
        for d in [whole, cut] {
            let _ = std::fs::remove_dir_all(d);
        }
    }

    #[test]
    fn a_missing_part_or_an_empty_table_is_named() {
        let d = folder("gap", &[(0, 10), (10, 20), (20, 30)], 10);
        std::fs::remove_file(d.join(CANDIDATES_DIR).join(part_name(1))).unwrap();
        let e = candidate_files(&d).unwrap_err().message().to_string();
        assert!(e.contains("part-000001.parquet is missing"), "{e}");
        for n in [0, 2] {
            std::fs::remove_file(d.join(CANDIDATES_DIR).join(part_name(n))).unwrap();
        }
        let e = candidate_files(&d).unwrap_err().message().to_string();
        assert!(e.contains("holds no part-NNNNNN.parquet files"), "{e}");
        let _ = std::fs::remove_dir_all(d);
    }
}
