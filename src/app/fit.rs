//! `quenchwise fit viscosity|liquidus|kinetics`: read a measurement table,
//! fit the models (in the library), write the fitted model set with its fit
//! records, plus residuals (CSV) and a residual plot (SVG) when asked, then
//! print the fit summary.

use super::eval::{check_kinetic_args, overrides};
use super::models::{base_options, load_models};
use super::Outcome;
use crate::cli::{
    FitArgs, FitCommand, FitCommon, FitKineticsArgs, FitLiquidusArgs, FitViscosityArgs, FormArg,
};
use quenchwise::assess::composition_melt;
use quenchwise::composition::{Basis, Oxide};
use quenchwise::error::{Error, ResultExt};
use quenchwise::files::fit_data::{
    read_kinetic_data, read_liquidus_data, read_viscosity_data, sha256_hex, CompositionColumns,
};
use quenchwise::files::model_set::{is_built_in, load_model_set_text};
use quenchwise::files::model_writer::{model_set_toml, viscosity_toml, write_text, Notes};
use quenchwise::kinetics::fit::{constrained_phases, fit_kinetics, KineticFitSpec, KineticPoint};
use quenchwise::kinetics::KineticOptions;
use quenchwise::properties::fit::{
    fit_liquidus, fit_viscosity, CurveForm, FitRecord, Provenance, ViscosityTerms,
};
use quenchwise::properties::{About, KineticsFitRecord, ModelSet, ViscosityParam};
use quenchwise::report::fit::{
    kinetic_fit_text, kinetic_residuals_csv, liquidus_fit_text, liquidus_residuals_csv,
    viscosity_fit_text, viscosity_residuals_csv,
};
use quenchwise::report::plot::{residuals_svg, ResidualSeries};
use quenchwise::report::text::{count, nucleation_text};
use quenchwise::units::kelvin_to_celsius;
use std::io::Write;
use std::path::Path;

pub fn fit(a: FitArgs) -> Result<Outcome, Error> {
    match a.what {
        FitCommand::Viscosity(v) => viscosity(v),
        FitCommand::Liquidus(l) => liquidus(l),
        FitCommand::Kinetics(k) => kinetics(k),
    }
}

fn print(text: &str) -> Result<(), Error> {
    std::io::stdout()
        .lock()
        .write_all(text.as_bytes())
        .map_err(|e| Error::internal(format!("writing to stdout: {e}")))
}

/// The date (UTC) `days` after 1970-01-01, as YYYY-MM-DD (H. Hinnant's
/// civil-from-days algorithm, "chrono-Compatible Low-Level Date Algorithms").
fn civil_date(days: i64) -> String {
    let z = days + 719_468;
    let era = z.div_euclid(146_097);
    let doe = z - era * 146_097;
    let yoe = (doe - doe / 1460 + doe / 36_524 - doe / 146_096) / 365;
    let doy = doe - (365 * yoe + yoe / 4 - yoe / 100);
    let mp = (5 * doy + 2) / 153;
    let d = doy - (153 * mp + 2) / 5 + 1;
    let m = if mp < 10 { mp + 3 } else { mp - 9 };
    let y = yoe + era * 400 + i64::from(m <= 2);
    format!("{y:04}-{m:02}-{d:02}")
}

fn today() -> String {
    let secs = std::time::SystemTime::now()
        .duration_since(std::time::UNIX_EPOCH)
        .map(|d| d.as_secs())
        .unwrap_or(0);
    civil_date((secs / 86_400) as i64)
}

fn provenance(data: &Path) -> Result<Provenance, Error> {
    Ok(Provenance {
        data: data.display().to_string(),
        data_sha256: sha256_hex(data)?,
        date: today(),
    })
}

fn columns(c: &FitCommon) -> CompositionColumns {
    CompositionColumns {
        basis: if c.wt {
            Basis::WtPercent
        } else {
            Basis::MolPercent
        },
        sum_tolerance: c.sum_tolerance,
    }
}

fn short_sha(p: &Provenance) -> String {
    p.data_sha256.chars().take(12).collect()
}

/// The base set, its notes, and the name of the fitted set.
fn base(models: &Path, name: Option<&str>) -> Result<(ModelSet, Notes, String), Error> {
    let (set, text) = load_model_set_text(Some(models))?;
    let name = match name {
        Some(n) if n.trim().is_empty() => {
            return Err(Error::bad_input("--name must not be empty"));
        }
        Some(n) => n.trim().to_string(),
        None if is_built_in(Some(models)) => {
            return Err(Error::bad_input(format!(
                "--name is required when the base set is the built-in {}",
                set.about.name
            ))
            .with_hint(
                "name the fitted set, e.g. --name lab-glasses, so it never passes for the demo",
            ));
        }
        None => set.about.name.clone(),
    };
    Ok((set, Notes::of_text(&text), name))
}

/// The provenance of a fitted copy of `base`: a new name starts a new
/// description and source; every fit adds a line to `fitted`.
fn fitted_about(base: &About, name: &str, line: String, date: &str) -> About {
    let mut a = base.clone();
    if name != base.name {
        a.description = format!(
            "fitted to measurements, starting from the model set '{}': {}",
            base.name, base.description
        );
        a.source = format!(
            "quenchwise fit (see fitted); base set '{}': {}",
            base.name, base.source
        );
        a.name = name.to_string();
    }
    a.date = date.to_string();
    a.fitted.push(line);
    a
}

fn header(set_name: &str, command: &str, base: Option<&ModelSet>, date: &str) -> Vec<String> {
    let mut h = vec![
        format!("quenchwise model set: {set_name}"),
        format!(
            "Written by quenchwise {} (`quenchwise fit {command}`) on {date}.",
            env!("CARGO_PKG_VERSION")
        ),
        "[about] fitted says what was fitted to which data. Each fitted part carries".into(),
        "its fit record: the statistics, the data file's SHA-256 and the covariance".into(),
        "of its coefficients (in the order of `coefficients`).".into(),
    ];
    if let Some(b) = base {
        h.push(format!(
            "Numbers that were not fitted come from the model set '{}'.",
            b.about.name
        ));
        if b.about.invented {
            h.push(
                "That set's numbers are INVENTED (for demonstration), and invented = true".into(),
            );
            h.push("stays until every part has been fitted to real measurements.".into());
        }
    }
    h
}

fn write_outputs(
    common: &FitCommon,
    model_text: &str,
    residuals: String,
    svg: impl FnOnce() -> String,
) -> Result<(), Error> {
    write_text(&common.out, model_text).map_err(Error::internal)?;
    errln!("quenchwise: wrote {}", common.out.display());
    if let Some(p) = &common.residuals {
        write_text(p, &residuals).map_err(Error::internal)?;
        errln!("quenchwise: wrote residuals to {}", p.display());
    }
    if let Some(p) = &common.plot {
        write_text(p, &svg()).map_err(Error::internal)?;
        errln!("quenchwise: wrote the residual plot to {}", p.display());
    }
    Ok(())
}

fn note_ignored(data: &Path, ignored: &[String]) {
    if !ignored.is_empty() {
        errln!(
            "quenchwise: {}: columns not read: {}",
            data.display(),
            ignored.join(", ")
        );
    }
}

/// "b_k:Na2O*CaO" as a parameter and two oxides.
fn pair(text: &str) -> Result<(ViscosityParam, Oxide, Oxide), Error> {
    let bad = || {
        Error::bad_input(format!("--pair {text}: expected PARAMETER:OXIDE*OXIDE"))
            .with_hint("e.g. --pair b_k:Na2O*CaO; parameters are a, b_k, c_k (VFT) or log_eta_inf, tg_k, fragility (MYEGA)")
    };
    let (p, rest) = text.split_once(':').ok_or_else(bad)?;
    let (a, b) = rest.split_once('*').ok_or_else(bad)?;
    let param = ViscosityParam::from_key(p.trim()).ok_or_else(bad)?;
    let ox = |s: &str| {
        s.trim().parse::<Oxide>().map_err(|_| {
            Error::bad_input(format!("--pair {text}: unknown oxide '{}'", s.trim()))
                .with_hint(format!("known oxides are {}", Oxide::known_list()))
        })
    };
    Ok((param, ox(a)?, ox(b)?))
}

fn viscosity(a: FitViscosityArgs) -> Result<Outcome, Error> {
    let c = &a.common;
    let ctx = || format!("fitting {}", c.data.display());
    let data = read_viscosity_data(&c.data, columns(c))?;
    note_ignored(&c.data, &data.ignored);
    let prov = provenance(&c.data)?;
    let spec = ViscosityTerms {
        form: match a.form {
            FormArg::Vft => CurveForm::Vft,
            FormArg::Myega => CurveForm::Myega,
        },
        first_linear: a.a_linear,
        pairs: a.pairs.iter().map(|p| pair(p)).collect::<Result<_, _>>()?,
        first_fixed: None,
    };
    let based = a
        .models
        .as_deref()
        .map(|m| base(m, c.name.as_deref()))
        .transpose()?;
    let set_name = match (&based, &c.name) {
        (Some((_, _, n)), _) => n.clone(),
        (None, Some(n)) => n.clone(),
        (None, None) => c
            .out
            .file_stem()
            .map(|s| s.to_string_lossy().into_owned())
            .unwrap_or_else(|| "fitted-viscosity".into()),
    };
    let form_name = match spec.form {
        CurveForm::Vft => "VFT",
        CurveForm::Myega => "MYEGA",
    };
    let fit = fit_viscosity(
        &data.points,
        &spec,
        &format!("{set_name} {form_name}"),
        &format!(
            "fitted to {} (sha256 {}…) on {}",
            prov.data,
            short_sha(&prov),
            prov.date
        ),
        &prov,
        !a.no_cv,
    )
    .with_context(ctx)?;
    let line = format!(
        "viscosity: {form_name} fitted to {} (sha256 {}…; {} of {}) on {}: RMSE {:.4} log10 Pa s{}",
        prov.data,
        short_sha(&prov),
        count(data.points.len(), "point", "points"),
        count(data.glasses.len(), "glass", "glasses"),
        prov.date,
        fit.solution.statistics.rmse,
        fit.cv_rmse
            .map(|v| format!(", leave one glass out {v:.4} log10 Pa s"))
            .unwrap_or_default()
    );
    let text = match &based {
        Some((set, notes, name)) => {
            if set.kinetics_fit.is_some() {
                errln!("quenchwise: note: the α of '{}' were fitted with its old viscosity model; fit kinetics again", set.about.name);
            }
            let mut out = set.clone().with_viscosity(fit.model.clone());
            out.about = fitted_about(&set.about, name, line, &prov.date);
            let notes = Notes {
                viscosity: None,
                ..notes.clone()
            };
            model_set_toml(
                &out,
                &notes,
                &header(name, "viscosity", Some(set), &prov.date),
            )
        }
        None => {
            let about = About {
                name: set_name.clone(),
                description: format!("{form_name} viscosity model fitted to measurements"),
                source: format!("quenchwise fit viscosity; data {}", prov.data),
                date: prov.date.clone(),
                units: "mole fraction; K; log10 Pa s".into(),
                invented: false,
                fitted: vec![line],
            };
            viscosity_toml(
                &about,
                &fit.model,
                &header(&set_name, "viscosity", None, &prov.date),
            )
        }
    };
    let summary = viscosity_fit_text(&fit, &data.points, &data.glasses);
    let sigma = fit.solution.statistics.sigma;
    write_outputs(
        c,
        &text,
        viscosity_residuals_csv(&fit, &data.points, &data.glasses),
        || {
            let own: Vec<(f64, f64)> = data
                .points
                .iter()
                .zip(&fit.points)
                .map(|(p, r)| (kelvin_to_celsius(p.temperature.0), r.residual))
                .collect();
            let held: Vec<(f64, f64)> = data
                .points
                .iter()
                .zip(&fit.points)
                .filter_map(|(p, r)| {
                    r.cv_predicted
                        .map(|f| (kelvin_to_celsius(p.temperature.0), f - p.log10_viscosity.0))
                })
                .collect();
            residuals_svg(
                &[
                    ResidualSeries {
                        label: "fitted".into(),
                        points: own,
                        held_out: false,
                    },
                    ResidualSeries {
                        label: "its glass left out".into(),
                        points: held,
                        held_out: true,
                    },
                ],
                "temperature / °C",
                "fitted − measured / log10(η/Pa·s)",
                Some(sigma),
                &format!("{form_name} fit to {}: residuals", c.data.display()),
            )
        },
    )?;
    if let Some(dir) = &a.viscosity_plots {
        let n = write_viscosity_plots(dir, &fit.model, &data.points, &data.glasses, form_name)?;
        errln!(
            "quenchwise: wrote {} (fitted curve and measured points) to {}",
            count(n, "viscosity plot", "viscosity plots"),
            dir.display()
        );
    }
    print(&summary)?;
    Ok(Outcome::Finished)
}

/// One SVG per glass in `dir`: the fitted curve at the glass's composition,
/// its fixpoints, and the glass's measured points. Returns how many.
fn write_viscosity_plots(
    dir: &Path,
    model: &quenchwise::properties::ViscosityModel,
    points: &[quenchwise::properties::fit::ViscosityPoint],
    glasses: &[String],
    form_name: &str,
) -> Result<usize, Error> {
    std::fs::create_dir_all(dir).map_err(|e| Error::io("creating", dir, e))?;
    let mut names: Vec<String> = Vec::new();
    for (k, glass) in glasses.iter().enumerate() {
        let mine: Vec<&quenchwise::properties::fit::ViscosityPoint> =
            points.iter().filter(|p| p.glass == k).collect();
        let Some(first) = mine.first() else {
            continue;
        };
        let comp = quenchwise::composition::Composition::from_fractions(&first.x)
            .map_err(|e| Error::bad_input(format!("glass {glass}: {e}")))?;
        let (curve, _) = model
            .curve(&comp)
            .map_err(|e| Error::bad_input(format!("glass {glass}: {e}")))?;
        let measured: Vec<(f64, f64)> = mine
            .iter()
            .map(|p| (p.temperature.0, p.log10_viscosity.0))
            .collect();
        let svg = quenchwise::report::plot::viscosity_svg(
            &curve,
            &quenchwise::report::plot::viscosity_fixpoints(&curve),
            &measured,
            &format!("Viscosity of {glass}: fitted {form_name} and measured points"),
        );
        // A file name safe anywhere; two glasses never share one.
        let mut name: String = glass
            .trim()
            .chars()
            .map(|c| {
                if c.is_ascii_alphanumeric() || c == '-' {
                    c
                } else {
                    '_'
                }
            })
            .collect();
        if name.is_empty() || names.contains(&name) {
            name = format!("{name}_{}", k + 1);
        }
        let path = dir.join(format!("{name}.svg"));
        write_text(&path, &svg).map_err(Error::internal)?;
        names.push(name);
    }
    Ok(names.len())
}

fn phase_index(set: &ModelSet, name: &str, option: &str) -> Result<usize, Error> {
    set.phases
        .iter()
        .position(|p| p.name.eq_ignore_ascii_case(name.trim()))
        .ok_or_else(|| {
            Error::bad_input(format!(
                "{option} {name}: the model set '{}' has no such phase",
                set.about.name
            ))
            .with_hint(format!(
                "its phases are {}",
                set.phases
                    .iter()
                    .map(|p| format!("'{}'", p.name))
                    .collect::<Vec<_>>()
                    .join(", ")
            ))
        })
}

fn liquidus(a: FitLiquidusArgs) -> Result<Outcome, Error> {
    let c = &a.common;
    let ctx = || format!("fitting {}", c.data.display());
    let (mut set, mut notes, name) = base(&a.models, c.name.as_deref())?;
    let base_set = set.clone();
    if let Some(v) = &a.viscosity_model {
        set = load_models(Some(&a.models), Some(v))?;
        notes.viscosity = None;
    }
    let data = read_liquidus_data(&c.data, columns(c), &set)?;
    note_ignored(&c.data, &data.ignored);
    let shift: Vec<usize> = a
        .shift
        .iter()
        .map(|n| phase_index(&set, n, "--shift"))
        .collect::<Result<_, _>>()?;
    let prov = provenance(&c.data)?;
    let fit = fit_liquidus(&set, &data.points, &shift, &prov).with_context(ctx)?;
    if set.kinetics_fit.is_some() {
        errln!("quenchwise: note: the α of '{}' were fitted with its old liquidus surfaces; fit kinetics again", set.about.name);
    }
    let (hits, tried) = fit.held_out_hits(&data.points);
    let phases: Vec<String> = fit
        .phases
        .iter()
        .map(|f| {
            format!(
                "{} ({}, RMSE {:.1} K)",
                set.phases[f.phase].name,
                match f.form {
                    quenchwise::properties::fit::SurfaceFit::Full => "full",
                    quenchwise::properties::fit::SurfaceFit::Shift => "shift",
                },
                f.solution.statistics.rmse
            )
        })
        .collect();
    let line = format!(
        "liquidus: {} fitted to {} (sha256 {}…; {} rows) on {}; primary phase right on {hits} of {tried} rows held out",
        phases.join(", "),
        prov.data,
        short_sha(&prov),
        data.points.len(),
        prov.date
    );
    let mut out = fit.set.clone();
    out.about = fitted_about(&set.about, &name, line, &prov.date);
    let text = model_set_toml(
        &out,
        &notes,
        &header(&name, "liquidus", Some(&base_set), &prov.date),
    );
    let summary = liquidus_fit_text(&fit, &data.points, &set);
    let sigma = {
        let n: usize = fit.phases.iter().map(|f| f.solution.statistics.n).sum();
        let ss: f64 = fit.phases.iter().map(|f| f.solution.statistics.ssr).sum();
        let p: usize = fit.phases.iter().map(|f| f.solution.statistics.p).sum();
        (n > p).then(|| (ss / (n - p) as f64).sqrt())
    };
    write_outputs(c, &text, liquidus_residuals_csv(&fit, &data.points), || {
        let own: Vec<(f64, f64)> = data
            .points
            .iter()
            .enumerate()
            .map(|(i, p)| {
                (
                    kelvin_to_celsius(p.liquidus.0),
                    fit.fitted[i] - p.liquidus.0,
                )
            })
            .collect();
        let held: Vec<(f64, f64)> = data
            .points
            .iter()
            .enumerate()
            .filter_map(|(i, p)| {
                fit.loo_predicted[i].map(|v| (kelvin_to_celsius(p.liquidus.0), v - p.liquidus.0))
            })
            .collect();
        residuals_svg(
            &[
                ResidualSeries {
                    label: "fitted".into(),
                    points: own,
                    held_out: false,
                },
                ResidualSeries {
                    label: "row left out".into(),
                    points: held,
                    held_out: true,
                },
            ],
            "measured liquidus / °C",
            "fitted − measured / K",
            sigma,
            &format!("liquidus fit to {}: residuals", c.data.display()),
        )
    })?;
    print(&summary)?;
    Ok(Outcome::Finished)
}

/// The kinetic options of a fit, in words.
fn options_text(o: &KineticOptions) -> String {
    format!(
        "X_c = {:e}, {} driving force, nucleation {}",
        o.detectable_fraction,
        match o.driving_force {
            quenchwise::kinetics::DrivingForce::Turnbull => "Turnbull",
            quenchwise::kinetics::DrivingForce::Hoffman => "Hoffman",
        },
        nucleation_text(o)
    )
}

fn kinetics(a: FitKineticsArgs) -> Result<Outcome, Error> {
    let c = &a.common;
    let ctx = || format!("fitting {}", c.data.display());
    let (set, notes, name) = base(&a.models, c.name.as_deref())?;
    check_kinetic_args(&a.kinetics)?;
    let opts = overrides(&a.kinetics).apply(base_options(&set));
    opts.validate()?;
    if let Some(s) = a.log10_sd {
        if !(s > 0.0 && s.is_finite()) {
            return Err(Error::bad_input(format!(
                "--log10-sd must be a positive number of decades, got {s}"
            )));
        }
    }
    let data = read_kinetic_data(&c.data, columns(c), &set)?;
    note_ignored(&c.data, &data.ignored);
    let mut points = Vec::new();
    let mut problems = Vec::new();
    for row in &data.rows {
        let melt = set
            .properties(&row.composition)
            .map_err(|e| e.to_string())
            .and_then(|p| composition_melt(&set, &p).map_err(|e| e.to_string()));
        match melt {
            Ok(melt) => {
                for m in &row.measurements {
                    points.push(KineticPoint {
                        row: row.row,
                        melt: melt.clone(),
                        measurement: *m,
                        phase: row.phase.clone(),
                    });
                }
            }
            Err(e) => problems.push(format!("row {}: {e}", row.row)),
        }
    }
    if !problems.is_empty() {
        return Err(Error::bad_input(format!(
            "{}: the model set '{}' gives no melt for these rows:\n{}",
            c.data.display(),
            set.about.name,
            problems.join("\n")
        ))
        .with_hint("fit the viscosity and liquidus first, or check these compositions"));
    }
    let phases = if a.phases.is_empty() {
        constrained_phases(&points, &opts).with_context(ctx)?
    } else {
        a.phases
            .iter()
            .map(|n| phase_index(&set, n, "--phase").map(|k| set.phases[k].name.clone()))
            .collect::<Result<_, _>>()?
    };
    let spec = KineticFitSpec {
        phases,
        fit_nuclei: a.fit_nuclei,
        log10_sd: a.log10_sd,
    };
    let fit = fit_kinetics(&points, &opts, &spec).with_context(ctx)?;
    let prov = provenance(&c.data)?;
    let nuclei = fit.nuclei_per_m3;
    let mut used = opts;
    used.heterogeneous_nuclei_per_m3 = nuclei;
    let options = options_text(&used);
    let rows: Vec<String> = data.rows.iter().map(|r| r.row.to_string()).collect();
    let mut out = set.clone();
    for (k, (phase, alpha)) in fit.alphas.iter().enumerate() {
        let p = out
            .phases
            .iter_mut()
            .find(|p| &p.name == phase)
            .expect("fitted phases come from the set");
        p.turnbull_alpha = *alpha;
        p.turnbull_alpha_sd = fit.solution.as_ref().map(|s| s.standard_error(k));
        p.calibrated_against = Some(format!(
            "quenchwise fit kinetics: {} (sha256 {}…), rows {}; {options}",
            prov.data,
            short_sha(&prov),
            rows.join(", ")
        ));
    }
    let record = match &fit.solution {
        Some(s) => FitRecord::of(
            s,
            fit.names.clone(),
            &prov,
            "least squares on log10 of each measurement (Brent for one parameter, Levenberg–Marquardt for more); Jacobian by central differences",
            "log10",
        ),
        None => FitRecord {
            data: prov.data.clone(),
            data_sha256: prov.data_sha256.clone(),
            date: prov.date.clone(),
            method: "exact: as many measurements as parameters, so no covariance".into(),
            points: fit.residual_log10.len(),
            glasses: None,
            unit: "log10".into(),
            rmse: 0.0,
            residual_sd: 0.0,
            dof: None,
            r_squared: None,
            cv_method: None,
            cv_rmse: None,
            cv_rmse_k: None,
            coefficients: Vec::new(),
            covariance: Vec::new(),
        },
    };
    out.kinetics_fit = Some(KineticsFitRecord {
        record,
        options: options.clone(),
        heterogeneous_nuclei_per_m3: nuclei,
    });
    let alphas: Vec<String> = fit
        .alphas
        .iter()
        .enumerate()
        .map(|(k, (p, v))| match &fit.solution {
            Some(s) => format!("{p} {v:.4} ± {:.4}", s.standard_error(k)),
            None => format!("{p} {v:.4}"),
        })
        .collect();
    let line = format!(
        "kinetics: α of {} fitted to {} (sha256 {}…; {} measurements) on {} with {options}",
        alphas.join(", "),
        prov.data,
        short_sha(&prov),
        points.len(),
        prov.date
    );
    out.about = fitted_about(&set.about, &name, line, &prov.date);
    let text = model_set_toml(
        &out,
        &notes,
        &header(&name, "kinetics", Some(&set), &prov.date),
    );
    let summary = kinetic_fit_text(&fit, &points, &options);
    if a.fit_nuclei {
        errln!(
            "quenchwise: the fitted α hold with {} pre-existing nuclei per m³: eval uses it by default with this set; give heterogeneous_nuclei_per_m3 = {} in a screen config's [kinetics]",
            quenchwise::report::sig(nuclei),
            quenchwise::report::sig(nuclei)
        );
    }
    let sigma = fit.solution.as_ref().map(|s| s.statistics.sigma);
    write_outputs(c, &text, kinetic_residuals_csv(&fit, &points), || {
        let own: Vec<(f64, f64)> = points
            .iter()
            .zip(&fit.residual_log10)
            .map(|(p, r)| (p.measurement.value().log10(), *r))
            .collect();
        residuals_svg(
            &[ResidualSeries {
                label: "fitted".into(),
                points: own,
                held_out: false,
            }],
            "measured value / log10 (SI units: K/s, s, m⁻³ s⁻¹, m/s)",
            "model − measured / decades",
            sigma,
            &format!("kinetics fit to {}: residuals", c.data.display()),
        )
    })?;
    print(&summary)?;
    Ok(Outcome::Finished)
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn civil_dates() {
        // Source: the Unix epoch, and 2024-01-01 = 19 723 days after it
        // (54 years of 365 days + 13 leap days); 2000-02-29 is day 11 016.
        assert_eq!(civil_date(0), "1970-01-01");
        assert_eq!(civil_date(19_723), "2024-01-01");
        assert_eq!(civil_date(11_016), "2000-02-29");
    }

    #[test]
    fn pairs_parse() {
        let (p, a, b) = pair("b_k:Na2O*CaO").unwrap();
        assert_eq!((p, a, b), (ViscosityParam::BK, Oxide::Na2O, Oxide::CaO));
        assert!(pair("b_k:Na2O").is_err());
        assert!(pair("q:Na2O*CaO").is_err());
        assert!(pair("a:Na2O*CaX")
            .unwrap_err()
            .hint()
            .unwrap()
            .contains("SiO2"));
    }
}
