//! `quenchwise eval --compositions FILE --against CONFIG.toml --out TABLE`:
//! recipes the user already has in mind, checked against a screen's limits
//! (pass or fail and the margin of each, the cost), with a batch sheet for
//! each recipe the price list can make.

use super::batch::{glass_label, glasses_of_table, Glass};
use super::progress::Progress;
use super::Outcome;
use polars::prelude::{Column, DataFrame};
use quenchwise::assess::SlabQuench;
use quenchwise::batch::least_cost_batch;
use quenchwise::composition::Basis;
use quenchwise::error::Error;
use quenchwise::files::results::csv_frame;
use quenchwise::files::screen_config::load;
use quenchwise::files::table::write_frame;
use quenchwise::report::records::{equipment_fields, Cell};
use quenchwise::report::sig;
use quenchwise::report::text::batch_text;
use quenchwise::screen::check::{check_recipe, RecipeCheck};
use quenchwise::screen::ScreenProblem;
use quenchwise::units::Kelvin;
use rayon::prelude::*;
use std::io::Write;
use std::path::{Path, PathBuf};

/// Check every recipe of `table` against the limits of `config`.
///
/// # Errors
/// The config or the table cannot be read; the table cannot be written.
pub fn against(
    table: &Path,
    config: &Path,
    out: &Path,
    basis: Basis,
    sum_tolerance: f64,
) -> Result<Outcome, Error> {
    let plan = load(config)?;
    let problem = &plan.problem;
    let glasses = glasses_of_table(table, basis, sum_tolerance)?;
    let progress = Progress::new("", "recipes", glasses.len(), 0, false);
    let checks: Vec<Result<RecipeCheck, String>> = glasses
        .par_iter()
        .map(|g| {
            let r = g
                .composition
                .as_ref()
                .map_err(Clone::clone)
                .map(|c| check_recipe(problem, c.mol_percent(), Some(SlabQuench::default())));
            progress.inc();
            r
        })
        .collect();
    progress.finish();
    let mut df = frame(problem, &glasses, &checks)
        .map_err(|e| Error::internal(format!("assembling the results table: {e}")))?;
    if out
        .extension()
        .is_some_and(|e| e.eq_ignore_ascii_case("csv"))
    {
        // A CSV file shows meaningful digits; Parquet keeps every one.
        df = csv_frame(&df, &[])
            .map_err(|e| Error::internal(format!("rounding the results table: {e}")))?;
    }
    write_frame(out, &mut df)?;
    // Batch sheets, for the config's [batch] glass_kg, where it prices glasses.
    let glass_kg = plan.batch_glass_kg;
    let sheets_path = plan.batch_model.as_ref().map(|model| {
        let mut text = String::new();
        for (i, g) in glasses.iter().enumerate() {
            text.push_str(&format!("=== {} ===\n", glass_label(g, i)));
            match &g.composition {
                Ok(c) => match least_cost_batch(&model.raws, c, glass_kg, &model.settings) {
                    Ok(b) => {
                        let label = problem.cost.as_ref().map_or("", |c| c.label.as_str());
                        text.push_str(&batch_text(&b, c, label));
                    }
                    Err(e) => text.push_str(&format!("no sheet: {e}\n")),
                },
                Err(e) => text.push_str(&format!("no sheet: {e}\n")),
            }
            text.push('\n');
        }
        (sheets_file(out), text)
    });
    if let Some((p, text)) = &sheets_path {
        std::fs::write(p, text).map_err(|e| Error::io("writing", p, e))?;
    }
    let summary = summary(
        problem,
        &glasses,
        &checks,
        config,
        out,
        sheets_path.as_ref().map(|s| (&s.0, glass_kg)),
    );
    std::io::stdout()
        .lock()
        .write_all(summary.as_bytes())
        .map_err(|e| Error::internal(format!("writing to stdout: {e}")))?;
    Ok(Outcome::Finished)
}

/// `results.csv` → `results-batch-sheets.txt`, beside it.
fn sheets_file(out: &Path) -> PathBuf {
    let stem = out
        .file_stem()
        .map_or("recipes".into(), |s| s.to_string_lossy().into_owned());
    out.with_file_name(format!("{stem}-batch-sheets.txt"))
}

/// The limit keys of every row, in the order they first appear.
fn keys(checks: &[Result<RecipeCheck, String>]) -> Vec<(&'static str, &'static str, bool)> {
    let mut keys: Vec<(&'static str, &'static str, bool)> = Vec::new();
    for c in checks.iter().flatten() {
        for l in &c.checks {
            if !keys.iter().any(|k| k.0 == l.key) {
                keys.push((l.key, l.unit, l.margin.is_some()));
            } else if l.margin.is_some() {
                if let Some(k) = keys.iter_mut().find(|k| k.0 == l.key) {
                    k.2 = true;
                }
            }
        }
    }
    keys
}

/// One row per recipe: its name, whether it passes every limit, which it
/// fails, a pass and a margin column per limit, then the decisive numbers.
fn frame(
    problem: &ScreenProblem,
    glasses: &[Glass],
    checks: &[Result<RecipeCheck, String>],
) -> polars::prelude::PolarsResult<DataFrame> {
    let n = glasses.len();
    let mut cols: Vec<Column> = vec![
        Column::new(
            "recipe".into(),
            (0..n)
                .map(|i| glass_label(&glasses[i], i))
                .collect::<Vec<_>>(),
        ),
        Column::new(
            "passes_every_limit".into(),
            checks
                .iter()
                .map(|c| c.as_ref().map(RecipeCheck::passes).unwrap_or(false))
                .collect::<Vec<_>>(),
        ),
        Column::new(
            "failed_limits".into(),
            checks
                .iter()
                .map(|c| match c {
                    Ok(c) => c.failed().join(" "),
                    Err(_) => "input".to_string(),
                })
                .collect::<Vec<_>>(),
        ),
    ];
    for (key, unit, has_margin) in keys(checks) {
        let find = |c: &Result<RecipeCheck, String>| {
            c.as_ref()
                .ok()
                .and_then(|c| c.checks.iter().find(|l| l.key == key).cloned())
        };
        cols.push(Column::new(
            format!("{key}_pass").into(),
            checks
                .iter()
                .map(|c| find(c).map(|l| l.pass))
                .collect::<Vec<_>>(),
        ));
        if has_margin {
            cols.push(Column::new(
                format!("{key}_margin_{unit}").into(),
                checks
                    .iter()
                    .map(|c| find(c).and_then(|l| l.margin))
                    .collect::<Vec<_>>(),
            ));
        }
    }
    // A verdict and a margin per quench option, when the config lists several.
    for f in equipment_fields(problem) {
        let cells = checks.iter().map(|c| {
            let c = c.as_ref().ok();
            f.cell(
                c.and_then(|c| c.candidate.evaluation.as_ref())
                    .map(|e| e.critical_rate_k_per_s),
                c.map_or(&[][..], |c| &c.probability_glassy_with),
            )
        });
        let col = if f.is_number() {
            let v: Vec<Option<f64>> = cells
                .map(|c| match c {
                    Cell::Num(v) => v,
                    _ => None,
                })
                .collect();
            Column::new(f.name.as_str().into(), v)
        } else {
            let v: Vec<Option<bool>> = cells
                .map(|c| match c {
                    Cell::Bool(v) => v,
                    _ => None,
                })
                .collect();
            Column::new(f.name.as_str().into(), v)
        };
        cols.push(col);
    }
    let evaluations: Vec<Option<&quenchwise::assess::Evaluation>> = checks
        .iter()
        .map(|c| {
            c.as_ref()
                .ok()
                .and_then(|c| c.candidate.evaluation.as_ref())
        })
        .collect();
    let eval = |f: &dyn Fn(&quenchwise::assess::Evaluation) -> Option<f64>| {
        evaluations
            .iter()
            .map(|e| e.and_then(f).filter(|v| v.is_finite()))
            .collect::<Vec<_>>()
    };
    cols.push(Column::new(
        "critical_rate_k_per_s".into(),
        eval(&|e| Some(e.critical_rate_k_per_s)),
    ));
    cols.push(Column::new(
        "liquidus_c".into(),
        eval(&|e| Some(e.liquidus_c)),
    ));
    cols.push(Column::new(
        "melting_temperature_c".into(),
        eval(&|e| e.melting_temperature_k.map(|t| Kelvin(t).to_celsius().0)),
    ));
    // The criterion beside it ([furnace] melting_viscosity_pa_s).
    cols.push(Column::new(
        "melting_viscosity_pa_s".into(),
        eval(&|e| e.melting_viscosity_pa_s),
    ));
    cols.push(Column::new(
        "cost_per_kg_glass".into(),
        checks
            .iter()
            .map(|c| c.as_ref().ok().and_then(|c| c.candidate.cost_per_kg))
            .collect::<Vec<_>>(),
    ));
    // What the evaluation warns of (an invented model set, a result beyond
    // what the model can vouch for), as in the plain eval table.
    cols.push(Column::new(
        "warnings".into(),
        evaluations
            .iter()
            .map(|e| e.map(|e| e.warnings.join("; ")))
            .collect::<Vec<_>>(),
    ));
    cols.push(Column::new(
        "error".into(),
        checks
            .iter()
            .map(|c| match c {
                Ok(c) => c.candidate.error.clone(),
                Err(e) => Some(e.clone()),
            })
            .collect::<Vec<_>>(),
    ));
    DataFrame::new_infer_height(cols)
}

/// The terminal summary: one line per recipe, then the count.
fn summary(
    problem: &ScreenProblem,
    glasses: &[Glass],
    checks: &[Result<RecipeCheck, String>],
    config: &Path,
    out: &Path,
    sheets: Option<(&PathBuf, f64)>,
) -> String {
    let mut s = format!(
        "recipes checked against the limits of {} (melting temperature where the viscosity is {})\n\n{:<28} {:<6} {}\n",
        config.display(),
        quenchwise::report::text::pa_s(problem.models.melting_viscosity_pa_s),
        "recipe",
        "verdict",
        "limits failed (margin; negative = outside)"
    );
    let mut passed = 0;
    for (i, c) in checks.iter().enumerate() {
        let name: String = glass_label(&glasses[i], i).chars().take(28).collect();
        match c {
            Ok(c) if c.passes() => {
                passed += 1;
                s.push_str(&format!("{name:<28} {:<6} -\n", "pass"));
            }
            Ok(c) => {
                let failed: Vec<String> = c
                    .checks
                    .iter()
                    .filter(|l| !l.pass)
                    .map(|l| match l.margin {
                        Some(m) => format!("{} ({} {})", l.key, sig(m), unit_text(l.unit)),
                        None => l.key.to_string(),
                    })
                    .collect();
                s.push_str(&format!("{name:<28} {:<6} {}\n", "fail", failed.join(", ")));
            }
            Err(e) => s.push_str(&format!("{name:<28} {:<6} {e}\n", "error")),
        }
        if let Some((rc, probs)) = c
            .as_ref()
            .ok()
            .and_then(|c| {
                c.candidate
                    .evaluation
                    .as_ref()
                    .map(|e| (e.critical_rate_k_per_s, &c.probability_glassy_with))
            })
            .filter(|_| !problem.more_equipment.is_empty())
        {
            s.push_str(&format!(
                "{:<28} {}\n",
                "",
                quench_verdicts(problem, rc, probs)
            ));
        }
    }
    let n = checks.len();
    s.push_str(&format!(
        "\n{passed} of {n} {} every limit; one row per recipe with a pass and a margin column per limit in {}\n",
        if passed == 1 { "passes" } else { "pass" },
        out.display()
    ));
    if let Some((p, kg)) = sheets {
        s.push_str(&format!(
            "batch sheets ({kg} kg of glass each, [batch] glass_kg): {}\n",
            p.display()
        ));
    }
    s
}

/// "glassy with roller quench (+3.62 decades, needs 1.00); NOT glassy with
/// crucible in air (+0.92 decades, needs 1.00)": every quench option's
/// verdict on one critical rate (the need is log10 of its safety factor).
/// Where the probability decides, the verdict is P(R_c ≤ rate) ≥
/// min_probability from the screen's draws (`probs`, the options in order):
/// "glassy with mould (P = 0.970, needs 0.9; +0.93 decades)".
/// A probability from `n` draws as text: where every draw (or none) fell on
/// one side, the one-sided 95 % bound of the rule of three (1 − 3/n, or
/// 3/n), not a certainty (docs/science.md, "What is reported").
fn probability_text(p: f64, n: usize) -> String {
    let bound = quenchwise::uncertainty::rule_of_three(n);
    if n > 0 && p >= 1.0 {
        format!("P ≥ {:.3}, every one of {n} draws glassy", 1.0 - bound)
    } else if n > 0 && p <= 0.0 {
        format!("P ≤ {bound:.3}, none of {n} draws glassy")
    } else {
        format!("P = {p:.3}")
    }
}

fn quench_verdicts(problem: &ScreenProblem, critical_rate: f64, probs: &[Option<f64>]) -> String {
    let min = problem
        .uncertainty
        .and_then(|u| u.min_probability)
        .filter(|_| problem.probability_decides());
    let parts: Vec<String> = problem
        .equipment_options()
        .enumerate()
        .filter_map(|(k, q)| {
            q.verdict(critical_rate).map(|v| match min {
                Some(m) => match probs.get(k).copied().flatten() {
                    Some(p) => format!(
                        "{} with {} ({}, needs {m}; {:+.2} decades)",
                        if p >= m { "glassy" } else { "NOT glassy" },
                        q.name,
                        probability_text(p, problem.uncertainty.map_or(0, |u| u.draws)),
                        v.margin_decades
                    ),
                    None => format!(
                        "not drawn for {} ({:+.2} decades)",
                        q.name, v.margin_decades
                    ),
                },
                None => format!(
                    "{} with {} ({:+.2} decades, needs {:.2})",
                    if v.glassy { "glassy" } else { "NOT glassy" },
                    q.name,
                    v.margin_decades,
                    q.safety_factor.log10()
                ),
            })
        })
        .collect();
    parts.join("; ")
}

fn unit_text(unit: &str) -> &str {
    match unit {
        "k" => "K",
        "decades" => "decades of R_c",
        "per_kg" => "per kg of glass",
        "mol_pct" => "mol%",
        other => other,
    }
}

#[cfg(test)]
mod tests {
    use super::probability_text;

    #[test]
    fn a_probability_at_an_end_is_given_as_its_rule_of_three_bound() {
        // Source: the rule of three (Hanley & Lippman-Hand 1983, JAMA 249,
        // 1743): with 0 events in n trials the one-sided 95 % upper bound on
        // their rate is about 3/n.
        assert_eq!(
            probability_text(1.0, 100),
            "P ≥ 0.970, every one of 100 draws glassy"
        );
        assert_eq!(
            probability_text(0.0, 100),
            "P ≤ 0.030, none of 100 draws glassy"
        );
        assert_eq!(probability_text(0.93, 100), "P = 0.930");
    }
}
