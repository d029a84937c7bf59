//! `quenchwise report RESULTS_DIR`: one self-contained HTML file (inline SVG,
//! inline CSS, no scripts, no network) that says which recipes to melt first
//! and why.

use crate::composition::{Composition, Oxide};
use crate::config::{self, RunPlan};
use crate::evaluate::{evaluate_composition, Calibration, Evaluation, SlabQuench};
use crate::kinetics::Kinetics;
use crate::plot::{self, TradePoint};
use crate::report::{sig, CAUTION};
use anyhow::{Context, Result};
use polars::prelude::*;
use std::fmt::Write;
use std::path::{Path, PathBuf};

fn esc(s: &str) -> String {
    s.replace('&', "&amp;")
        .replace('<', "&lt;")
        .replace('>', "&gt;")
        .replace('"', "&quot;")
}

/// Drop the XML declaration so the SVG can sit inline in HTML.
fn inline(svg: &str) -> String {
    let s = svg.trim_start();
    match s.strip_prefix("<?xml") {
        Some(rest) => rest
            .split_once("?>")
            .map(|x| x.1.to_string())
            .unwrap_or_default(),
        None => s.to_string(),
    }
}

const STYLE: &str = "
body{font-family:Georgia,'DejaVu Serif',serif;background:#fcfaf5;color:#2f3742;max-width:1000px;margin:2em auto;padding:0 1em;line-height:1.45}
h1{font-size:1.7em;border-bottom:3px solid #146e70;padding-bottom:.2em}
h2{font-size:1.3em;color:#146e70;margin-top:2em}
h3{font-size:1.1em}
table{border-collapse:collapse;margin:.6em 0;font-size:.92em}
th,td{border-bottom:1px solid #d8d4c8;padding:.25em .6em;text-align:right}
th{background:#efece2}
td.l,th.l{text-align:left}
pre{background:#f3f0e6;padding:.8em;overflow-x:auto;font-size:.85em}
.caution{border-left:6px solid #aa3c32;background:#f7e9e4;padding:.6em 1em}
.note{color:#6b6b60;font-size:.9em}
figure{margin:1em 0}
";

/// Shortlist rows as read back from shortlist.csv.
struct Listed {
    rank: usize,
    mol_pct: Vec<(Oxide, f64)>,
}

fn read_shortlist(dir: &Path) -> Result<Vec<Listed>> {
    let df = crate::table::read_frame(&dir.join("shortlist.csv"))?;
    let mut cols = Vec::new();
    for name in df.get_column_names() {
        if let Some(o) = name
            .as_str()
            .strip_suffix("_mol_pct")
            .and_then(|o| o.parse::<Oxide>().ok())
        {
            let v = df.column(name.as_str())?.cast(&DataType::Float64)?;
            cols.push((
                o,
                v.f64()?
                    .iter()
                    .map(|x| x.unwrap_or(0.0))
                    .collect::<Vec<_>>(),
            ));
        }
    }
    Ok((0..df.height())
        .map(|i| Listed {
            rank: i + 1,
            mol_pct: cols.iter().map(|(o, v)| (*o, v[i])).collect(),
        })
        .collect())
}

fn trade_points(dir: &Path, short: &[Listed]) -> Result<(Vec<TradePoint>, Vec<TradePoint>)> {
    let df = crate::table::read_frame(&dir.join("candidates.parquet"))?;
    let get = |n: &str| -> Result<Vec<Option<f64>>> {
        Ok(df
            .column(n)?
            .cast(&DataType::Float64)?
            .f64()?
            .iter()
            .collect())
    };
    let rc = get("critical_rate_k_per_s")?;
    let cost = get("cost_per_kg")?;
    let tm = get("melting_temperature_k")?;
    let feasible: Vec<bool> = df
        .column("feasible")?
        .bool()?
        .iter()
        .map(|b| b.unwrap_or(false))
        .collect();
    // At most ~4000 points per picture: a fixed stride keeps the file small and the run reproducible.
    let stride = (df.height() / 4000).max(1);
    let mut by_cost = Vec::new();
    let mut by_tm = Vec::new();
    for i in (0..df.height()).step_by(stride) {
        if let Some(r) = rc[i] {
            if let Some(c) = cost[i] {
                by_cost.push(TradePoint {
                    x: c,
                    critical_rate: r,
                    feasible: feasible[i],
                    shortlisted: false,
                });
            }
            if let Some(t) = tm[i] {
                by_tm.push(TradePoint {
                    x: t - 273.15,
                    critical_rate: r,
                    feasible: feasible[i],
                    shortlisted: false,
                });
            }
        }
    }
    let sdf = crate::table::read_frame(&dir.join("shortlist.csv"))?;
    let sget = |n: &str| -> Result<Vec<Option<f64>>> {
        Ok(sdf
            .column(n)?
            .cast(&DataType::Float64)?
            .f64()?
            .iter()
            .collect())
    };
    let (src, sc, st) = (
        sget("critical_rate_k_per_s")?,
        sget("cost_per_kg")?,
        sget("melting_temperature_k")?,
    );
    for i in 0..short.len().min(sdf.height()) {
        if let Some(r) = src[i] {
            if let Some(c) = sc[i] {
                by_cost.push(TradePoint {
                    x: c,
                    critical_rate: r,
                    feasible: true,
                    shortlisted: true,
                });
            }
            if let Some(t) = st[i] {
                by_tm.push(TradePoint {
                    x: t - 273.15,
                    critical_rate: r,
                    feasible: true,
                    shortlisted: true,
                });
            }
        }
    }
    Ok((by_cost, by_tm))
}

fn property_table(e: &Evaluation) -> String {
    let mut t = String::from("<table><tr><th class=l>property</th><th>°C</th><th>K</th></tr>");
    let row = |t: &mut String, name: &str, k: Option<f64>| {
        if let Some(k) = k {
            let _ = write!(
                t,
                "<tr><td class=l>{name}</td><td>{:.1}</td><td>{:.1}</td></tr>",
                k - 273.15,
                k
            );
        }
    };
    row(
        &mut t,
        &format!(
            "liquidus T_L ({})",
            esc(e.primary_phase.as_deref().unwrap_or("-"))
        ),
        Some(e.liquidus_k),
    );
    row(
        &mut t,
        "melting temperature (10 Pa·s)",
        e.melting_temperature_k,
    );
    row(&mut t, "working point (10³ Pa·s)", e.working_point_k);
    row(&mut t, "softening point (10^6.6 Pa·s)", e.softening_point_k);
    row(
        &mut t,
        "glass transition T_g (10¹² Pa·s)",
        Some(e.glass_transition_k),
    );
    row(&mut t, "TTT nose", Some(e.nose_temperature_k));
    t.push_str("</table><table><tr><th class=l>kinetics</th><th>value</th></tr>");
    let _ = write!(
        t,
        "<tr><td class=l>critical cooling rate R_c</td><td>{} K/s ({} K/min)</td></tr>\
         <tr><td class=l>nose-method rate</td><td>{} K/s</td></tr>\
         <tr><td class=l>nose time</td><td>{} s</td></tr>\
         <tr><td class=l>T_g/T_L</td><td>{}</td></tr>\
         <tr><td class=l>thickest glassy slab (both faces on a 25 °C plate)</td><td>{} mm</td></tr>\
         <tr><td class=l>kinetic factor α</td><td>{:.4} ({})</td></tr></table>",
        sig(e.critical_rate_k_per_s),
        sig(e.critical_rate_k_per_min),
        sig(e.nose_rate_k_per_s),
        sig(e.nose_time_s),
        e.reduced_glass_transition
            .map(|r| format!("{r:.3}"))
            .unwrap_or_default(),
        e.max_glassy_thickness_mm
            .map(sig)
            .unwrap_or_else(|| "-".into()),
        e.turnbull_alpha,
        if e.kinetics_calibrated {
            "calibrated"
        } else {
            "NOT calibrated"
        }
    );
    if !e.warnings.is_empty() {
        t.push_str("<p class=note>");
        for w in &e.warnings {
            let _ = write!(t, "⚠ {}<br>", esc(w));
        }
        t.push_str("</p>");
    }
    t
}

fn recipe_section(plan: &RunPlan, dir: &Path, l: &Listed) -> Result<String> {
    let mut x = [0.0; crate::composition::N_OXIDES];
    for &(o, v) in &l.mol_pct {
        x[o.index()] = v;
    }
    let comp = Composition::from_mol_percent_array(&x, 1e-3)?;
    let e = evaluate_composition(
        &plan.models,
        &comp,
        &plan.kinetic_options,
        Some(SlabQuench::default()),
        &Calibration::None,
    )?;
    let props = plan.models.properties(&comp)?;
    let melt = plan.models.melt(&props)?;
    let k = Kinetics::new(&melt, &plan.kinetic_options)?;
    let s = k.analyse()?;
    let mut h = String::new();
    let _ = write!(
        h,
        "<h3 id=rank-{0}>Rank {0}: {1} (mol%)</h3>",
        l.rank,
        esc(&comp.describe())
    );
    let margin = (plan.equipment_rate.0 / e.critical_rate_k_per_s).log10();
    let _ = write!(
        h,
        "<p>Critical cooling rate <b>{} K/s</b> against {} K/s for {}: a margin of <b>{:.2} decades</b> (the safety factor asks for {:.2}).</p>",
        sig(e.critical_rate_k_per_s),
        sig(plan.equipment_rate.0),
        esc(&plan.equipment_name),
        margin,
        plan.safety_factor.log10()
    );
    h.push_str(&property_table(&e));
    let title = format!("TTT diagram, rank {}", l.rank);
    let _ = write!(
        h,
        "<figure>{}</figure>",
        inline(&plot::ttt_svg(
            &k,
            &s,
            Some((plan.equipment_rate, &plan.equipment_name)),
            &title
        ))
    );
    let _ = write!(
        h,
        "<figure>{}</figure>",
        inline(&plot::fraction_svg(
            &k,
            &s,
            &format!("Continuous cooling, rank {}", l.rank)
        ))
    );
    let parts: Vec<(String, f64)> = l
        .mol_pct
        .iter()
        .map(|(o, v)| (o.formula().to_string(), *v))
        .collect();
    let _ = write!(
        h,
        "<figure>{}</figure>",
        inline(&plot::composition_svg(
            &parts,
            &format!("Composition, rank {}", l.rank)
        ))
    );
    let _ = write!(
        h,
        "<figure>{}</figure>",
        inline(&plot::rates_svg(
            &k,
            &format!("Nucleation and growth, rank {}", l.rank)
        ))
    );
    let sheet = dir
        .join("batch-sheets")
        .join(format!("rank-{:02}.txt", l.rank));
    if let Ok(text) = std::fs::read_to_string(&sheet) {
        if let Some(idx) = text.find("batch for ") {
            let _ = write!(h, "<h4>Batch sheet</h4><pre>{}</pre>", esc(&text[idx..]));
        }
    }
    Ok(h)
}

/// Write `DIR/report.html` for a finished screen and return its path.
///
/// # Errors
/// Missing or unreadable result files, or a config that no longer loads.
pub fn write_report(dir: &Path) -> Result<PathBuf> {
    if !dir.join("provenance.json").exists() {
        anyhow::bail!(crate::cli::UsageError(format!(
            "{} holds no screen results (no provenance.json)\nhint: give the --out folder of a finished `quenchwise screen` run",
            dir.display()
        )));
    }
    let prov: serde_json::Value = serde_json::from_str(
        &std::fs::read_to_string(dir.join("provenance.json"))
            .with_context(|| format!("{} holds no screen results", dir.display()))?,
    )?;
    let base = prov["config_dir"].as_str().map(PathBuf::from);
    let plan = config::load_with_base(&dir.join("config-as-run.toml"), base.as_deref())?;
    let short = read_shortlist(dir)?;
    let summary = std::fs::read_to_string(dir.join("summary.txt")).unwrap_or_default();
    let mut h = String::new();
    let _ = write!(
        h,
        "<!DOCTYPE html><html lang=en><head><meta charset=utf-8><title>quenchwise screen report</title><style>{STYLE}</style></head><body>"
    );
    let _ = write!(
        h,
        "<h1>Glass-forming screen: which recipes to melt first</h1>"
    );
    let _ = write!(
        h,
        "<p class=caution><b>Safety.</b> {}</p>",
        esc(CAUTION.trim_start_matches("caution: "))
    );
    // Job summary.
    let _ = write!(h, "<h2>The job</h2><table>");
    let row = |h: &mut String, k: &str, v: String| {
        let _ = write!(
            h,
            "<tr><td class=l>{k}</td><td class=l>{}</td></tr>",
            esc(&v)
        );
    };
    row(
        &mut h,
        "equipment",
        format!(
            "{}: {} K/s, safety factor {}",
            plan.equipment_name,
            sig(plan.equipment_rate.0),
            plan.safety_factor
        ),
    );
    row(
        &mut h,
        "critical rate must be at most",
        format!("{} K/s", sig(plan.allowed_rate().0)),
    );
    row(
        &mut h,
        "furnace",
        format!(
            "melting temperature (10 Pa·s) ≤ {:.0} °C; liquidus ≤ {:.0} °C",
            plan.furnace_max.to_celsius().0,
            plan.liquidus_max.to_celsius().0
        ),
    );
    if let Some((_, max, label)) = &plan.cost {
        row(
            &mut h,
            "cost",
            format!("≤ {max} per kg of glass; raw materials: {label}"),
        );
    }
    row(
        &mut h,
        "objective",
        format!("{:?}", plan.objective).to_lowercase(),
    );
    let ranges: Vec<String> = plan
        .oxides
        .iter()
        .map(|(o, lo, hi)| format!("{o} {lo}–{hi}"))
        .collect();
    row(&mut h, "oxide ranges (mol%)", ranges.join(", "));
    for c in &plan.constraints {
        row(
            &mut h,
            "constraint",
            format!(
                "{} {}{}",
                c.text,
                c.min.map(|m| format!("≥ {m} ")).unwrap_or_default(),
                c.max.map(|m| format!("≤ {m}")).unwrap_or_default()
            ),
        );
    }
    row(
        &mut h,
        "model set",
        format!(
            "{} — {} ({})",
            plan.models.about.name, plan.models.about.description, plan.models.about.source
        ),
    );
    row(
        &mut h,
        "viscosity model",
        format!(
            "{} ({})",
            plan.models.viscosity.name, plan.models.viscosity.source
        ),
    );
    let calibrated = plan
        .models
        .phases
        .iter()
        .all(|p| p.calibrated_against.is_some());
    row(
        &mut h,
        "kinetics calibrated",
        if calibrated {
            "yes".into()
        } else {
            "NO: the kinetic factor is not tied to a measurement of this system; absolute rates may be off by decades".into()
        },
    );
    row(&mut h, "seed", plan.seed.to_string());
    h.push_str("</table>");
    if plan.models.about.invented {
        h.push_str("<p class=caution>The model set has <b>invented</b> coefficients: this report demonstrates the tool and must not drive real melts.</p>");
    }
    // Shortlist table.
    let _ = write!(h, "<h2>Shortlist</h2>");
    if short.is_empty() {
        h.push_str("<p class=caution>No recipe met every limit. See the constraint summary below for the limit that binds.</p>");
    } else {
        let sdf = crate::table::read_frame(&dir.join("shortlist.csv"))?;
        h.push_str("<table><tr><th>rank</th>");
        for (o, _) in &short[0].mol_pct {
            let _ = write!(h, "<th>{o}<br>mol%</th>");
        }
        h.push_str("<th>R_c<br>K/s</th><th>margin<br>decades</th><th>melting<br>°C</th><th>liquidus<br>°C</th><th class=l>primary phase</th><th>T_g<br>°C</th><th>cost<br>per kg</th></tr>");
        let num = |n: &str, i: usize| -> Option<f64> {
            sdf.column(n)
                .ok()?
                .cast(&DataType::Float64)
                .ok()?
                .f64()
                .ok()?
                .get(i)
        };
        let text = |n: &str, i: usize| -> String {
            sdf.column(n)
                .ok()
                .and_then(|c| c.str().ok().and_then(|s| s.get(i).map(str::to_string)))
                .unwrap_or_default()
        };
        for l in &short {
            let i = l.rank - 1;
            let _ = write!(h, "<tr><td><a href=#rank-{0}>{0}</a></td>", l.rank);
            for (_, v) in &l.mol_pct {
                let _ = write!(h, "<td>{v:.2}</td>");
            }
            let f = |v: Option<f64>, off: f64, d: usize| {
                v.map(|v| format!("{:.*}", d, v - off)).unwrap_or_default()
            };
            let _ = write!(
                h,
                "<td>{}</td><td>{}</td><td>{}</td><td>{}</td><td class=l>{}</td><td>{}</td><td>{}</td></tr>",
                num("critical_rate_k_per_s", i).map(sig).unwrap_or_default(),
                f(num("margin_decades", i), 0.0, 2),
                f(num("melting_temperature_k", i), 273.15, 0),
                f(num("liquidus_k", i), 273.15, 0),
                esc(&text("primary_phase", i)),
                f(num("glass_transition_k", i), 273.15, 0),
                f(num("cost_per_kg", i), 0.0, 3),
            );
        }
        h.push_str("</table>");
    }
    // Trade-offs.
    let (by_cost, by_tm) = trade_points(dir, &short)?;
    let _ = write!(h, "<h2>Trade-offs over every evaluated candidate</h2>");
    if plan.cost.is_some() {
        let _ = write!(
            h,
            "<figure>{}</figure>",
            inline(&plot::tradeoff_svg(
                &by_cost,
                "cost per kg of glass",
                plan.allowed_rate().0,
                "Critical rate against cost"
            ))
        );
    }
    let _ = write!(
        h,
        "<figure>{}</figure>",
        inline(&plot::tradeoff_svg(
            &by_tm,
            "melting temperature (10 Pa·s) / °C",
            plan.allowed_rate().0,
            "Critical rate against melting temperature"
        ))
    );
    // Per-recipe sections.
    let _ = write!(h, "<h2>The recipes</h2>");
    for l in &short {
        match recipe_section(&plan, dir, l) {
            Ok(s) => h.push_str(&s),
            Err(err) => {
                let _ = write!(
                    h,
                    "<h3>Rank {}</h3><p class=caution>could not be re-evaluated: {}</p>",
                    l.rank,
                    esc(&err.to_string())
                );
            }
        }
    }
    // Constraint summary.
    let _ = write!(
        h,
        "<h2>Constraint summary</h2><pre>{}</pre>",
        esc(summary.trim())
    );
    let _ = write!(h, "<p class=note>Written by quenchwise {}. The numbers are model estimates to shortlist experiments; confirm glassiness by XRD or DSC.</p></body></html>", env!("CARGO_PKG_VERSION"));
    let path = dir.join("report.html");
    let tmp = dir.join("report.html.partial");
    std::fs::write(&tmp, h)?;
    std::fs::rename(&tmp, &path)?;
    Ok(path)
}
