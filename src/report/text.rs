//! Human-readable text for an evaluation: every number with its unit, °C beside
//! K and K/min beside K/s, extrapolation marks on the lines they affect, and
//! the safety caution.

use crate::assess::Evaluation;
use crate::batch::Batch;
use crate::composition::{Composition, Oxide};
use crate::kinetics::{DrivingForce, KineticOptions, Transport};
use crate::screen::probability::ProbabilityOutcome;
use crate::screen::snap::SnapOutcome;
use crate::screen::{LimitSummary, ScreenProblem};
use crate::units::kelvin_to_celsius as c;
use std::fmt::Write;

/// One short caution line (docs/science.md, "Cautions"): printed once per
/// run on stderr by the commands that lead to a melt (not with `--quiet`),
/// and in the report and the batch sheets a screen writes.
pub const CAUTION: &str = "caution: melts at 1000-1600 °C and quenching (steam bursts, ejected glass) burn; batch dusts \
(crystalline silica, boric acid, Ba/Pb compounds, Li2CO3) are health hazards. These are model estimates to shortlist \
experiments: confirm glassiness by XRD/DSC and follow your lab's safety rules and licensed practice.";

/// A viscosity in Pa·s as outputs state it: "10 Pa·s", "316 Pa·s".
pub fn pa_s(v: f64) -> String {
    format!("{} Pa·s", crate::report::plot::plain(v))
}

/// "1 glass", "3 glasses": a count with its noun in the right number
/// (`plural` is the noun's plural form).
pub fn count(n: usize, singular: &str, plural: &str) -> String {
    if n == 1 {
        format!("1 {singular}")
    } else {
        format!("{n} {plural}")
    }
}

/// A number in a compact form that keeps 3 significant figures across decades.
pub fn sig(x: f64) -> String {
    if !x.is_finite() {
        return format!("{x}");
    }
    let a = x.abs();
    if a != 0.0 && !(1e-3..1e5).contains(&a) {
        format!("{x:.2e}")
    } else if a >= 100.0 {
        format!("{x:.0}")
    } else if a >= 10.0 {
        format!("{x:.1}")
    } else if a >= 1.0 {
        format!("{x:.2}")
    } else {
        format!("{x:.3}")
    }
}

/// Four decimals where that reads well (a kinetic factor), an exponent for
/// values far outside the usual range (α = 1e100 is not printed in full).
fn four(x: f64) -> String {
    if x.is_finite() && (x == 0.0 || (1e-3..1e5).contains(&x.abs())) {
        format!("{x:.4}")
    } else {
        format!("{x:.3e}")
    }
}

/// A duration in s with a readable unit beside it: "7200 s (2.00 h)".
pub fn duration(s: f64) -> String {
    if !s.is_finite() {
        return "never".into();
    }
    let (v, u) = if s < 120.0 {
        (s, "s")
    } else if s < 7200.0 {
        (s / 60.0, "min")
    } else if s < 2.0 * 86400.0 {
        (s / 3600.0, "h")
    } else if s < 2.0 * 365.25 * 86400.0 {
        (s / 86400.0, "days")
    } else {
        (s / (365.25 * 86400.0), "years")
    };
    format!("{} s ({} {u})", sig(s), sig(v))
}

/// The evaluation as a readable table.
pub fn evaluation_text(e: &Evaluation) -> String {
    let mut o = String::new();
    let mv = if e.viscosity_extrapolated { "  !V" } else { "" };
    let ml = if e.liquidus_extrapolated { "  !L" } else { "" };
    // Lines that use both: the reduced glass transition and the kinetics.
    let mk = format!(
        "{}{}",
        if mv.is_empty() { "" } else { "  !V" },
        if ml.is_empty() { "" } else { "  !L" }
    );
    if let Some(comp) = &e.composition_mol_pct {
        // In the program's oxide order, not alphabetical.
        let parts: Vec<String> = Oxide::ALL
            .iter()
            .filter_map(|o| comp.get(o.formula()).map(|v| format!("{v:.2} {o}")))
            .collect();
        let _ = writeln!(o, "composition   {} (mol%)", parts.join(" · "));
    } else {
        let _ = writeln!(
            o,
            "melt card     (viscosity and crystal data given directly)"
        );
    }
    if let Some(m) = &e.model_set {
        let _ = writeln!(o, "model set     {m}");
    }
    let row = |o: &mut String, label: &str, value: String, mark: &str| {
        let _ = writeln!(o, "  {label:<34} {value}{mark}");
    };
    let t = |k: f64| format!("{:>7.1} °C  {:>7.1} K", c(k), k);
    let _ = writeln!(o, "\nliquidus and crystal");
    row(
        &mut o,
        "liquidus T_L",
        format!(
            "{}{}",
            t(e.liquidus_k),
            e.primary_phase
                .as_ref()
                .map(|p| format!("   primary phase: {p}"))
                .unwrap_or_default()
        ),
        ml,
    );
    if e.liquidus_by_phase_k.len() > 1 {
        let mut by: Vec<(&String, &f64)> = e.liquidus_by_phase_k.iter().collect();
        by.sort_by(|a, b| b.1.total_cmp(a.1));
        let parts: Vec<String> = by
            .iter()
            .map(|(n, k)| format!("{n} {:.0} °C", c(**k)))
            .collect();
        row(&mut o, "liquidus of each phase", parts.join(" · "), ml);
    }
    let _ = writeln!(o, "\nviscosity");
    if let Some(v) = e.melting_temperature_k {
        row(
            &mut o,
            &format!(
                "melting temperature ({})",
                pa_s(e.melting_viscosity_pa_s.unwrap_or(10.0))
            ),
            t(v),
            mv,
        );
    }
    if let Some(v) = e.working_point_k {
        row(&mut o, "working point (10^3 Pa·s)", t(v), mv);
    }
    if let Some(v) = e.softening_point_k {
        row(&mut o, "softening point (10^6.6 Pa·s)", t(v), mv);
    }
    row(
        &mut o,
        "glass transition T_g (10^12 Pa·s)",
        t(e.glass_transition_k),
        mv,
    );
    if let Some(v) = e.strain_point_k {
        row(&mut o, "strain point (10^13.5 Pa·s)", t(v), mv);
    }
    row(&mut o, "fragility m", format!("{:>7.1}", e.fragility), mv);
    if let Some(r) = e.reduced_glass_transition {
        let verdict = if r >= 2.0 / 3.0 {
            "≥ 2/3: easy glass former (Turnbull)"
        } else {
            "< 2/3"
        };
        row(
            &mut o,
            "reduced glass transition T_g/T_L",
            format!("{r:>7.3}   {verdict}"),
            &mk,
        );
    }
    let _ = writeln!(
        o,
        "\ncrystallisation (CNT + JMAK, every phase above T_g, X_c = {:e}, {} driving force)",
        e.detectable_fraction,
        match e.driving_force {
            DrivingForce::Turnbull => "Turnbull",
            DrivingForce::Hoffman => "Hoffman",
        },
    );
    row(&mut o, "nucleation", nucleation_text(&e.options), "");
    row(
        &mut o,
        "TTT nose",
        format!(
            "{}   after {}",
            t(e.nose_temperature_k),
            duration(e.nose_time_s)
        ),
        &mk,
    );
    row(
        &mut o,
        "nose-method rate (T_L − T_n)/t_n",
        format!(
            "{} K/s   {} K/min",
            sig(e.nose_rate_k_per_s),
            sig(e.nose_rate_k_per_min)
        ),
        &mk,
    );
    row(
        &mut o,
        "critical cooling rate R_c",
        format!(
            "{} K/s   {} K/min   limited by {}",
            sig(e.critical_rate_k_per_s),
            sig(e.critical_rate_k_per_min),
            e.limiting_phase
        ),
        &mk,
    );
    if e.critical_rate_by_phase_k_per_s.len() > 1 {
        let mut by: Vec<(&String, &f64)> = e.critical_rate_by_phase_k_per_s.iter().collect();
        by.sort_by(|a, b| b.1.total_cmp(a.1));
        for (name, r) in by {
            row(
                &mut o,
                &format!("  {name} alone"),
                format!("{} K/s", sig(*r)),
                &mk,
            );
        }
    }
    if let Some(mm) = e.max_glassy_thickness_mm {
        row(
            &mut o,
            "thickest glassy slab",
            format!(
                "{} mm   (cooled through both faces by a {:.0} °C plate; κ = {:.1e} m²/s)",
                sig(mm),
                c(e.quench_surface_k),
                e.melt_thermal_diffusivity_m2_per_s
            ),
            &mk,
        );
    }
    row(
        &mut o,
        "kinetic factor",
        format!(
            "α = {}   σ = {} J/m²   {}",
            four(e.turnbull_alpha),
            four(e.interface_energy_j_per_m2),
            match &e.calibrated_against {
                Some(s) => format!("calibrated against {s}"),
                None => "NOT calibrated".into(),
            }
        ),
        "",
    );
    if !e.warnings.is_empty() {
        let _ = writeln!(o, "\nnotes");
        for w in &e.warnings {
            let _ = writeln!(o, "  - {w}");
        }
        if e.viscosity_extrapolated || e.liquidus_extrapolated {
            let _ = writeln!(
                o,
                "  (!V: uses an extrapolated viscosity; !L: uses an extrapolated liquidus)"
            );
        }
    }
    o
}

/// A batch sheet as a readable table, with the oxide balance and handling cautions.
pub fn batch_text(b: &Batch, glass: &Composition, shelf: &str) -> String {
    let mut o = String::new();
    let _ = writeln!(
        o,
        "batch for {:.3} kg of glass   {} (mol%)",
        b.glass_kg,
        glass.describe()
    );
    let _ = writeln!(o, "raw materials  {}", shelf);
    if let Some(note) = glass.normalisation_note() {
        let _ = writeln!(o, "note           {note}");
    }
    if !b.retention.is_empty() {
        let kept: Vec<String> = b
            .retention
            .iter()
            .map(|(ox, f)| format!("{ox} {}", sig(*f)))
            .collect();
        let _ = writeln!(
            o,
            "retention      {} (fraction kept in the melt; the batch carries the rest extra)",
            kept.join(", ")
        );
    }
    for n in &b.notes {
        let _ = writeln!(o, "note           {n}");
    }
    let _ = writeln!(
        o,
        "\n  {:<26} {:>12} {:>10} {:>10}",
        "raw material", "mass / kg", "mass / g", "cost"
    );
    for l in &b.lines {
        let _ = writeln!(
            o,
            "  {:<26} {:>12.5} {:>10.1} {:>10.3}",
            l.name,
            l.mass_kg,
            l.mass_kg * 1e3,
            l.cost
        );
    }
    let _ = writeln!(
        o,
        "  {:<26} {:>12.5} {:>10.1} {:>10.3}",
        "total batch",
        b.batch_kg,
        b.batch_kg * 1e3,
        b.cost_total
    );
    let _ = writeln!(
        o,
        "\n  gas released on melting    {:.5} kg (CO2, H2O, volatilised oxide)",
        b.gas_kg
    );
    let _ = writeln!(
        o,
        "  batch-to-glass ratio       {:.4}",
        b.batch_to_glass_ratio
    );
    let _ = writeln!(
        o,
        "  cost per kg of glass       {:.3} (currency of the price list)",
        b.cost_per_kg_glass
    );
    let want = glass.wt_percent();
    let _ = writeln!(o, "\n  oxide balance, batch re-melted on paper (wt%):");
    let _ = writeln!(o, "  {:<8} {:>9} {:>10}", "oxide", "target", "delivered");
    for (name, got) in &b.delivered_wt_pct {
        let t = name
            .parse::<Oxide>()
            .map(|ox| want[ox.index()])
            .unwrap_or(0.0);
        let _ = writeln!(o, "  {:<8} {:>9.3} {:>10.3}", name, t, got);
    }
    let cautions: Vec<String> = b
        .lines
        .iter()
        .filter_map(|l| l.handling.map(|h| format!("  - {}: {h}", l.name)))
        .collect();
    let _ = writeln!(o, "\nhandling");
    for c in cautions {
        let _ = writeln!(o, "{c}");
    }
    let _ = writeln!(
        o,
        "  weigh and mix batch dusts under extraction with eye and respiratory protection; follow your lab's safety rules and the suppliers' safety data sheets."
    );
    o
}

/// Which nucleation the kinetics count, and the transport law, in words.
pub fn nucleation_text(o: &KineticOptions) -> String {
    let mut parts = vec!["in the volume (homogeneous)".to_string()];
    if o.contact_angle_deg < 180.0 {
        parts.push(format!(
            "on the walls of a {} mm sample (contact angle {}°)",
            sig(o.sample_thickness_m * 1e3),
            sig(o.contact_angle_deg)
        ));
    }
    if o.heterogeneous_nuclei_per_m3 > 0.0 {
        parts.push(format!(
            "{} pre-existing nuclei/m³ of each phase",
            sig(o.heterogeneous_nuclei_per_m3)
        ));
    }
    let mut s = parts.join(" + ");
    if let Transport::Fractional { exponent } = o.transport {
        s.push_str(&format!(
            "; D ∝ (T/η)^{exponent} below {} T_g",
            o.decoupling_ratio
        ));
    }
    s
}

/// A screen's nucleation in words; with a drawn nuclei range, says that the
/// point estimate takes its geometric mean and the Monte Carlo the range.
pub fn screen_nucleation_text(problem: &ScreenProblem) -> String {
    let mut s = nucleation_text(&problem.kinetic_options);
    if let Some((lo, hi)) = problem.uncertainty.and_then(|u| u.nuclei_range_per_m3) {
        s.push_str(&format!(
            " (the geometric mean of {}–{} nuclei/m³, which the Monte Carlo draws log-uniformly)",
            sig(lo),
            sig(hi)
        ));
    }
    s
}

/// A batch sheet as CSV: raw material, mass (under `mass_column`), cost.
pub fn batch_csv(b: &Batch, mass_column: &str) -> String {
    let mut s = format!("raw_material,{mass_column},cost\n");
    for l in &b.lines {
        s.push_str(&format!(
            "\"{}\",{:.6},{:.4}\n",
            l.name.replace('"', "\"\""),
            l.mass_kg,
            l.cost
        ));
    }
    s
}

/// The label of the built-in raw materials, as outputs show it.
pub const DEMO_SHELF_LABEL: &str = "built-in demo shelf (INVENTED prices)";

/// The limits that rejected candidates, most first (and a hint when asked).
pub fn binding_text(s: &LimitSummary, with_hint: bool) -> String {
    let mut by: Vec<_> = s.by_limit.clone();
    by.sort_by_key(|e| std::cmp::Reverse(e.1));
    let mut t = String::from("limits that rejected candidates (breaking it / breaking only it):");
    let width = by
        .iter()
        .map(|e| e.0.label().chars().count())
        .max()
        .unwrap_or(0);
    for (l, any, only) in by {
        t.push_str(&format!("\n  {:<width$} {any:>7} / {only:>7}", l.label()));
    }
    if with_hint {
        // Where no limit rejects much alone, the limits bind jointly: name
        // the pairs broken together most often.
        let mut pairs = s.pairs.clone();
        pairs.sort_by_key(|e| std::cmp::Reverse(e.2));
        if !pairs.is_empty() {
            t.push_str("\nlimits broken together most often (candidates breaking both):");
            for (a, b, n) in pairs.iter().take(3) {
                t.push_str(&format!("\n  {} + {}: {n}", a.label(), b.label()));
            }
        }
        t.push_str(
            "\nhint: relax the limit that rejects most candidates alone; if none rejects many alone, the pairs above bind together: relax one of a pair, or widen the oxide ranges",
        );
    }
    t
}

/// What decides whether a recipe's critical rate is acceptable: the safety
/// factor (no uncertainty data) or the probability of a glass (a screen
/// with `[uncertainty] min_probability`), in one line.
pub fn feasibility_text(problem: &ScreenProblem) -> String {
    let e = &problem.equipment;
    match problem.uncertainty {
        Some(u) if u.min_probability.is_some() => format!(
            "equipment: {} at {:.3} K/s → P(glassy at {:.3} K/s) must be ≥ {} over {} draws of the models' spreads (seed {}); the probability decides, not the safety factor",
            e.name,
            e.rate.0,
            e.rate.0,
            u.min_probability.unwrap_or(0.0),
            u.draws,
            u.seed
        ),
        _ => format!(
            "equipment: {} at {:.3} K/s with safety factor {} → R_c must be ≤ {:.3} K/s (the safety factor decides{})",
            e.name,
            e.rate.0,
            e.safety_factor,
            problem.allowed_rate().0,
            if problem.uncertainty.is_some() {
                "; the probability is reported, no min_probability asked"
            } else {
                "; no uncertainty data"
            }
        ),
    }
}

/// With several `[[equipment]]`: which one decides and which are only
/// reported, in one line (None with a single quench option).
pub fn quench_options_text(problem: &ScreenProblem) -> Option<String> {
    if problem.more_equipment.is_empty() {
        return None;
    }
    let others: Vec<String> = problem
        .more_equipment
        .iter()
        .map(|q| {
            format!(
                "{} ({} K/s, safety factor {})",
                q.name,
                sig(q.rate.0),
                q.safety_factor
            )
        })
        .collect();
    let rule = if problem.probability_decides() {
        format!(
            "\n  {}",
            crate::report::records::equipment_rule_text(problem)
        )
    } else {
        String::new()
    };
    Some(format!(
        "quench options: {} decides feasibility and ranking; also reported per recipe (glassy_with_… columns): {}{rule}",
        problem.equipment.name,
        others.join(", ")
    ))
}

/// The Monte Carlo stage of a screen in a few lines: how many recipes were
/// drawn of those the search kept, how many the bound left out, and why.
pub fn probability_stage_text(problem: &ScreenProblem, o: &ProbabilityOutcome) -> String {
    let Some(u) = problem.uncertainty else {
        return String::new();
    };
    let mut t = format!(
        "Monte Carlo over the {} feasible recipes kept ({} draws each, seed {}): {} drawn; {} glassy even at the least favourable corner of the draws (P = 1 without drawing); {} left undrawn because a bound keeps them off the shortlist (docs/science.md, \"Uncertainty in the screen\"); {} corner evaluations",
        o.considered,
        u.draws,
        u.seed,
        o.drawn.len() - o.certain,
        o.certain,
        o.bounded_out,
        o.corner_evaluations
    );
    if !o.monotone {
        t.push_str(
            "; a spread that moves R_c both ways (a fitted viscosity or liquidus) leaves no bound",
        );
    }
    if let Some(m) = u.min_probability {
        t.push_str(&format!(
            "\n  {} known to fall below min_probability {m} (drawn, or bounded below it)",
            count(o.below_min, "recipe", "recipes")
        ));
    }
    match (o.pool_exact, o.let_go_bound) {
        (Some(false), Some(b)) => t.push_str(&format!(
            "\n  caution: the search let go a feasible recipe whose probability may reach {b:.3}, not bounded off the shortlist: a recipe the full Monte Carlo would shortlist may be missing (a larger [shortlist] size or refine_from keeps more)"
        )),
        (Some(true), Some(b)) if b >= 1.0 => t.push_str(
            "\n  every feasible recipe the search let go is bounded off the shortlist: those that may be glassy in every draw rank after the last pick by cost (then melting temperature)",
        ),
        (Some(true), Some(b)) => t.push_str(&format!(
            "\n  every feasible recipe the search let go is bounded off the shortlist (P ≤ {b:.3}, by a corner of the draws)"
        )),
        _ => {}
    }
    if problem.objective != crate::screen::ObjectiveKind::Probability {
        if o.walked_every_feasible {
            t.push_str(&format!(
                "\n  the recipes the search kept by the objective ran out before the shortlist was full (or could not prove it): every feasible recipe of the screen ({}) was walked again, so the shortlist is the one drawing every feasible recipe gives",
                o.considered
            ));
        } else if o.objective_let_go && o.pool_exact == Some(true) {
            t.push_str(
                "\n  every feasible recipe the search let go ranks after the last pick by the objective: the shortlist is the one drawing every feasible recipe gives",
            );
        }
    }
    if let Some(f) = o.failures.first() {
        t.push_str(&format!(
            "\n  {} could not be drawn (counted as not glassy enough); the first: {f}",
            count(o.failures.len(), "recipe", "recipes")
        ));
    }
    t.push('\n');
    t
}

/// The run summary printed at the end of a screen and written to summary.txt.
pub fn screen_summary_text(
    config: &str,
    problem: &ScreenProblem,
    s: &LimitSummary,
    shortlisted: usize,
) -> String {
    format!(
        "screen {}: {} candidates kept ({} evaluations with refinement), {} meet every limit, {} shortlisted\n\
         {}\n\
         furnace: {:.0} °C; melting temperature (viscosity {}) ≤ {:.0} °C, liquidus ≤ {:.0} °C\n\
         nucleation: {}\n{}\n{}\n",
        config,
        s.evaluated,
        s.evaluations,
        s.feasible,
        shortlisted,
        match quench_options_text(problem) {
            Some(q) => format!("{}\n{q}", feasibility_text(problem)),
            None => feasibility_text(problem),
        },
        problem.furnace_max.to_celsius().0,
        pa_s(problem.models.melting_viscosity_pa_s),
        problem.melting_max.to_celsius().0,
        problem.liquidus_max.to_celsius().0,
        screen_nucleation_text(problem),
        binding_text(s, false),
        CAUTION
    )
}

/// What snapping the shortlist to weighable amounts did (summary.txt):
/// the rule, how many recipes it kept and dropped, and why each was dropped.
pub fn snapping_text(problem: &ScreenProblem, o: &SnapOutcome) -> String {
    let Some(sn) = problem.snapping else {
        return String::new();
    };
    let balance = crate::screen::Simplex::new(problem).balance.0;
    let mut rule = Vec::new();
    if sn.resolution_mol_pct > 0.0 {
        rule.push(format!(
            "every amount but {balance}'s to a {} mol% grid",
            sn.resolution_mol_pct
        ));
    }
    if sn.min_amount_mol_pct > 0.0 {
        rule.push(format!(
            "amounts below {} mol% to zero",
            sn.min_amount_mol_pct
        ));
    }
    let kept = o.before - o.dropped.len();
    let mut t = format!(
        "snapping to weighable amounts: {}; {balance} (the balance oxide) takes the rest, so each recipe sums to 100 mol%; the nearest snapped recipe that meets every limit again (same models) replaces each one: {} of {} kept, {} dropped ({} evaluated)",
        rule.join(", "),
        kept,
        count(o.before, "shortlisted recipe", "shortlisted recipes"),
        o.dropped.len(),
        count(o.evaluations, "snapped recipe", "snapped recipes"),
    );
    for d in &o.dropped {
        let amounts: Vec<String> = problem
            .oxides
            .iter()
            .filter(|(ox, ..)| d.mol_pct[ox.index()] > 0.0)
            .map(|(ox, ..)| format!("{ox} {:.2}", d.mol_pct[ox.index()]))
            .collect();
        let _ = write!(
            t,
            "\n  dropped: place {} before snapping ({} mol%): {}",
            d.place,
            amounts.join(", "),
            d.reason
        );
    }
    if !o.dropped.is_empty() {
        let full = problem.shortlist_size.max(o.before);
        let now = kept + o.refilled.len();
        let _ = write!(
            t,
            "\n  refill: {} of {} taken by the next-ranked candidates, each snapped and checked the same way ({} tried); the shortlist holds {now} of {full}{}",
            o.refilled.len(),
            count(full - kept, "place left open", "places left open"),
            o.refill_tried,
            if now >= full {
                String::new()
            } else if o.refill_ran_out {
                ": no further feasible candidate at least the shortlist distance from those kept".to_string()
            } else {
                format!(
                    ": stopped after {} candidates",
                    o.refill_tried
                )
            }
        );
        for r in &o.refilled {
            let amounts: Vec<String> = problem
                .oxides
                .iter()
                .filter(|(ox, ..)| r.mol_pct[ox.index()] > 0.0)
                .map(|(ox, ..)| format!("{ox} {:.2}", r.mol_pct[ox.index()]))
                .collect();
            let _ = write!(
                t,
                "\n  refilled from ({} mol% before snapping){}",
                amounts.join(", "),
                if r.passed_over > 0 {
                    format!(
                        ", after {} whose snapped recipes did not pass",
                        count(r.passed_over, "candidate", "candidates")
                    )
                } else {
                    String::new()
                }
            );
        }
    }
    t
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn compact_numbers() {
        assert_eq!(sig(0.01534), "0.015");
        assert_eq!(sig(1.234e-7), "1.23e-7");
        assert_eq!(sig(1234.0), "1234");
    }

    #[test]
    fn counts_take_the_noun_in_the_right_number() {
        assert_eq!(count(1, "glass", "glasses"), "1 glass");
        assert_eq!(count(0, "glass", "glasses"), "0 glasses");
        assert_eq!(count(12, "coefficient", "coefficients"), "12 coefficients");
    }

    #[test]
    fn durations_choose_a_readable_unit() {
        assert_eq!(duration(90.0), "90.0 s (90.0 s)");
        assert_eq!(duration(600.0), "600 s (10.0 min)");
        assert_eq!(duration(3.0 * 3600.0), "10800 s (3.00 h)");
        assert_eq!(duration(3.0 * 86400.0), "2.59e5 s (3.00 days)");
        assert_eq!(duration(3.0 * 365.25 * 86400.0), "9.47e7 s (3.00 years)");
        assert_eq!(duration(f64::INFINITY), "never");
    }
}
