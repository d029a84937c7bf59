//! The report of a screen as one self-contained HTML page (inline SVG,
//! inline CSS, no scripts, no network; well-formed XML, so it can be checked) that says which recipes to melt first
//! and why. It renders values it is given; reading a results folder is the
//! job of `files::results`.

use super::plot::{self, ProbabilityPoint, TradePoint};
use super::text::{pa_s, sig, CAUTION};
use crate::assess::Evaluation;
use crate::composition::Oxide;
use crate::screen::{Row, ScreenProblem};
use crate::units::kelvin_to_celsius;
use std::fmt::Write;

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

/// One shortlisted recipe as the report shows it.
#[derive(Debug, Clone)]
pub struct ReportRecipe {
    /// 1 for the best.
    pub rank: usize,
    /// The amounts of the screen's oxides, mol%, in the screen's column order.
    pub mol_pct: Vec<(Oxide, f64)>,
    /// The values listed in the shortlist.
    pub row: Row,
    /// The full evaluation, or why it could not be made.
    pub evaluation: Result<Evaluation, String>,
    /// The weigh-out sheet, when the screen priced its recipes.
    pub batch_text: Option<String>,
}

/// Everything the report of a finished screen shows.
#[derive(Debug, Clone)]
pub struct ScreenReport<'a> {
    pub problem: &'a ScreenProblem,
    pub seed: u64,
    pub recipes: Vec<ReportRecipe>,
    /// Every evaluated candidate, thinned, against cost per kg.
    pub by_cost: Vec<TradePoint>,
    /// The same against melting temperature in °C.
    pub by_melting: Vec<TradePoint>,
    /// Every recipe the Monte Carlo stage drew: P(glassy) against cost per
    /// kg (or melting temperature in °C when the screen prices nothing).
    pub by_probability: Vec<ProbabilityPoint>,
    /// The run summary (summary.txt).
    pub summary: String,
}

fn property_table(e: &Evaluation) -> String {
    let mut t = String::from("<table><tr><th class=\"l\">property</th><th>°C</th><th>K</th></tr>");
    let row = |t: &mut String, name: &str, k: Option<f64>| {
        if let Some(k) = k {
            let _ = write!(
                t,
                "<tr><td class=\"l\">{name}</td><td>{:.1}</td><td>{:.1}</td></tr>",
                kelvin_to_celsius(k),
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
        &format!(
            "melting temperature ({})",
            pa_s(e.melting_viscosity_pa_s.unwrap_or(10.0))
        ),
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
    t.push_str("</table><table><tr><th class=\"l\">kinetics</th><th>value</th></tr>");
    let _ = write!(
        t,
        "<tr><td class=\"l\">critical cooling rate R_c</td><td>{} K/s ({} K/min)</td></tr>\
         <tr><td class=\"l\">nose-method rate</td><td>{} K/s</td></tr>\
         <tr><td class=\"l\">nose time</td><td>{} s</td></tr>\
         <tr><td class=\"l\">T_g/T_L</td><td>{}</td></tr>\
         <tr><td class=\"l\">thickest glassy slab (both faces on a 25 °C plate)</td><td>{} mm</td></tr>\
         <tr><td class=\"l\">kinetic factor α</td><td>{:.4} ({})</td></tr></table>",
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
        t.push_str("<p class=\"note\">");
        for w in &e.warnings {
            let _ = write!(t, "⚠ {}<br/>", esc(w));
        }
        t.push_str("</p>");
    }
    t
}

fn recipe_section(problem: &ScreenProblem, l: &ReportRecipe, e: &Evaluation) -> String {
    let mut h = String::new();
    let parts: Vec<String> = l
        .mol_pct
        .iter()
        .filter(|(_, v)| *v > 0.0)
        .map(|(o, v)| format!("{v:.2} {o}"))
        .collect();
    let _ = write!(
        h,
        "<h3 id=\"rank-{0}\">Rank {0}: {1} (mol%)</h3>",
        l.rank,
        esc(&describe(e, &parts))
    );
    let margin = (problem.equipment.rate.0 / e.critical_rate_k_per_s).log10();
    let _ = write!(
        h,
        "<p>Critical cooling rate <b>{} K/s</b> against {} K/s for {}: a margin of <b>{:.2} decades</b> (the safety factor asks for {:.2}).</p>",
        sig(e.critical_rate_k_per_s),
        sig(problem.equipment.rate.0),
        esc(&problem.equipment.name),
        margin,
        problem.equipment.safety_factor.log10()
    );
    if !problem.more_equipment.is_empty() {
        // The rule that decides: the safety factor, or P(R_c ≤ rate) ≥
        // min_probability from the screen's draws.
        let min = problem
            .uncertainty
            .and_then(|u| u.min_probability)
            .filter(|_| problem.probability_decides());
        let each: Vec<String> = problem
            .equipment_options()
            .enumerate()
            .filter_map(|(k, q)| {
                q.verdict(e.critical_rate_k_per_s).map(|v| match min {
                    Some(m) => match l.row.probability_glassy_with.get(k).copied().flatten() {
                        Some(p) => format!(
                            "{}: {} (P = {p:.3} at {} K/s, min_probability {m}; {:+.2} decades)",
                            esc(&q.name),
                            if p >= m { "glassy" } else { "not glassy" },
                            sig(q.rate.0),
                            v.margin_decades
                        ),
                        None => format!(
                            "{}: not drawn ({:+.2} decades at {} K/s)",
                            esc(&q.name),
                            v.margin_decades,
                            sig(q.rate.0)
                        ),
                    },
                    None => format!(
                        "{}: {} ({:+.2} decades at {} K/s; the safety factor asks for {:.2})",
                        esc(&q.name),
                        if v.glassy { "glassy" } else { "not glassy" },
                        v.margin_decades,
                        sig(q.rate.0),
                        q.safety_factor.log10()
                    ),
                })
            })
            .collect();
        let _ = write!(h, "<p>Each quench option: {}.</p>", each.join("; "));
    }
    let band = match (
        l.row.critical_rate_p05_k_per_s,
        l.row.critical_rate_p95_k_per_s,
    ) {
        (Some(lo), Some(hi)) => Some((lo, hi)),
        _ => None,
    };
    if let (Some((lo, hi)), Some(p)) = (band, l.row.probability_glassy) {
        let _ = write!(
            h,
            "<p>From the models' spreads: R_c lies between <b>{} and {} K/s</b> in 90 % of the draws (5–95 %), and the probability of a glass at {} K/s is <b>{p:.3}</b>{}.{}</p>",
            sig(lo),
            sig(hi),
            sig(problem.equipment.rate.0),
            // The one-sided 95 % bound beside it (docs/science.md, "What is
            // reported"): 1 − 3/N where every draw is glassy.
            match l.row.probability_glassy_lower95 {
                Some(b) if p >= 1.0 => format!(
                    " (every draw glassy: at least {b:.3} at 95 %, rule of three)"
                ),
                Some(b) => format!(" (at least {b:.3} at 95 %)"),
                None => String::new(),
            },
            if l.row.band_vouched == Some(false) {
                " ⚠ Part of the band lies beyond what the model can vouch for (a rate below 1e-3 K/s, a nose time above a day or a glassy slab above 100 mm: see the recipe's warnings)."
            } else {
                ""
            }
        );
    }
    h.push_str(&property_table(e));
    let quenches: Vec<plot::QuenchLine<'_>> = problem
        .equipment_options()
        .map(|q| (q.rate, q.name.as_str()))
        .collect();
    match e.kinetics() {
        Ok(k) => {
            let s = &e.kinetic_summary;
            let title = format!("TTT diagram, rank {}", l.rank);
            let _ = write!(
                h,
                "<figure>{}</figure>",
                inline(&plot::ttt_band_svg(&k, s, &quenches, band, &title))
            );
            let _ = write!(
                h,
                "<figure>{}</figure>",
                inline(&plot::fraction_band_svg(
                    &k,
                    s,
                    band,
                    &quenches,
                    &format!("Continuous cooling, rank {}", l.rank)
                ))
            );
            let bars: Vec<(String, f64)> = l
                .mol_pct
                .iter()
                .map(|(o, v)| (o.formula().to_string(), *v))
                .collect();
            let _ = write!(
                h,
                "<figure>{}</figure>",
                inline(&plot::composition_svg(
                    &bars,
                    &format!("Composition, rank {}", l.rank)
                ))
            );
            let _ = write!(
                h,
                "<figure>{}</figure>",
                inline(&plot::viscosity_svg(
                    &e.melt.viscosity,
                    &plot::viscosity_fixpoints_with(
                        &e.melt.viscosity,
                        e.melting_viscosity_pa_s
                            .map_or(crate::properties::fixpoints::MELTING, f64::log10)
                    ),
                    &[],
                    &format!("Viscosity, rank {}", l.rank)
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
        }
        Err(err) => {
            let _ = write!(
                h,
                "<p class=\"caution\">no curves: {}</p>",
                esc(&err.to_string())
            );
        }
    }
    if let Some(text) = &l.batch_text {
        let _ = write!(h, "<h4>Batch sheet</h4><pre>{}</pre>", esc(text));
    }
    h
}

/// The composition as "72.00 SiO2 · 14.00 Na2O" in the program's oxide order.
fn describe(e: &Evaluation, listed: &[String]) -> String {
    match &e.composition_mol_pct {
        Some(comp) => Oxide::ALL
            .iter()
            .filter_map(|o| comp.get(o.formula()).map(|v| format!("{v:.2} {o}")))
            .collect::<Vec<_>>()
            .join(" · "),
        None => listed.join(" · "),
    }
}

/// The report of a finished screen as one HTML page.
pub(crate) fn screen_report_html(r: &ScreenReport) -> String {
    let plan = r.problem;
    let melting_desc = format!(
        "melting temperature ({}) / °C",
        pa_s(plan.models.melting_viscosity_pa_s)
    );
    let mut h = String::new();
    let _ = write!(
        h,
        "<!DOCTYPE html><html lang=\"en\"><head><meta charset=\"utf-8\"/><title>quenchwise screen report</title><style>{STYLE}</style></head><body>"
    );
    let _ = write!(
        h,
        "<h1>Glass-forming screen: which recipes to melt first</h1>"
    );
    let _ = write!(
        h,
        "<p class=\"caution\"><b>Safety.</b> {}</p>",
        esc(CAUTION.trim_start_matches("caution: "))
    );
    // Job summary.
    let _ = write!(h, "<h2>The job</h2><table>");
    let row = |h: &mut String, k: &str, v: String| {
        let _ = write!(
            h,
            "<tr><td class=\"l\">{k}</td><td class=\"l\">{}</td></tr>",
            esc(&v)
        );
    };
    row(
        &mut h,
        "equipment",
        format!(
            "{}: {} K/s, safety factor {}{}",
            plan.equipment.name,
            sig(plan.equipment.rate.0),
            plan.equipment.safety_factor,
            if plan.more_equipment.is_empty() {
                ""
            } else {
                " (decides feasibility and ranking)"
            }
        ),
    );
    for q in &plan.more_equipment {
        row(
            &mut h,
            "also reported",
            format!(
                "{}: {} K/s, safety factor {} (a verdict per recipe; decides nothing)",
                q.name,
                sig(q.rate.0),
                q.safety_factor
            ),
        );
    }
    if let Some(u) = plan.uncertainty.filter(|u| u.min_probability.is_some()) {
        row(
            &mut h,
            "feasibility at the quench decided by",
            format!(
                "the probability: P(glassy at {} K/s) ≥ {} over {} draws of the models' spreads (seed {}); the safety factor is not used",
                sig(plan.equipment.rate.0),
                u.min_probability.unwrap_or(0.0),
                u.draws,
                u.seed
            ),
        );
    } else {
        row(
            &mut h,
            "feasibility at the quench decided by",
            format!(
                "the safety factor: R_c ≤ {} K/s{}",
                sig(plan.allowed_rate().0),
                if plan.uncertainty.is_some() {
                    " (the probability is shown; no min_probability asked)"
                } else {
                    " (no uncertainty data)"
                }
            ),
        );
    }
    row(
        &mut h,
        "furnace",
        format!(
            "{:.0} °C: melting temperature ({}) ≤ {:.0} °C; liquidus ≤ {:.0} °C",
            plan.furnace_max.to_celsius().0,
            pa_s(plan.models.melting_viscosity_pa_s),
            plan.melting_max.to_celsius().0,
            plan.liquidus_max.to_celsius().0
        ),
    );
    row(
        &mut h,
        "nucleation counted",
        super::text::screen_nucleation_text(plan),
    );
    if let Some(c) = &plan.cost {
        row(
            &mut h,
            "cost",
            format!(
                "≤ {} per kg of glass; raw materials: {}",
                c.max_per_kg, c.label
            ),
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
    row(&mut h, "seed", r.seed.to_string());
    h.push_str("</table>");
    if plan.models.about.invented {
        h.push_str("<p class=\"caution\">The model set has <b>invented</b> coefficients: this report demonstrates the tool and must not drive real melts.</p>");
    }
    // Shortlist table.
    let _ = write!(h, "<h2>Shortlist</h2>");
    if r.recipes.is_empty() {
        h.push_str("<p class=\"caution\">No recipe met every limit. See the constraint summary below for the limit that binds.</p>");
    } else {
        h.push_str("<table><tr><th>rank</th>");
        for (o, _) in &r.recipes[0].mol_pct {
            let _ = write!(h, "<th>{o}<br/>mol%</th>");
        }
        h.push_str("<th>R_c<br/>K/s</th>");
        let mc = plan.uncertainty.is_some();
        if mc {
            h.push_str("<th>P(glassy)</th><th>R_c 5 %<br/>K/s</th><th>R_c 95 %<br/>K/s</th>");
        }
        h.push_str("<th>margin<br/>decades</th><th>melting<br/>°C</th><th>liquidus<br/>°C</th><th class=\"l\">primary phase</th><th>T_g<br/>°C</th><th>cost<br/>per kg</th><th class=\"l\">binding</th></tr>");
        for l in &r.recipes {
            let _ = write!(h, "<tr><td><a href=\"#rank-{0}\">{0}</a></td>", l.rank);
            for (_, v) in &l.mol_pct {
                let _ = write!(h, "<td>{v:.2}</td>");
            }
            let f = |v: Option<f64>, d: usize| v.map(|v| format!("{v:.d$}")).unwrap_or_default();
            let c = |v: Option<f64>| f(v.map(kelvin_to_celsius), 0);
            let w = &l.row;
            let _ = write!(
                h,
                "<td>{}</td>",
                w.critical_rate_k_per_s.map(sig).unwrap_or_default()
            );
            if mc {
                // A band end beyond what the model can vouch for is marked
                // as the point estimate's warning marks R_c.
                let mark = if w.band_vouched == Some(false) {
                    " ⚠"
                } else {
                    ""
                };
                let _ = write!(
                    h,
                    "<td>{}</td><td>{}{mark}</td><td>{}</td>",
                    f(w.probability_glassy, 3),
                    w.critical_rate_p05_k_per_s.map(sig).unwrap_or_default(),
                    w.critical_rate_p95_k_per_s.map(sig).unwrap_or_default()
                );
            }
            let _ = write!(
                h,
                "<td>{}</td><td>{}</td><td>{}</td><td class=\"l\">{}</td><td>{}</td><td>{}</td><td class=\"l\">{}</td></tr>",
                f(w.margin_decades, 2),
                c(w.melting_temperature_k),
                c(w.liquidus_k),
                esc(w.primary_phase.as_deref().unwrap_or_default()),
                c(w.glass_transition_k),
                f(w.cost_per_kg, 3),
                esc(&w.binding),
            );
        }
        h.push_str("</table>");
    }
    // Trade-offs.
    let _ = write!(h, "<h2>Trade-offs over every evaluated candidate</h2>");
    if plan.cost.is_some() {
        let _ = write!(
            h,
            "<figure>{}</figure>",
            inline(&plot::tradeoff_svg(
                &r.by_cost,
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
            &r.by_melting,
            &melting_desc,
            plan.allowed_rate().0,
            "Critical rate against melting temperature"
        ))
    );
    if let Some(u) = plan.uncertainty {
        let x_desc = if plan.cost.is_some() {
            "cost per kg of glass"
        } else {
            melting_desc.as_str()
        };
        let _ = write!(
            h,
            "<figure>{}</figure><p class=\"note\">Every recipe the Monte Carlo stage drew ({} draws each); recipes the bound showed could not reach the shortlist were not drawn and are not shown.</p>",
            inline(&plot::probability_svg(
                &r.by_probability,
                x_desc,
                u.min_probability,
                &format!("Probability of a glass at {} K/s against {}", sig(plan.equipment.rate.0), if plan.cost.is_some() { "cost" } else { "melting temperature" })
            )),
            u.draws
        );
    }
    // Per-recipe sections.
    let _ = write!(h, "<h2>The recipes</h2>");
    for l in &r.recipes {
        match &l.evaluation {
            Ok(e) => h.push_str(&recipe_section(plan, l, e)),
            Err(err) => {
                let _ = write!(
                    h,
                    "<h3>Rank {}</h3><p class=\"caution\">could not be re-evaluated: {}</p>",
                    l.rank,
                    esc(err)
                );
            }
        }
    }
    // Constraint summary.
    let _ = write!(
        h,
        "<h2>Constraint summary</h2><pre>{}</pre>",
        esc(r.summary.trim())
    );
    let _ = write!(h, "<p class=\"note\">Written by quenchwise {}. The numbers are model estimates to shortlist experiments; confirm glassiness by XRD or DSC.</p></body></html>", env!("CARGO_PKG_VERSION"));
    h
}
