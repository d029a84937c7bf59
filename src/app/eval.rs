//! `quenchwise eval`: one composition or melt card (a table, JSON, a TTT
//! curve, a picture), or a whole table of either evaluated in parallel.

use super::input;
use super::models::{base_options, load_models};
use super::progress::Progress;
use super::{in_range, threads, Outcome};
use crate::cli::{EvalArgs, KineticArgs};
use polars::prelude::DataType;
use quenchwise::assess::{
    evaluate_composition, evaluate_melt, Calibration, Evaluation, SlabQuench,
};
use quenchwise::composition::{Basis, Composition, MAX_SUM_TOLERANCE};
use quenchwise::error::{Error, ResultExt};
use quenchwise::files::melt_card::read_melt_card;
use quenchwise::files::melt_card::MeltValues;
use quenchwise::files::source::{read_text, Source};
use quenchwise::files::table::{OxideAmounts, TableError};
use quenchwise::files::table_stream::{
    stream_table_with, table_column_names, BatchDone, CompositionRows, Event, ExtraCells,
    ExtraColumns, MeltRows, ResultPlan, RowReader, StreamSettings, DEFAULT_BATCH_ROWS,
};
use quenchwise::kinetics::{DrivingForce, KineticOptions, KineticOverrides, Kinetics, Transport};
use quenchwise::report::{plot, sig, text::evaluation_text};
use quenchwise::units::{Celsius, RateUnit, CELSIUS_OFFSET};
use std::io::Write;
use std::path::{Path, PathBuf};

/// Every numeric option of `eval` checked against its range, naming the
/// option (S3, N3): NaN, infinities, negative or inverted values are refused
/// before any work.
fn check_options(a: &EvalArgs) -> Result<(), Error> {
    in_range(
        "--sum-tolerance",
        a.sum_tolerance,
        (0.0, MAX_SUM_TOLERANCE),
        false,
        "percentage points",
    )?;
    // Above absolute zero; the glassy-slab estimate says when the plate is
    // too hot to freeze the melt.
    in_range(
        "--quench-surface-c",
        a.quench_surface_c,
        (-CELSIUS_OFFSET, f64::INFINITY),
        true,
        "°C",
    )?;
    in_range(
        "--melt-diffusivity",
        a.melt_diffusivity,
        (0.0, f64::INFINITY),
        true,
        "m²/s",
    )?;
    check_kinetic_args(&a.kinetics)?;
    let opt = |name: &str, v: Option<f64>, range: (f64, f64), open_low: bool, unit: &str| {
        v.map(|v| in_range(name, v, range, open_low, unit))
            .transpose()
    };
    opt(
        "--calibrate-rate",
        a.calibrate_rate,
        (0.0, f64::INFINITY),
        true,
        "",
    )?;
    opt(
        "--calibrate-nose-time-s",
        a.calibrate_nose_time_s,
        (0.0, f64::INFINITY),
        true,
        "s",
    )?;
    Ok(())
}

/// The kinetic options `eval` and `fit kinetics` share, each checked
/// against its range, naming the option (S3).
///
/// # Errors
/// The first option outside its range.
pub fn check_kinetic_args(a: &KineticArgs) -> Result<(), Error> {
    let opt = |name: &str, v: Option<f64>, range: (f64, f64), open_low: bool, unit: &str| {
        v.map(|v| in_range(name, v, range, open_low, unit))
            .transpose()
    };
    opt(
        "--detectable-fraction",
        a.detectable_fraction,
        (0.0, 1.0),
        true,
        "",
    )?;
    if a.detectable_fraction == Some(1.0) {
        return Err(Error::bad_input(
            "--detectable-fraction must lie in (0, 1), got 1",
        ));
    }
    opt(
        "--nuclei-per-m3",
        a.nuclei_per_m3,
        (0.0, f64::INFINITY),
        false,
        "per m³",
    )?;
    opt(
        "--contact-angle-deg",
        a.contact_angle_deg,
        (0.0, 180.0),
        true,
        "°",
    )?;
    opt(
        "--sample-thickness-mm",
        a.sample_thickness_mm,
        (0.0, f64::INFINITY),
        true,
        "mm",
    )?;
    opt(
        "--fractional-exponent",
        a.fractional_exponent,
        (0.0, 1.0),
        true,
        "",
    )?;
    opt(
        "--decoupling-ratio",
        a.decoupling_ratio,
        (1.0, f64::INFINITY),
        false,
        "",
    )?;
    Ok(())
}

/// The kinetic options given on the command line.
pub fn overrides(a: &KineticArgs) -> KineticOverrides {
    KineticOverrides {
        detectable_fraction: a.detectable_fraction,
        driving_force: a.driving_force.as_deref().map(|v| {
            if v == "hoffman" {
                DrivingForce::Hoffman
            } else {
                DrivingForce::Turnbull
            }
        }),
        heterogeneous_nuclei_per_m3: a.nuclei_per_m3,
        contact_angle_deg: a.contact_angle_deg,
        sample_thickness_m: a.sample_thickness_mm.map(|mm| mm / 1e3),
        transport: a
            .fractional_exponent
            .map(|exponent| Transport::Fractional { exponent }),
        decoupling_ratio: a.decoupling_ratio,
    }
}

/// The model set `eval` uses: `--models` (or the demo set), with
/// `--viscosity-model` and `--melting-viscosity` applied.
pub(super) fn eval_models(
    a: &EvalArgs,
) -> Result<quenchwise::properties::model_set::ModelSet, Error> {
    let mut models = load_models(a.models.as_deref(), a.viscosity_model.as_deref())?;
    if let Some(v) = a.melting_viscosity {
        let (lo, hi) = quenchwise::files::screen_config::MELTING_VISCOSITY_RANGE_PA_S;
        if !(v.is_finite() && (lo..=hi).contains(&v)) {
            return Err(Error::bad_input(format!(
                "--melting-viscosity must lie between {lo} and {hi} Pa·s, got {v} (10 Pa·s, 100 poise, is the common melting criterion; a data sheet in dPa·s: divide by 10)"
            )));
        }
        models.melting_viscosity_pa_s = v;
    }
    Ok(models)
}

/// The first option given that writes one glass's outputs (the JSON, the
/// TTT table and the plots), for the paths that cannot write them.
pub(super) fn single_glass_output(a: &EvalArgs) -> Option<&'static str> {
    [
        (a.json, "--json"),
        (a.ttt.is_some(), "--ttt"),
        (a.plot.is_some(), "--plot"),
        (a.viscosity_plot.is_some(), "--viscosity-plot"),
    ]
    .into_iter()
    .find_map(|(given, flag)| given.then_some(flag))
}

fn write_stdout(text: &str) -> Result<(), Error> {
    std::io::stdout()
        .lock()
        .write_all(text.as_bytes())
        .map_err(|e| Error::internal(format!("writing to stdout: {e}")))
}

pub fn eval(a: EvalArgs) -> Result<Outcome, Error> {
    if let Some(n) = threads(a.threads)? {
        // The global pool can be built once per process; a second build keeps the first.
        let _ = rayon::ThreadPoolBuilder::new()
            .num_threads(n)
            .build_global();
    }
    check_options(&a)?;
    let slab = Some(SlabQuench {
        surface: Celsius(a.quench_surface_c).to_kelvin(),
        diffusivity_m2_per_s: a.melt_diffusivity,
    });
    let rate_unit: RateUnit = a.rate_unit.into();
    let cal = match (a.calibrate_rate, a.calibrate_nose_time_s) {
        (Some(r), _) => Calibration::ToCriticalRate(rate_unit.to_si(r)),
        (None, Some(t)) => Calibration::ToNoseTime(t),
        _ => Calibration::None,
    };
    let wt_table = a.wt_text.as_deref() == Some("");
    let inputs = [
        a.mol.is_some(),
        a.wt_text.as_deref().is_some_and(|t| !t.is_empty()),
        a.recipe.is_some(),
        a.melt.is_some(),
        a.melt_cards.is_some(),
        a.compositions.is_some(),
    ];
    if inputs.iter().filter(|&&b| b).count() != 1 {
        return Err(Error::bad_input(
            "give exactly one input: --mol, --wt, --recipe, --melt, --melt-cards or --compositions",
        ));
    }
    if wt_table && a.compositions.is_none() {
        return Err(Error::bad_input("--wt without a value reads --compositions tables as wt%; give a composition or a table"));
    }
    if a.melting_viscosity.is_some() {
        if a.melt.is_some() || a.melt_cards.is_some() {
            return Err(Error::bad_input(
                "--melting-viscosity applies to compositions evaluated with a model set, not to melt cards",
            ));
        }
        if a.against.is_some() {
            return Err(Error::bad_input(
                "--melting-viscosity: with --against the config's [furnace] melting_viscosity_pa_s decides; set it there",
            ));
        }
    }
    if a.melt_cards.is_some() || a.compositions.is_some() {
        if let Some(flag) = single_glass_output(&a) {
            return Err(Error::bad_input(format!(
                "{flag} draws or prints one glass: it does not apply to a --melt-cards or --compositions table (use --mol, --wt, --recipe or --melt)"
            )));
        }
    }
    if let Some(n) = a.uncertainty.draws {
        return super::uncertainty::eval_uncertainty(&a, n);
    }
    let table_out = || {
        a.out
            .as_deref()
            .ok_or_else(|| Error::bad_input("a table input needs --out FILE (.csv or .parquet)"))
    };
    let settings = stream_settings(&a)?;
    if let Some(p) = &a.melt_cards {
        let out = table_out()?;
        let cli = overrides(&a.kinetics);
        return evaluate_table(
            p,
            out,
            &MeltRows,
            &ResultPlan::melt_cards(),
            settings,
            |values: &MeltValues| {
                // The command line wins over the row, as over a single card.
                let (melt, card_opts) = values
                    .build(&KineticOptions::default())
                    .map_err(|e| e.to_string())?;
                let opts = cli.apply(card_opts);
                opts.validate().map_err(|e| e.to_string())?;
                evaluate_melt(&melt, &opts, slab, &Calibration::None).map_err(|e| e.to_string())
            },
        );
    }
    if let (Some(p), Some(config)) = (&a.compositions, &a.against) {
        let basis = if wt_table {
            Basis::WtPercent
        } else {
            Basis::MolPercent
        };
        return super::against::against(p, config, table_out()?, basis, a.sum_tolerance);
    }
    if let Some(p) = &a.compositions {
        let out = table_out()?;
        let models = eval_models(&a)?;
        let basis = if wt_table {
            Basis::WtPercent
        } else {
            Basis::MolPercent
        };
        let opts = overrides(&a.kinetics).apply(base_options(&models));
        let other = composition_columns_passed(p)?;
        if !other.is_empty() {
            errln!(
                "quenchwise: columns not read as oxides (passed through): {}",
                other.join(", ")
            );
        }
        let tolerance = a.sum_tolerance;
        let plan = ResultPlan {
            with_models: true,
            calibrated: models.phases.iter().any(|p| p.calibrated_against.is_some()),
            phases: models.phases.iter().map(|p| p.name.clone()).collect(),
            replaces: &[],
        };
        return evaluate_table(
            p,
            out,
            &CompositionRows,
            &plan,
            settings,
            |pairs: &OxideAmounts| {
                let comp = Composition::new(pairs, basis, tolerance).map_err(|e| e.to_string())?;
                evaluate_composition(&models, &comp, &opts, slab, &Calibration::None)
                    .map_err(|e| e.to_string())
            },
        );
    }
    if a.out.is_some() {
        return Err(Error::bad_input(
            "--out writes tables: use it with --melt-cards or --compositions",
        ));
    }
    let evaluation = if let Some(p) = &a.melt {
        let text = read_text(p)?;
        let card = read_melt_card(
            &Source::new(p.display().to_string(), &text),
            &KineticOptions::default(),
        )?;
        let opts = overrides(&a.kinetics).apply(card.options);
        // An error found while evaluating names the card's line (L1).
        evaluate_melt(&card.melt, &opts, slab, &cal).map_err(|e| card.locate(e, &opts))?
    } else {
        let wt = a.wt_text.as_deref().filter(|t| !t.is_empty());
        let comp = input::composition(a.mol.as_deref(), wt, a.recipe.as_deref(), a.sum_tolerance)?;
        let models = eval_models(&a)?;
        let opts = overrides(&a.kinetics).apply(base_options(&models));
        evaluate_composition(&models, &comp, &opts, slab, &cal).with_context(|| {
            format!(
                "evaluating {} with the model set {}",
                comp.describe(),
                a.models
                    .as_ref()
                    .map_or(models.about.name.clone(), |p| p.display().to_string())
            )
        })?
    };
    let kinetics = evaluation.kinetics()?;
    if let Some(p) = &a.ttt {
        write_ttt(p, &kinetics)?;
    }
    let glass = glass_title(&evaluation, a.melt.as_deref());
    if let Some(p) = &a.plot {
        let svg = plot::ttt_svg(
            &kinetics,
            &evaluation.kinetic_summary,
            &[],
            &format!("TTT diagram of {glass}"),
        );
        write_file(p, svg.as_bytes())?;
    }
    if let Some(p) = &a.viscosity_plot {
        let curve = &evaluation.melt.viscosity;
        let svg = plot::viscosity_svg(
            curve,
            &plot::viscosity_fixpoints(curve),
            &[],
            &format!("Viscosity of {glass}"),
        );
        write_file(p, svg.as_bytes())?;
    }
    if a.json {
        let json = serde_json::to_string_pretty(&evaluation)
            .map_err(|e| Error::internal(format!("writing JSON: {e}")))?;
        write_stdout(&(json + "\n"))?;
    } else {
        let mut text = evaluation_text(&evaluation);
        if matches!(
            cal,
            Calibration::ToCriticalRate(_) | Calibration::ToNoseTime(_)
        ) {
            // The calibration names its phase in parentheses (assess::calibrate).
            let phase = evaluation.melt.phases.iter().find(|p| {
                evaluation
                    .calibrated_against
                    .as_deref()
                    .is_some_and(|c| c.ends_with(&format!("({})", p.name)))
            });
            if let Some(p) = phase {
                text.push_str(&format!(
                    "\nthis calibration is not saved: α of {} = {:.5}. To keep it, put the measurement in a table and run `quenchwise fit kinetics` (it writes a model set with α and its standard error), or set turnbull_alpha in your melt card\n",
                    p.name,
                    p.turnbull_alpha()
                ));
            }
        }
        write_stdout(&text)?;
    }
    Ok(Outcome::Finished)
}

/// How `--batch-rows` cuts a streamed table.
pub(super) fn stream_settings(a: &EvalArgs) -> Result<StreamSettings, Error> {
    Ok(StreamSettings {
        batch_rows: match a.batch_rows {
            Some(0) => return Err(Error::bad_input("--batch-rows must be at least 1")),
            Some(n) => n,
            None => DEFAULT_BATCH_ROWS,
        },
        // A CSV file a person reads: meaningful digits, repeated warnings as
        // codes with their legend beside it (Parquet keeps everything).
        readable_csv: true,
        // Set where a table is streamed: Ctrl-C stops other commands at once.
        stop: None,
    })
}

/// Stream a table: read, evaluate (rows in parallel, output order = input
/// order) and write it batch by batch (`files::table_stream`), then print
/// a summary of the first rows.
fn evaluate_table<R: RowReader>(
    input: &Path,
    out: &Path,
    reader: &R,
    plan: &ResultPlan,
    settings: StreamSettings,
    evaluate: impl Fn(&R::Row) -> Result<Evaluation, String> + Sync,
) -> Result<Outcome, Error> {
    evaluate_table_with(
        input,
        out,
        reader,
        plan,
        &ExtraColumns::default(),
        settings,
        |_, row| evaluate(row).map(|e| (e, ExtraCells::default())),
    )
}

/// As `evaluate_table`, with `extra` columns and each row's index in the
/// file (`files::table_stream::stream_table_with`).
pub(super) fn evaluate_table_with<R: RowReader>(
    input: &Path,
    out: &Path,
    reader: &R,
    plan: &ResultPlan,
    extra: &ExtraColumns,
    settings: StreamSettings,
    evaluate: impl Fn(usize, &R::Row) -> Result<(Evaluation, ExtraCells), String> + Sync,
) -> Result<Outcome, Error> {
    // Ctrl-C and SIGTERM stop the table after the rows in progress, writing
    // nothing.
    let settings = StreamSettings {
        stop: Some(super::lowered_stop_flag()),
        ..settings
    };
    let progress: std::sync::OnceLock<Progress> = std::sync::OnceLock::new();
    let mut summary = Summary::default();
    let streamed = stream_table_with(
        input,
        out,
        reader,
        plan,
        extra,
        settings,
        |i, row| {
            let r = evaluate(i, row);
            if let Some(p) = progress.get() {
                p.inc();
            }
            r
        },
        |event| match event {
            Event::Checked(rows) => {
                let _ = progress.set(Progress::new("", "rows", rows, 0, false));
            }
            Event::Batch(batch) => summary.add(&batch),
        },
    );
    if let Some(p) = progress.get() {
        p.finish();
    }
    let streamed = match streamed {
        Err(e @ TableError::Stopped { .. }) => {
            errln!(
                "quenchwise: {e}; nothing was written ({} is written whole or not at all).\nhint: run the same command again to evaluate the table",
                out.display()
            );
            return Ok(Outcome::Interrupted);
        }
        s => s?,
    };
    write_stdout(&summary.text(streamed.rows, out))?;
    errln!(
        "quenchwise: {} rows evaluated, {} failed (see the error column); wrote {}",
        streamed.rows,
        streamed.failed,
        out.display()
    );
    let legend = warning_legend_file(out);
    let csv = out
        .extension()
        .is_some_and(|e| e.eq_ignore_ascii_case("csv"));
    if !csv {
        // Parquet keeps every text: no legend.
    } else if streamed.warning_codes.is_empty() {
        // A legend left by an earlier run would now mislead.
        if legend.exists() {
            std::fs::remove_file(&legend).map_err(|e| Error::io("removing", &legend, e))?;
        }
    } else {
        let text = warning_legend_text(out, streamed.rows, &streamed.warning_codes);
        write_file(&legend, text.as_bytes())?;
        errout!("quenchwise: {}", text.replace('\n', "\n  "));
        errln!("(this legend is also in {})", legend.display());
    }
    Ok(Outcome::Finished)
}

/// `results.csv` → `results.warnings.txt`, beside it: the legend of the
/// warning codes a CSV table writes.
fn warning_legend_file(out: &Path) -> PathBuf {
    out.with_extension("warnings.txt")
}

/// The legend of a table's warning codes, stated once: each code, the rows
/// carrying it and its text.
fn warning_legend_text(
    out: &Path,
    rows: usize,
    codes: &[quenchwise::report::records::WarningCode],
) -> String {
    let name = out.file_name().map_or_else(
        || out.display().to_string(),
        |n| n.to_string_lossy().into_owned(),
    );
    let mut t = format!(
        "warnings in {name}: the warnings column writes these as their codes (the other warnings in full)\n"
    );
    for c in codes {
        t.push_str(&format!(
            "{} (on {} of {rows} rows): {}\n",
            c.code, c.rows, c.text
        ));
    }
    t
}

/// Which glass a standalone picture shows: its composition in mol%, or the
/// melt card's file.
fn glass_title(e: &quenchwise::assess::Evaluation, card: Option<&Path>) -> String {
    match &e.composition_mol_pct {
        Some(comp) => {
            let parts: Vec<String> = quenchwise::composition::Oxide::ALL
                .iter()
                .filter_map(|o| {
                    comp.get(o.formula())
                        .filter(|v| **v > 0.0)
                        .map(|v| format!("{} {o}", plot::plain(*v)))
                })
                .collect();
            format!("{} (mol%)", parts.join(" · "))
        }
        None => format!(
            "melt card {}",
            card.and_then(Path::file_name)
                .map_or("(unnamed)".into(), |n| n.to_string_lossy().into_owned())
        ),
    }
}

/// The columns of a composition table that are not oxides (read from its
/// header only).
pub(super) fn composition_columns_passed(p: &Path) -> Result<Vec<String>, Error> {
    let names = table_column_names(p)?;
    Ok(names
        .into_iter()
        .filter(|n| n.parse::<quenchwise::composition::Oxide>().is_err())
        .collect())
}

/// Rows shown on the terminal after a table run; the file has them all.
const SUMMARY_ROWS: usize = 40;

/// The first rows of a table run, as the terminal shows them.
#[derive(Default)]
struct Summary {
    lines: Vec<String>,
}

impl Summary {
    fn add(&mut self, b: &BatchDone<'_>) {
        if self.lines.len() >= SUMMARY_ROWS {
            return;
        }
        let names: Option<Vec<Option<String>>> = ["name", "id", "label"].iter().find_map(|c| {
            let col = b.input.column(c).ok()?.cast(&DataType::String).ok()?;
            let ca = col.str().ok()?.clone();
            Some(
                ca.iter()
                    .take(SUMMARY_ROWS)
                    .map(|v| v.map(str::to_string))
                    .collect(),
            )
        });
        for (i, r) in b.results.iter().enumerate() {
            if self.lines.len() >= SUMMARY_ROWS {
                break;
            }
            let name = names
                .as_ref()
                .and_then(|n| n.get(i).cloned().flatten())
                .unwrap_or_default();
            self.lines.push(summary_line(b.first_row + i, &name, r));
        }
    }

    fn text(&self, rows: usize, out: &Path) -> String {
        let mut s = format!(
            "{:>4}  {:<28} {:<18} {:>9} {:>11} {:>11}  {}\n",
            "row", "name", "primary phase", "T_L °C", "R_c K/s", "nose K/s", "note"
        );
        for l in &self.lines {
            s.push_str(l);
        }
        if rows > SUMMARY_ROWS {
            s.push_str(&format!(
                "      ... {} more rows in {}\n",
                rows - SUMMARY_ROWS,
                out.display()
            ));
        }
        s
    }
}

/// One row of the summary (`i` counts from 0).
fn summary_line(i: usize, name: &str, r: &Result<Evaluation, String>) -> String {
    let name: String = name.chars().take(28).collect();
    match r {
        Ok(e) => {
            let note = if e.viscosity_extrapolated || e.liquidus_extrapolated {
                "extrapolated"
            } else {
                ""
            };
            format!(
                "{:>4}  {:<28} {:<18} {:>9.1} {:>11} {:>11}  {}\n",
                i + 1,
                name,
                e.primary_phase.as_deref().unwrap_or("-"),
                e.liquidus_c,
                sig(e.critical_rate_k_per_s),
                sig(e.nose_rate_k_per_s),
                note
            )
        }
        Err(msg) => format!(
            "{:>4}  {:<28} {:<18} {:>9} {:>11} {:>11}  error: {}\n",
            i + 1,
            name,
            "-",
            "-",
            "-",
            "-",
            msg
        ),
    }
}

/// Write a file atomically (temp file, then rename).
fn write_file(path: &Path, bytes: &[u8]) -> Result<(), Error> {
    let tmp = path.with_extension(format!(
        "{}.partial",
        path.extension().and_then(|e| e.to_str()).unwrap_or("out")
    ));
    std::fs::write(&tmp, bytes)
        .and_then(|_| std::fs::rename(&tmp, path))
        .map_err(|e| Error::io("writing", path, e))
}

fn write_ttt(path: &Path, k: &Kinetics) -> Result<(), Error> {
    let pts = k.ttt_curve(200);
    let mut s = String::from("temperature_k,temperature_c,time_to_detectable_s,nucleation_rate_per_m3_s,growth_rate_m_per_s\n");
    // Points where nothing forms (an infinite time) are left out; every
    // number written is finite.
    for p in pts.iter().filter(|p| {
        [p.time_s, p.nucleation_per_m3_s, p.growth_m_per_s]
            .iter()
            .all(|v| v.is_finite())
    }) {
        s.push_str(&format!(
            "{:.3},{:.3},{:.6e},{:.6e},{:.6e}\n",
            p.temperature.0,
            p.temperature.to_celsius().0,
            p.time_s,
            p.nucleation_per_m3_s,
            p.growth_m_per_s
        ));
    }
    write_file(path, s.as_bytes()).context(format!("writing the TTT curve to {}", path.display()))
}
