//! `quenchwise models`: what a model set contains and where it comes from:
//! provenance, the viscosity model with its coefficients and domain, each
//! phase with its crystal data, α (± its standard error), liquidus surface
//! and domain, and the statistics of every fit.

use super::Outcome;
use crate::cli::ModelArgs;
use quenchwise::composition::Oxide;
use quenchwise::error::Error;
use quenchwise::files::model_set::{load_model_set, load_viscosity_model};
use quenchwise::kinetics::KineticOptions;
use quenchwise::properties::{
    Domain, FitRecord, FractionBasis, GrowthMode, LiquidusSurface, MixtureModel, ModelSet,
};
use quenchwise::report::fit::g5;
use quenchwise::report::text::count;
use std::fmt::Write as _;
use std::io::Write;
use std::path::Path;

/// A model set, with its viscosity model replaced when asked.
///
/// # Errors
/// A file that cannot be read or is not a valid model set.
pub fn load_models(models: Option<&Path>, viscosity: Option<&Path>) -> Result<ModelSet, Error> {
    let mut set = load_model_set(models)?;
    if let Some(v) = viscosity {
        set = set.with_viscosity(load_viscosity_model(v)?);
    }
    Ok(set)
}

/// The default kinetic options for a model set: the nuclei density its α
/// were fitted with, if they were (α only mean something with it).
pub fn base_options(set: &ModelSet) -> KineticOptions {
    KineticOptions {
        heterogeneous_nuclei_per_m3: set
            .kinetics_fit
            .as_ref()
            .map_or(0.0, |k| k.heterogeneous_nuclei_per_m3),
        ..KineticOptions::default()
    }
}

fn domain_text(d: &Domain) -> String {
    let parts: Vec<String> = Oxide::ALL
        .iter()
        .filter(|o| d.covers(**o))
        .map(|o| range_text(d, *o))
        .collect();
    if parts.is_empty() {
        "no oxide covered".into()
    } else {
        format!("{} mol%; any other oxide is not covered", parts.join(", "))
    }
}

fn range_text(d: &Domain, o: Oxide) -> String {
    let (lo, hi) = (d.min[o.index()], d.max[o.index()]);
    if lo == hi {
        format!("{o} {lo}")
    } else {
        format!("{o} {lo:.1}–{hi:.1}")
    }
}

/// One line per oxide, one column per model (the viscosity model, then each
/// phase's liquidus surface): the mol% range each covers, "—" where an oxide
/// is not covered (docs/science.md, "Oxides a model does not cover").
fn domains_table(m: &ModelSet) -> String {
    let mut heads = vec!["viscosity".to_string()];
    heads.extend(m.phases.iter().map(|p| format!("{} liquidus", p.name)));
    let mut domains = vec![&m.viscosity.domain];
    domains.extend(m.phases.iter().map(|p| &p.domain));
    let width: Vec<usize> = heads.iter().map(|h| h.chars().count().max(11)).collect();
    let mut out = format!(
        "validity domains of {}, mol% (— : not covered)\n",
        m.about.name
    );
    let _ = write!(out, "{:<7}", "oxide");
    for (h, w) in heads.iter().zip(&width) {
        let _ = write!(out, "  {h:>w$}");
    }
    out.push('\n');
    for o in Oxide::ALL {
        if !domains.iter().any(|d| d.covers(o)) {
            continue;
        }
        let _ = write!(out, "{:<7}", o.formula());
        for (d, w) in domains.iter().zip(&width) {
            let cell = if d.covers(o) {
                format!("{:.1}–{:.1}", d.min[o.index()], d.max[o.index()])
            } else {
                "—".to_string()
            };
            let _ = write!(out, "  {cell:>w$}");
        }
        out.push('\n');
    }
    let uncovered: Vec<&str> = Oxide::ALL
        .iter()
        .filter(|o| !domains.iter().any(|d| d.covers(**o)))
        .map(|o| o.formula())
        .collect();
    if !uncovered.is_empty() {
        let _ = writeln!(
            out,
            "not covered by any model: {} (any amount is flagged as an extrapolation)",
            uncovered.join(", ")
        );
    }
    out
}

fn mixture_text(m: &MixtureModel, unit: &str) -> String {
    let per = match m.basis {
        FractionBasis::MoleFraction => "mole fraction",
        FractionBasis::MolPercent => "mol%",
    };
    let basis = if m.linear.iter().any(|v| *v != 0.0) || !m.pairs.is_empty() {
        format!("oxide terms per {per}")
    } else {
        "one constant".to_string()
    };
    let mut parts = Vec::new();
    if m.constant != 0.0 {
        parts.push(g5(m.constant));
    }
    for o in Oxide::ALL {
        let v = m.linear[o.index()];
        if v != 0.0 {
            let se = m
                .linear_standard_errors
                .map(|s| s[o.index()])
                .filter(|s| *s > 0.0)
                .map(|s| format!(" ± {}", g5(s)))
                .unwrap_or_default();
            parts.push(format!("{o} {}{se}", g5(v)));
        }
    }
    for (i, j, v) in &m.pairs {
        parts.push(format!("{}*{} {}", Oxide::ALL[*i], Oxide::ALL[*j], g5(*v)));
    }
    if !m.products.is_empty() {
        parts.push(format!("{} product terms", m.products.len()));
    }
    format!("{} ({unit}; {basis})", parts.join(", "))
}

fn fit_text(out: &mut String, indent: &str, f: &FitRecord) {
    let _ = writeln!(
        out,
        "{indent}fitted      {} on {} (sha256 {}…)",
        f.data,
        f.date,
        f.data_sha256.chars().take(12).collect::<String>()
    );
    let _ = writeln!(out, "{indent}method      {}", f.method);
    let mut stats = format!(
        "{indent}statistics  {}{}, RMSE {} {}, residual sd {} {}",
        count(f.points, "point", "points"),
        f.glasses
            .map(|g| format!(" of {}", count(g, "glass", "glasses")))
            .unwrap_or_default(),
        g5(f.rmse),
        f.unit,
        g5(f.residual_sd),
        f.unit
    );
    if let Some(d) = f.dof {
        let _ = write!(
            stats,
            " ({})",
            count(d, "degree of freedom", "degrees of freedom")
        );
    }
    if let Some(r) = f.r_squared {
        let _ = write!(stats, ", R² {r:.5}");
    }
    let _ = writeln!(out, "{stats}");
    if let (Some(m), Some(v)) = (&f.cv_method, f.cv_rmse) {
        let _ = writeln!(
            out,
            "{indent}held out    {m}: RMSE {} {}{}",
            g5(v),
            f.unit,
            f.cv_rmse_k
                .map(|k| format!(" ({} K as isokom temperature)", g5(k)))
                .unwrap_or_default()
        );
    }
    let _ = writeln!(
        out,
        "{indent}covariance  {} × {} over {}",
        f.covariance.len(),
        f.covariance.len(),
        if f.coefficients.is_empty() {
            "no coefficients".to_string()
        } else {
            f.coefficients.join(", ")
        }
    );
}

pub fn models(a: ModelArgs) -> Result<Outcome, Error> {
    let path = a.file.as_deref().or(a.models.as_deref());
    let m = load_models(path, None)?;
    if a.domains {
        std::io::stdout()
            .lock()
            .write_all(domains_table(&m).as_bytes())
            .map_err(|e| Error::internal(format!("writing to stdout: {e}")))?;
        return Ok(Outcome::Finished);
    }
    let mut out = String::new();
    let _ = writeln!(out, "model set     {}", m.about.name);
    let _ = writeln!(out, "description   {}", m.about.description);
    let _ = writeln!(out, "source        {}", m.about.source);
    let _ = writeln!(out, "date          {}", m.about.date);
    let _ = writeln!(out, "units         {}", m.about.units);
    if m.about.invented {
        let _ = writeln!(
            out,
            "status        INVENTED coefficients: for demonstration only"
        );
    }
    for f in &m.about.fitted {
        let _ = writeln!(out, "fitted        {f}");
    }
    let v = &m.viscosity;
    let _ = writeln!(out, "\nviscosity     {} ({})", v.name, v.source);
    for p in v.form.params() {
        if let Some(mix) = v.form.mixture(p) {
            let unit = match p.key() {
                "a" | "log_eta_inf" => "log10 Pa·s",
                "fragility" => "dimensionless",
                _ => "K",
            };
            let _ = writeln!(out, "  {:<11} {}", p.key(), mixture_text(mix, unit));
        }
    }
    let _ = writeln!(out, "  domain      {}", domain_text(&v.domain));
    if let Some(f) = &v.fit {
        fit_text(&mut out, "  ", f);
    }
    let _ = writeln!(out, "\ncrystal phases");
    let _ = writeln!(
        out,
        "  {:<20} {:<14} {:>10} {:>12} {:>9} {:>7} {:>16}  calibration",
        "name", "formula", "ΔH_m kJ/mol", "V_m cm³/mol", "T_m K", "growth", "α"
    );
    for p in &m.phases {
        let alpha = match p.turnbull_alpha_sd {
            Some(sd) => format!("{:.4} ± {:.4}", p.turnbull_alpha, sd),
            None => format!("{:.3}", p.turnbull_alpha),
        };
        let _ = writeln!(
            out,
            "  {:<20} {:<14} {:>10.1} {:>12.1} {:>9.0} {:>7} {:>16}  {}",
            p.name,
            p.formula,
            p.enthalpy_of_fusion_j_per_mol / 1e3,
            p.molar_volume_m3_per_mol * 1e6,
            p.melting_point.0,
            match p.growth {
                GrowthMode::Normal => "normal",
                GrowthMode::Screw => "screw",
            },
            alpha,
            p.calibrated_against.as_deref().unwrap_or("not calibrated")
        );
    }
    for p in &m.phases {
        let _ = writeln!(out, "\n  {} liquidus", p.name);
        match &p.liquidus {
            LiquidusSurface::Mixture(mix) => {
                let _ = writeln!(out, "    surface     {}", mixture_text(mix, "K"));
            }
            LiquidusSurface::FreezingPointDepression { .. } => {
                let _ = writeln!(
                    out,
                    "    surface     freezing-point depression from its fusion data"
                );
            }
        }
        let _ = writeln!(out, "    domain      {}", domain_text(&p.domain));
        if let Some(f) = &p.liquidus_fit {
            fit_text(&mut out, "    ", f);
        }
    }
    if let Some(k) = &m.kinetics_fit {
        let _ = writeln!(out, "\nkinetic factors");
        let _ = writeln!(out, "  options     {}", k.options);
        fit_text(&mut out, "  ", &k.record);
    }
    std::io::stdout()
        .lock()
        .write_all(out.as_bytes())
        .map_err(|e| Error::internal(format!("writing to stdout: {e}")))?;
    Ok(Outcome::Finished)
}
