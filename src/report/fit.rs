//! What a fit prints: the statistics, a table of coefficients with standard
//! errors and 95 % intervals (Student t), each glass or phase with its error,
//! and every point's residual as CSV. Every number carries its unit.

use super::text::{count, sig};
use crate::kinetics::fit::{KineticFit, KineticPoint, Measurement};
use crate::numeric::least_squares::{interval_factor, Statistics};
use crate::properties::fit::{
    LiquidusFit, LiquidusPoint, SurfaceFit, ViscosityFit, ViscosityPoint,
};
use crate::properties::{ModelSet, Term, ViscosityParam};
use crate::units::kelvin_to_celsius as c;
use std::fmt::Write;

/// The confidence level of the printed intervals.
pub const LEVEL: f64 = 0.95;

/// A number to 5 significant figures (coefficients and their errors).
pub fn g5(x: f64) -> String {
    if !x.is_finite() {
        return format!("{x}");
    }
    let a = x.abs();
    if a != 0.0 && !(1e-3..1e6).contains(&a) {
        return format!("{x:.4e}");
    }
    let digits = if a == 0.0 {
        4
    } else {
        (4 - a.log10().floor() as i32).clamp(0, 8) as usize
    };
    format!("{x:.digits$}")
}

/// One row of a coefficient table.
#[derive(Debug, Clone, PartialEq)]
pub struct CoefficientRow {
    pub name: String,
    pub value: f64,
    pub standard_error: Option<f64>,
    pub unit: String,
}

/// Coefficient, value, standard error, 95 % interval and unit, aligned.
pub fn coefficient_table(rows: &[CoefficientRow], dof: Option<usize>) -> String {
    let t = interval_factor(LEVEL, dof);
    let mut o = String::new();
    let w = rows
        .iter()
        .map(|r| r.name.chars().count())
        .max()
        .unwrap_or(0)
        .max(11);
    let _ = writeln!(
        o,
        "  {:<w$} {:>13} {:>12}   {:<29} unit",
        "coefficient",
        "value",
        "std error",
        format!("{:.0} % interval", LEVEL * 100.0),
    );
    for r in rows {
        let (se, ci) = match r.standard_error {
            Some(se) if t.is_finite() => (
                g5(se),
                format!("[{}, {}]", g5(r.value - t * se), g5(r.value + t * se)),
            ),
            Some(se) => (g5(se), "-".into()),
            None => ("-".into(), "-".into()),
        };
        let _ = writeln!(
            o,
            "  {:<w$} {:>13} {:>12}   {:<29} {}",
            r.name,
            g5(r.value),
            se,
            ci,
            r.unit
        );
    }
    let _ = writeln!(
        o,
        "  (intervals: ± {} standard errors, {})",
        sig(t),
        match dof {
            Some(d) => format!(
                "Student t with {}",
                count(d, "degree of freedom", "degrees of freedom")
            ),
            None => "normal, the measurements' scatter given".into(),
        }
    );
    o
}

fn stats_line(s: &Statistics, unit: &str) -> String {
    let mut line = format!(
        "RMSE {} {unit}   residual sd {} {unit}",
        g5(s.rmse),
        g5(s.sigma)
    );
    match s.dof {
        Some(d) => line.push_str(&format!(
            " ({})",
            count(d, "degree of freedom", "degrees of freedom")
        )),
        None => line.push_str(" (given)"),
    }
    if s.r_squared.is_finite() {
        line.push_str(&format!("   R² {:.5}", s.r_squared));
    }
    line.push_str(&format!(
        "   {}, {}",
        count(s.n, "point", "points"),
        count(s.p, "coefficient", "coefficients")
    ));
    line
}

fn viscosity_unit(p: ViscosityParam) -> &'static str {
    match p {
        ViscosityParam::A | ViscosityParam::LogEtaInf => "log10 Pa·s",
        ViscosityParam::BK | ViscosityParam::CK | ViscosityParam::TgK => "K",
        ViscosityParam::Fragility => "(dimensionless)",
    }
}

/// The summary of a viscosity fit.
pub fn viscosity_fit_text(
    fit: &ViscosityFit,
    points: &[ViscosityPoint],
    labels: &[String],
) -> String {
    let mut o = String::new();
    let s = &fit.solution;
    let form = match fit.model.form {
        crate::properties::ViscosityForm::Vft { .. } => "VFT  log10(η/Pa·s) = A + B/(T − C)",
        crate::properties::ViscosityForm::Myega { .. } => {
            "MYEGA  log10(η/Pa·s) = L + (12 − L)(T_g/T) exp[(m/(12 − L) − 1)(T_g/T − 1)]"
        }
    };
    let (t0, t1) = points
        .iter()
        .fold((f64::INFINITY, f64::NEG_INFINITY), |a, p| {
            (a.0.min(p.temperature.0), a.1.max(p.temperature.0))
        });
    let _ = writeln!(o, "viscosity fit   {form}");
    let _ = writeln!(
        o,
        "                terms multiply mole fractions; Levenberg–Marquardt, {} steps",
        s.iterations
    );
    let _ = writeln!(
        o,
        "data            {} of {}, {:.0}–{:.0} °C",
        count(points.len(), "point", "points"),
        count(labels.len(), "glass", "glasses"),
        c(t0),
        c(t1)
    );
    let _ = writeln!(
        o,
        "fit             {}",
        stats_line(&s.statistics, "log10 Pa·s")
    );
    match (fit.cv_rmse, fit.cv_rmse_k) {
        (Some(r), k) => {
            let _ = writeln!(
                o,
                "held out        leave one glass out: RMSE {} log10 Pa·s{}",
                g5(r),
                k.map(|k| format!(", {} K as isokom temperature", sig(k)))
                    .unwrap_or_default()
            );
        }
        (None, _) => {
            let _ = writeln!(o, "held out        not cross-validated");
        }
    }
    let rows: Vec<CoefficientRow> = fit
        .coefficients
        .iter()
        .enumerate()
        .map(|(j, c)| CoefficientRow {
            name: c.to_string(),
            value: s.coefficients[j],
            standard_error: Some(s.standard_error(j)),
            unit: viscosity_unit(c.param).into(),
        })
        .collect();
    let _ = writeln!(o, "\ncoefficients");
    o.push_str(&coefficient_table(&rows, s.statistics.dof));
    let _ = writeln!(o, "\nglasses");
    let w = labels
        .iter()
        .map(|l| l.chars().count())
        .max()
        .unwrap_or(5)
        .clamp(5, 28);
    let _ = writeln!(
        o,
        "  {:<w$} {:>6} {:>10} {:>10} {:>10}   {:>17}   {:>17}",
        "glass", "points", "T_g °C", "m", "η=10 Pa·s", "RMSE log10 Pa·s", "held out"
    );
    for g in &fit.glasses {
        let tg = g
            .curve
            .temperature_at(crate::units::Log10PaS(12.0))
            .map(|t| format!("{:.1}", c(t.0)))
            .unwrap_or_else(|_| "-".into());
        let tm = g
            .curve
            .temperature_at(crate::units::Log10PaS(1.0))
            .map(|t| format!("{:.1} °C", c(t.0)))
            .unwrap_or_else(|_| "-".into());
        let m = g
            .curve
            .fragility()
            .map(|m| format!("{m:.1}"))
            .unwrap_or_else(|_| "-".into());
        let label: String = labels[g.glass].chars().take(w).collect();
        let held = match (g.cv_rmse, &g.cv_note) {
            (Some(v), _) => format!("{} log10 Pa·s", g5(v)),
            (None, Some(n)) => n.clone(),
            (None, None) => "-".into(),
        };
        let _ = writeln!(
            o,
            "  {:<w$} {:>6} {:>10} {:>10} {:>10}   {:>17}   {:>17}",
            label,
            g.points,
            tg,
            m,
            tm,
            g5(g.rmse),
            held
        );
    }
    for w in &fit.warnings {
        let _ = writeln!(o, "note: {w}");
    }
    o
}

fn csv_text(s: &str) -> String {
    format!("\"{}\"", s.replace('"', "\"\""))
}

fn opt(v: Option<f64>) -> String {
    v.map(|v| format!("{v:.6}")).unwrap_or_default()
}

/// Every viscosity point with its fit, as CSV.
pub fn viscosity_residuals_csv(
    fit: &ViscosityFit,
    points: &[ViscosityPoint],
    labels: &[String],
) -> String {
    let mut s = String::from("row,glass,temperature_k,temperature_c,measured_log10_pa_s,fitted_log10_pa_s,residual_log10_pa_s,held_out_predicted_log10_pa_s,held_out_residual_log10_pa_s,held_out_isokom_error_k\n");
    for (p, r) in points.iter().zip(&fit.points) {
        let _ = writeln!(
            s,
            "{},{},{:.3},{:.3},{:.6},{:.6},{:.6},{},{},{}",
            p.row,
            csv_text(&labels[p.glass]),
            p.temperature.0,
            c(p.temperature.0),
            p.log10_viscosity.0,
            r.fitted,
            r.residual,
            opt(r.cv_predicted),
            opt(r.cv_predicted.map(|f| f - p.log10_viscosity.0)),
            opt(r.cv_residual_k)
        );
    }
    s
}

/// The summary of a liquidus fit.
pub fn liquidus_fit_text(fit: &LiquidusFit, points: &[LiquidusPoint], base: &ModelSet) -> String {
    let mut o = String::new();
    let _ = writeln!(
        o,
        "liquidus fit    {} rows, {} phases; linear least squares (SVD), terms multiply mole fractions",
        points.len(),
        fit.phases.len()
    );
    for f in &fit.phases {
        let p = &fit.set.phases[f.phase];
        let s = &f.solution;
        let _ = writeln!(
            o,
            "\n{}  ({})",
            p.name,
            match f.form {
                SurfaceFit::Full => "T_L = Σ a_i x_i".to_string(),
                SurfaceFit::Shift =>
                    format!("the surface of '{}' shifted by a constant", base.about.name),
            }
        );
        let _ = writeln!(o, "  fit        {}", stats_line(&s.statistics, "K"));
        match f.loo_rmse {
            Some(v) => {
                let _ = writeln!(o, "  held out   leave one row out: RMSE {} K", g5(v));
            }
            None => {
                let _ = writeln!(
                    o,
                    "  held out   a row alone fixes a coefficient: no leave-one-out error"
                );
            }
        }
        if let Some((tmax, _)) = f.max_over_domain {
            let _ = writeln!(
                o,
                "  domain     highest liquidus of the surface {:.1} K ({:.1} °C); melting point {:.1} K",
                tmax,
                c(tmax),
                p.melting_point.0
            );
        }
        let rows: Vec<CoefficientRow> = f
            .terms
            .iter()
            .enumerate()
            .map(|(j, t)| CoefficientRow {
                name: match (f.form, t) {
                    (SurfaceFit::Shift, _) => "shift".into(),
                    (_, Term::Linear(o)) => o.to_string(),
                    (_, t) => t.to_string(),
                },
                value: s.coefficients[j],
                standard_error: Some(s.standard_error(j)),
                unit: "K".into(),
            })
            .collect();
        o.push_str(&coefficient_table(&rows, s.statistics.dof));
    }
    let (hits, tried) = fit.held_out_hits(points);
    let in_sample = fit
        .primary_in_sample
        .iter()
        .zip(points)
        .filter(|(a, p)| **a == p.phase)
        .count();
    let _ = writeln!(
        o,
        "\nprimary phase   named right on {in_sample} of {} rows with every row in the fit; on {hits} of {tried} rows held out one at a time",
        points.len()
    );
    for (i, p) in points.iter().enumerate() {
        if let Some(k) = fit.primary_held_out[i] {
            if k != p.phase {
                let _ = writeln!(
                    o,
                    "  row {}: measured {}, the set without the row names {}",
                    p.row, fit.set.phases[p.phase].name, fit.set.phases[k].name
                );
            }
        }
    }
    for w in &fit.warnings {
        let _ = writeln!(o, "note: {w}");
    }
    o
}

/// Every liquidus point with its fit, as CSV.
pub fn liquidus_residuals_csv(fit: &LiquidusFit, points: &[LiquidusPoint]) -> String {
    let mut s = String::from("row,primary_phase,measured_k,measured_c,fitted_k,residual_k,held_out_predicted_k,held_out_residual_k,predicted_primary_phase,held_out_primary_phase\n");
    for (i, p) in points.iter().enumerate() {
        let name = |k: usize| csv_text(&fit.set.phases[k].name);
        let _ = writeln!(
            s,
            "{},{},{:.3},{:.3},{:.3},{:.3},{},{},{},{}",
            p.row,
            name(p.phase),
            p.liquidus.0,
            c(p.liquidus.0),
            fit.fitted[i],
            fit.fitted[i] - p.liquidus.0,
            opt(fit.loo_predicted[i]),
            opt(fit.loo_predicted[i].map(|v| v - p.liquidus.0)),
            name(fit.primary_in_sample[i]),
            fit.primary_held_out[i].map(name).unwrap_or_default()
        );
    }
    s
}

/// A measurement in its unit, e.g. "R_c 2.5 K/s".
fn measurement_text(m: &Measurement, value_log10: f64) -> String {
    let v = sig(10f64.powf(value_log10));
    match m {
        Measurement::CriticalRate(_) => format!("R_c {v} K/s"),
        Measurement::NoseTime(_) => format!("nose time {v} s"),
        Measurement::TimeAt { temperature, .. } => {
            format!("time to X_c at {:.0} °C {v} s", c(temperature.0))
        }
        Measurement::Nucleation { temperature, .. } => {
            format!("I at {:.0} °C {v} m⁻³ s⁻¹", c(temperature.0))
        }
        Measurement::Growth { temperature, .. } => {
            format!("U at {:.0} °C {v} m/s", c(temperature.0))
        }
    }
}

/// The summary of a kinetic fit.
pub fn kinetic_fit_text(fit: &KineticFit, points: &[KineticPoint], options: &str) -> String {
    let mut o = String::new();
    let _ = writeln!(
        o,
        "kinetics fit    least squares on log10 of each measurement; kinetics: {options}"
    );
    match &fit.solution {
        Some(s) => {
            let _ = writeln!(
                o,
                "fit             {}",
                stats_line(&s.statistics, "decades")
            );
        }
        None => {
            let _ = writeln!(
                o,
                "fit             exact (as many measurements as parameters): no standard errors"
            );
        }
    }
    let rows: Vec<CoefficientRow> = fit
        .names
        .iter()
        .enumerate()
        .map(|(j, n)| CoefficientRow {
            name: n.clone(),
            value: fit.values[j],
            standard_error: fit.solution.as_ref().map(|s| s.standard_error(j)),
            unit: if n.ends_with("turnbull_alpha") {
                "(dimensionless)".into()
            } else {
                "log10(m⁻³)".into()
            },
        })
        .collect();
    let _ = writeln!(o, "\ncoefficients");
    o.push_str(&coefficient_table(
        &rows,
        fit.solution.as_ref().and_then(|s| s.statistics.dof),
    ));
    let _ = writeln!(o, "\nmeasurements");
    for (i, p) in points.iter().enumerate() {
        let measured = p.measurement.value().log10();
        let _ = writeln!(
            o,
            "  row {:>3}  measured {:<34} model {:<34} {:+.3} decades  ({}){}",
            p.row,
            measurement_text(&p.measurement, measured),
            measurement_text(&p.measurement, fit.predicted_log10[i]),
            fit.residual_log10[i],
            fit.phase_of_point[i],
            if p.measurement.depends_on_alpha() {
                ""
            } else {
                "  check only: growth does not depend on α"
            }
        );
    }
    for w in &fit.warnings {
        let _ = writeln!(o, "note: {w}");
    }
    o
}

/// Every kinetic measurement with the model's value, as CSV.
pub fn kinetic_residuals_csv(fit: &KineticFit, points: &[KineticPoint]) -> String {
    let mut s = String::from("row,quantity,phase,measured_si,model_si,residual_log10,fitted\n");
    for (i, p) in points.iter().enumerate() {
        let _ = writeln!(
            s,
            "{},{},{},{:.6e},{:.6e},{:.6},{}",
            p.row,
            csv_text(&p.measurement.describe()),
            csv_text(&fit.phase_of_point[i]),
            p.measurement.value(),
            10f64.powf(fit.predicted_log10[i]),
            fit.residual_log10[i],
            p.measurement.depends_on_alpha()
        );
    }
    s
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn five_significant_figures() {
        assert_eq!(g5(6464.123), "6464.1");
        assert_eq!(g5(-2.45), "-2.4500");
        assert_eq!(g5(0.012345), "0.012345");
        assert_eq!(g5(2.5e-7), "2.5000e-7");
        assert_eq!(g5(0.0), "0.0000");
    }
}
