//! The command line: options, their help, and the glue from options to the core.

use crate::composition::{Basis, Composition, CompositionError, DEFAULT_SUM_TOLERANCE};
use crate::data::{self, DataError, MeltValueError, Source};
use crate::evaluate::{
    evaluate_composition, evaluate_melt, Calibration, EvalError, Evaluation, SlabQuench,
    DEFAULT_MELT_DIFFUSIVITY_M2_PER_S,
};
use crate::kinetics::{DrivingForce, KineticOptions, Kinetics, KineticsError};
use crate::models::{ModelError, ModelSet};
use crate::report;
use crate::table::{self, Progress, TableError};
use crate::units::{Celsius, RateUnit};
use anyhow::{bail, Context, Result};
use clap::{Args, Parser, Subcommand};
use std::io::{IsTerminal, Write};
use std::path::{Path, PathBuf};

/// Predict whether oxide melts turn to glass with the quench you have.
///
/// quenchwise turns an oxide composition (or measured melt data) into a
/// liquidus, a viscosity curve, a TTT curve and a critical cooling rate, using
/// additive property models and classical nucleation and growth kinetics.
#[derive(Debug, Parser)]
#[command(name = "quenchwise", version, max_term_width = 100)]
pub struct Cli {
    #[command(subcommand)]
    pub command: Command,
}

// EvalArgs is large, but the command line is parsed once per run.
#[allow(clippy::large_enum_variant)]
#[derive(Debug, Subcommand)]
pub enum Command {
    /// Evaluate one composition, one melt card, or a table of either
    ///
    /// Examples:
    ///   quenchwise eval --mol "SiO2=72 Na2O=14 CaO=10 Al2O3=4"
    ///   quenchwise eval --wt "SiO2=74 Na2O=13 CaO=10.5 Al2O3=1.3 K2O=0.3 MgO=0.2" --json
    ///   quenchwise eval --melt demo-datasets/melt-card.toml --ttt ttt.csv
    ///   quenchwise eval --compositions demo-datasets/candidates.csv --out results.csv
    #[command(verbatim_doc_comment)]
    Eval(EvalArgs),
    /// Search compositions for recipes that vitrify with your quench (overnight-safe)
    ///
    /// Reads a screen config (see configs/demo-screen.toml), evaluates a
    /// space-filling set of candidates in parallel, refines the best, and
    /// writes a ranked shortlist with batch sheets to --out. Ctrl-C stops after
    /// the current chunk; --resume continues where it stopped.
    ///
    /// Example:
    ///   quenchwise screen configs/demo-screen.toml --out results/
    #[command(verbatim_doc_comment)]
    Screen(ScreenArgs),
    /// Validate a screen config without running it.
    Check(CheckArgs),
    /// Write RESULTS_DIR/report.html: one self-contained page with plots.
    ///
    /// The screen writes it at the end of a run by default; run this to write
    /// it again (e.g. after --no-report). Images are embedded, so the file can
    /// be emailed and opened without network access.
    Report(ReportArgs),
    /// Weigh-out sheet: the least-cost batch of raw materials for a glass
    ///
    /// Examples:
    ///   quenchwise batch --mol "SiO2=72 Na2O=14 CaO=10 Al2O3=4"
    ///   quenchwise batch --wt "SiO2=74 Na2O=16 CaO=10" --glass-kg 0.5 --json
    ///   quenchwise batch --recipe my-glass.toml --raw-materials shelf.csv --retention "B2O3=0.95"
    #[command(verbatim_doc_comment)]
    Batch(BatchArgs),
    /// Show the model set: provenance, viscosity model, crystal phases, domains.
    Models(ModelArgs),
}

#[derive(Debug, Args)]
pub struct ScreenArgs {
    /// The screen config (TOML).
    #[arg(value_name = "CONFIG")]
    pub config: PathBuf,
    /// Output folder for the shortlist, tables, batch sheets and checkpoints.
    #[arg(long, value_name = "DIR")]
    pub out: PathBuf,
    /// Continue an interrupted run in --out (same config required).
    #[arg(long, conflicts_with = "force")]
    pub resume: bool,
    /// Overwrite an existing, non-empty --out folder.
    #[arg(long)]
    pub force: bool,
    /// Worker threads [default: the config's, else all cores].
    #[arg(long, value_name = "N")]
    pub threads: Option<usize>,
    /// Do not write report.html at the end (write it later with `report`).
    #[arg(long)]
    pub no_report: bool,
    /// Stop after N new chunks as if interrupted (for testing resume).
    #[arg(long, value_name = "N", hide = true)]
    pub stop_after_chunks: Option<usize>,
}

#[derive(Debug, Args)]
pub struct ReportArgs {
    /// A screen's --out folder.
    #[arg(value_name = "RESULTS_DIR")]
    pub dir: PathBuf,
}

#[derive(Debug, Args)]
pub struct CheckArgs {
    /// The screen config (TOML).
    #[arg(value_name = "CONFIG")]
    pub config: PathBuf,
}

#[derive(Debug, Args)]
#[command(group(clap::ArgGroup::new("glass").required(true).args(["mol", "wt", "recipe"])))]
pub struct BatchArgs {
    /// The glass in mol%, e.g. "SiO2=72 Na2O=14 CaO=10 Al2O3=4".
    #[arg(long, value_name = "OXIDES", help_heading = "Glass")]
    pub mol: Option<String>,
    /// The glass in wt%.
    #[arg(long, value_name = "OXIDES", help_heading = "Glass")]
    pub wt: Option<String>,
    /// The glass from a recipe file (TOML: basis = "mol%", [oxides]).
    #[arg(long, value_name = "FILE", help_heading = "Glass")]
    pub recipe: Option<PathBuf>,
    /// Mass of glass to make, kg [default: 1].
    #[arg(long, value_name = "KG", default_value_t = 1.0, help_heading = "Glass")]
    pub glass_kg: f64,
    /// How far (percentage points) amounts may sum from 100 [default: 2].
    #[arg(long, value_name = "POINTS", default_value_t = DEFAULT_SUM_TOLERANCE, help_heading = "Glass")]
    pub sum_tolerance: f64,
    /// Raw-materials table (CSV or Parquet) [default: the built-in demo shelf].
    ///
    /// Columns: name, price_per_kg, and either formula (ideal analysis from
    /// IUPAC 2021 masses) or <Oxide>_wt_pct columns with loi_wt_pct; optional
    /// purity_pct (default 100), available_kg, note. The default is
    /// demo-datasets/raw-materials.csv, whose prices are invented.
    #[arg(long, value_name = "FILE", help_heading = "Raw materials")]
    pub raw_materials: Option<PathBuf>,
    /// Fraction of an oxide kept in the melt, e.g. "B2O3=0.95 Na2O=0.98".
    ///
    /// Volatile oxides (B2O3, alkalis, P2O5) partly evaporate; the batch then
    /// carries more of them. Values in (0, 1]; unlisted oxides keep 1.
    #[arg(long, value_name = "OXIDE=FRACTION", help_heading = "Raw materials")]
    pub retention: Option<String>,
    /// Allowed deviation of each delivered oxide, wt% of glass [default: 0.001].
    ///
    /// 0.001 wt% is 10 mg per kg of glass. A multi-oxide mineral that would
    /// force an oxide beyond this is reported, naming the oxide.
    #[arg(
        long,
        value_name = "WT_PCT",
        default_value_t = 0.001,
        help_heading = "Raw materials"
    )]
    pub tolerance_wt_pct: f64,
    /// Print JSON instead of the sheet.
    #[arg(long, help_heading = "Output", conflicts_with = "csv")]
    pub json: bool,
    /// Print the sheet as CSV (raw material, kg, cost).
    #[arg(long, help_heading = "Output")]
    pub csv: bool,
}

#[derive(Debug, Args)]
pub struct ModelArgs {
    /// Model set: a TOML file, or the built-in "demo-soda-lime".
    #[arg(long, value_name = "FILE")]
    pub models: Option<PathBuf>,
}

#[derive(Debug, Args)]
#[command(group(clap::ArgGroup::new("input").required(true).multiple(true).args(["mol", "wt_text", "recipe", "melt", "melts", "compositions"])))]
pub struct EvalArgs {
    /// One composition in mol%, e.g. "SiO2=72 Na2O=14 CaO=10 Al2O3=4".
    ///
    /// Pairs OXIDE=AMOUNT separated by spaces or commas. Amounts that sum to
    /// within --sum-tolerance of 100 are normalised (and a note says so).
    #[arg(long, value_name = "OXIDES", help_heading = "Input")]
    pub mol: Option<String>,

    /// One composition in wt%; with --compositions: read the table as wt%.
    ///
    /// `--wt "SiO2=74 Na2O=13 CaO=10.5 ..."` evaluates one composition given
    /// in mass percent. Given without a value next to --compositions, it says
    /// the table's oxide columns are wt% rather than mol%.
    #[arg(long = "wt", value_name = "OXIDES", num_args = 0..=1, default_missing_value = "", help_heading = "Input")]
    pub wt_text: Option<String>,

    /// One composition from a recipe file (TOML: basis = "mol%", [oxides]).
    #[arg(long, value_name = "FILE", help_heading = "Input")]
    pub recipe: Option<PathBuf>,

    /// A melt card (TOML) with measured viscosity and crystal data.
    ///
    /// Skips the composition models. Keys: [viscosity] a, b_k, c_k;
    /// [crystal] liquidus_k, enthalpy_of_fusion_j_per_mol,
    /// molar_volume_m3_per_mol, turnbull_alpha or interface_energy_j_per_m2,
    /// growth ("normal" or "screw"); optional [kinetics] detectable_fraction,
    /// driving_force, heterogeneous_nuclei_per_m3, contact_angle_deg.
    /// See demo-datasets/melt-card.toml.
    #[arg(long, value_name = "FILE", help_heading = "Input")]
    pub melt: Option<PathBuf>,

    /// A table (CSV or Parquet) of melt cards, one per row; needs --out.
    ///
    /// Columns are named like the card keys: a, b_k, c_k, liquidus_k,
    /// enthalpy_of_fusion_j_per_mol, molar_volume_m3_per_mol, turnbull_alpha
    /// or interface_energy_j_per_m2, growth, and optionally the [kinetics]
    /// keys. Rows run in parallel; a failed row gets its reason in `error`.
    #[arg(long, value_name = "FILE", requires = "out", help_heading = "Input")]
    pub melts: Option<PathBuf>,

    /// A table (CSV or Parquet) of compositions, one per row; needs --out.
    ///
    /// One column per oxide (SiO2, Na2O, ...) in mol% (wt% with --wt); other
    /// columns (names, ids) are passed through to the output.
    #[arg(long, value_name = "FILE", requires = "out", help_heading = "Input")]
    pub compositions: Option<PathBuf>,

    /// Write the table of results here (.csv or .parquet).
    #[arg(long, value_name = "FILE", help_heading = "Output")]
    pub out: Option<PathBuf>,

    /// Print one JSON object instead of the table.
    #[arg(long, help_heading = "Output")]
    pub json: bool,

    /// Draw the TTT diagram (SVG) with the critical-rate cooling line.
    #[arg(long, value_name = "FILE.svg", help_heading = "Output")]
    pub plot: Option<PathBuf>,

    /// Write the TTT curve (T, time to X_c, I, U) to this CSV file.
    #[arg(long, value_name = "FILE", help_heading = "Output")]
    pub ttt: Option<PathBuf>,

    /// Model set: a TOML file, or the built-in "demo-soda-lime" (default).
    #[arg(long, value_name = "FILE", help_heading = "Models")]
    pub models: Option<PathBuf>,

    /// Replace the set's viscosity model: "grd2008" or a TOML file.
    ///
    /// "grd2008" is Giordano, Russell & Dingwell (2008) for natural silicate
    /// melts; soda-rich technical glasses fall outside its validity and are
    /// flagged.
    #[arg(long, value_name = "NAME|FILE", help_heading = "Models")]
    pub viscosity_model: Option<PathBuf>,

    /// How far (percentage points) amounts may sum from 100 [default: 2].
    #[arg(long, value_name = "POINTS", default_value_t = DEFAULT_SUM_TOLERANCE, help_heading = "Models")]
    pub sum_tolerance: f64,

    /// Detectable crystallised volume fraction X_c [default: 1e-6].
    ///
    /// The fraction at which a melt counts as crystallised (Uhlmann 1972).
    /// Overrides a melt card's value.
    #[arg(long, value_name = "FRACTION", help_heading = "Kinetics")]
    pub detectable_fraction: Option<f64>,

    /// Driving-force form: turnbull (default) or hoffman.
    #[arg(long, value_name = "FORM", value_parser = ["turnbull", "hoffman"], help_heading = "Kinetics")]
    pub driving_force: Option<String>,

    /// Pre-existing heterogeneous nuclei per m³ [default: 0].
    #[arg(long, value_name = "PER_M3", help_heading = "Kinetics")]
    pub nuclei_per_m3: Option<f64>,

    /// Contact angle (degrees) for nucleation on a substrate [default: 180].
    ///
    /// 180° is homogeneous nucleation; smaller angles lower the barrier by
    /// f(θ) = (2 + cos θ)(1 − cos θ)²/4.
    #[arg(long, value_name = "DEGREES", help_heading = "Kinetics")]
    pub contact_angle_deg: Option<f64>,

    /// Fit α so the model reproduces this measured critical cooling rate.
    ///
    /// The rate is in --rate-unit (K/s by default). Use the α it prints in
    /// your model set or melt card (as turnbull_alpha, with
    /// calibrated_against naming the measurement).
    #[arg(
        long,
        value_name = "RATE",
        help_heading = "Calibration",
        conflicts_with = "calibrate_nose_time_s"
    )]
    pub calibrate_rate: Option<f64>,

    /// Unit of --calibrate-rate: K/s or K/min.
    #[arg(
        long,
        value_name = "UNIT",
        default_value = "K/s",
        help_heading = "Calibration"
    )]
    pub rate_unit: RateUnit,

    /// Fit α so the model reproduces this measured TTT nose time, in s.
    #[arg(long, value_name = "SECONDS", help_heading = "Calibration")]
    pub calibrate_nose_time_s: Option<f64>,

    /// Quench-plate temperature for the glassy-thickness estimate, °C [default: 25].
    #[arg(
        long,
        value_name = "DEG_C",
        default_value_t = 25.0,
        help_heading = "Quench"
    )]
    pub quench_surface_c: f64,

    /// Thermal diffusivity of the melt, m²/s [default: 5e-7].
    #[arg(long, value_name = "M2_PER_S", default_value_t = DEFAULT_MELT_DIFFUSIVITY_M2_PER_S, help_heading = "Quench")]
    pub melt_diffusivity: f64,

    /// Worker threads for tables [default: all cores].
    #[arg(long, value_name = "N", help_heading = "Output")]
    pub threads: Option<usize>,
}

/// A mistake in how the program was called (exit code 2).
#[derive(Debug, thiserror::Error)]
#[error("{0}")]
pub struct UsageError(pub String);

/// Exit code for an error: 2 for bad input, 1 for anything else.
pub fn exit_code(err: &anyhow::Error) -> i32 {
    for cause in err.chain() {
        if cause.is::<UsageError>()
            || cause.is::<CompositionError>()
            || cause.is::<DataError>()
            || cause.is::<KineticsError>()
            || cause.is::<ModelError>()
            || cause.is::<EvalError>()
            || cause.is::<MeltValueError>()
            || cause.is::<crate::batch::BatchError>()
        {
            return 2;
        }
        if let Some(t) = cause.downcast_ref::<TableError>() {
            return if matches!(t, TableError::Write { .. }) {
                1
            } else {
                2
            };
        }
    }
    1
}

/// Run a parsed command line.
///
/// # Errors
/// Bad input (exit 2) or a failure to write output (exit 1).
pub fn run(cli: Cli) -> Result<()> {
    match cli.command {
        Command::Eval(a) => eval(a),
        Command::Models(a) => models(a),
        Command::Batch(a) => batch(a),
        Command::Screen(a) => screen(a),
        Command::Check(a) => check(a),
        Command::Report(a) => {
            let p = crate::report_html::write_report(&a.dir)?;
            println!("wrote {}", p.display());
            Ok(())
        }
    }
}

fn check(a: CheckArgs) -> Result<()> {
    let plan = crate::config::load(&a.config)?;
    let simplex = crate::screen::Simplex::new(&plan);
    println!(
        "{}: valid. {} oxides vary ({} free, {} closes the sum); {} linear constraints; {} first-pass points in {} chunks; R_c must be ≤ {:.4} K/s",
        a.config.display(),
        plan.oxides.len(),
        simplex.dims(),
        simplex.balance.0,
        plan.constraints.len(),
        plan.first_pass_points,
        crate::screen::chunk_count(&plan),
        plan.allowed_rate().0
    );
    Ok(())
}

fn screen(a: ScreenArgs) -> Result<()> {
    let mut plan = crate::config::load(&a.config)?;
    if let Some(t) = a.threads {
        if t == 0 {
            bail!(UsageError("--threads must be at least 1".into()));
        }
        plan.threads = Some(t);
    }
    let opts = crate::screen_run::ScreenOptions {
        out: a.out.clone(),
        resume: a.resume,
        force: a.force,
        stop_after_chunks: a.stop_after_chunks,
        progress: true,
    };
    match crate::screen_run::run(&plan, &opts)? {
        crate::screen_run::Outcome::Finished {
            shortlisted,
            evaluated,
            feasible,
            ..
        } => {
            let text = std::fs::read_to_string(a.out.join("summary.txt")).unwrap_or_default();
            print!("{text}");
            if !a.no_report {
                let p = crate::report_html::write_report(&a.out).context("writing the report")?;
                println!("report: {}", p.display());
            }
            println!(
                "\nshortlist: {} ({shortlisted} recipes of {feasible} feasible, {evaluated} evaluated); batch sheets in {}",
                a.out.join("shortlist.csv").display(),
                a.out.join("batch-sheets").display()
            );
            Ok(())
        }
        crate::screen_run::Outcome::Interrupted {
            chunks_done,
            chunks,
        } => {
            eprintln!(
                "quenchwise screen: stopped after {chunks_done}/{chunks} chunks; the work so far is saved.\nhint: quenchwise screen {} --out {} --resume",
                a.config.display(),
                a.out.display()
            );
            std::process::exit(130);
        }
    }
}

/// One composition from --mol, --wt or --recipe (the caller checked that exactly one is given).
fn composition_input(
    mol: Option<&str>,
    wt: Option<&str>,
    recipe: Option<&Path>,
    tolerance: f64,
) -> Result<Composition> {
    Ok(match (mol, wt, recipe) {
        (Some(t), _, _) => {
            Composition::parse(t, Basis::MolPercent, tolerance).context("in --mol")?
        }
        (None, Some(t), _) => {
            Composition::parse(t, Basis::WtPercent, tolerance).context("in --wt")?
        }
        (None, None, Some(p)) => {
            let text = data::read_text(p)?;
            data::parse_recipe(&Source::new(p.display().to_string(), &text), tolerance)?
        }
        (None, None, None) => bail!(UsageError(
            "give a composition with --mol, --wt or --recipe".into()
        )),
    })
}

fn batch(a: BatchArgs) -> Result<()> {
    use crate::batch::{least_cost_batch, BatchSettings};
    let glass = composition_input(
        a.mol.as_deref(),
        a.wt.as_deref(),
        a.recipe.as_deref(),
        a.sum_tolerance,
    )?;
    if !(a.glass_kg.is_finite() && a.glass_kg > 0.0) {
        bail!(UsageError(format!(
            "--glass-kg must be positive, got {} kg",
            a.glass_kg
        )));
    }
    if !(a.tolerance_wt_pct.is_finite() && a.tolerance_wt_pct > 0.0) {
        bail!(UsageError(format!(
            "--tolerance-wt-pct must be positive, got {}",
            a.tolerance_wt_pct
        )));
    }
    let mut settings = BatchSettings {
        tolerance_wt_pct: a.tolerance_wt_pct,
        ..BatchSettings::default()
    };
    if let Some(r) = &a.retention {
        for (o, v) in crate::composition::parse_pairs(r).context("in --retention")? {
            if !(v > 0.0 && v <= 1.0) {
                bail!(UsageError(format!(
                    "--retention: {o} must be in (0, 1], got {v}"
                )));
            }
            settings.retention[o.index()] = v;
        }
    }
    let raws = table::read_raw_materials(a.raw_materials.as_deref())?;
    let sheet = least_cost_batch(&raws, &glass, a.glass_kg, &settings)?;
    let mut out = std::io::stdout().lock();
    if a.json {
        serde_json::to_writer_pretty(&mut out, &sheet)?;
        writeln!(out)?;
        return Ok(());
    }
    if a.csv {
        writeln!(out, "raw_material,mass_kg,cost")?;
        for l in &sheet.lines {
            writeln!(
                out,
                "\"{}\",{:.6},{:.4}",
                l.name.replace('"', "\"\""),
                l.mass_kg,
                l.cost
            )?;
        }
        return Ok(());
    }
    write!(
        out,
        "{}",
        report::batch_text(&sheet, &glass, a.raw_materials.as_deref())
    )?;
    Ok(())
}

fn load_models(models: Option<&Path>, viscosity: Option<&Path>) -> Result<ModelSet> {
    let mut set = data::load_model_set(models)?;
    if let Some(v) = viscosity {
        set = set.with_viscosity(data::load_viscosity_model(v)?);
    }
    Ok(set)
}

fn kinetic_overrides(a: &EvalArgs, mut o: KineticOptions) -> KineticOptions {
    if let Some(v) = a.detectable_fraction {
        o.detectable_fraction = v;
    }
    if let Some(v) = &a.driving_force {
        o.driving_force = if v == "hoffman" {
            DrivingForce::Hoffman
        } else {
            DrivingForce::Turnbull
        };
    }
    if let Some(v) = a.nuclei_per_m3 {
        o.heterogeneous_nuclei_per_m3 = v;
    }
    if let Some(v) = a.contact_angle_deg {
        o.contact_angle_deg = v;
    }
    o
}

struct Bar(Option<indicatif::ProgressBar>);

impl Progress for Bar {
    fn row_done(&self) {
        if let Some(b) = &self.0 {
            b.inc(1);
        }
    }
}

fn bar(rows: usize) -> Bar {
    if std::io::stderr().is_terminal() {
        let b = indicatif::ProgressBar::new(rows as u64);
        b.set_style(
            indicatif::ProgressStyle::with_template(
                "{bar:40} {pos}/{len} rows  {per_sec}  eta {eta}",
            )
            .unwrap_or_else(|_| indicatif::ProgressStyle::default_bar()),
        );
        Bar(Some(b))
    } else {
        Bar(None)
    }
}

fn count_rows(path: &Path) -> usize {
    table::read_frame(path).map(|d| d.height()).unwrap_or(0)
}

fn eval(a: EvalArgs) -> Result<()> {
    if let Some(n) = a.threads {
        if n == 0 {
            bail!(UsageError("--threads must be at least 1".into()));
        }
        rayon::ThreadPoolBuilder::new()
            .num_threads(n)
            .build_global()
            .ok();
    }
    if !(a.melt_diffusivity > 0.0 && a.melt_diffusivity.is_finite()) {
        bail!(UsageError(format!(
            "--melt-diffusivity must be positive, got {} m²/s",
            a.melt_diffusivity
        )));
    }
    let slab = Some(SlabQuench {
        surface: Celsius(a.quench_surface_c).to_kelvin(),
        diffusivity_m2_per_s: a.melt_diffusivity,
    });
    let cal = match (a.calibrate_rate, a.calibrate_nose_time_s) {
        (Some(r), _) => Calibration::ToCriticalRate(a.rate_unit.to_si(r)),
        (None, Some(t)) => Calibration::ToNoseTime(t),
        _ => Calibration::None,
    };
    let wt_table = a.wt_text.as_deref() == Some("");
    let inputs = [
        a.mol.is_some(),
        a.wt_text.as_deref().is_some_and(|t| !t.is_empty()),
        a.recipe.is_some(),
        a.melt.is_some(),
        a.melts.is_some(),
        a.compositions.is_some(),
    ];
    if inputs.iter().filter(|&&b| b).count() != 1 {
        bail!(UsageError(
            "give exactly one input: --mol, --wt, --recipe, --melt, --melts or --compositions"
                .into()
        ));
    }
    if wt_table && a.compositions.is_none() {
        bail!(UsageError("--wt without a value reads --compositions tables as wt%; give a composition or a table".into()));
    }
    if let Some(p) = &a.melts {
        if a.json || a.ttt.is_some() || a.plot.is_some() {
            bail!(UsageError(
                "--json, --ttt and --plot apply to one melt or composition, not to --melts".into()
            ));
        }
        let out = a.out.as_ref().expect("clap requires --out");
        let progress = bar(count_rows(p));
        let base = kinetic_overrides(&a, KineticOptions::default());
        let (df, results) = table::evaluate_melt_table(p, &base, slab, &progress)?;
        return finish_table(df, &results, out, &progress);
    }
    if let Some(p) = &a.compositions {
        let out = a.out.as_ref().expect("clap requires --out");
        let models = load_models(a.models.as_deref(), a.viscosity_model.as_deref())?;
        let basis = if wt_table {
            Basis::WtPercent
        } else {
            Basis::MolPercent
        };
        let progress = bar(count_rows(p));
        let opts = kinetic_overrides(&a, KineticOptions::default());
        let (df, results, other) = table::evaluate_composition_table(
            p,
            &models,
            basis,
            a.sum_tolerance,
            &opts,
            slab,
            &progress,
        )?;
        if !other.is_empty() {
            eprintln!(
                "quenchwise: columns not read as oxides (passed through): {}",
                other.join(", ")
            );
        }
        return finish_table(df, &results, out, &progress);
    }
    if a.out.is_some() {
        bail!(UsageError(
            "--out writes tables: use it with --melts or --compositions".into()
        ));
    }
    let (evaluation, kinetics) = if let Some(p) = &a.melt {
        let text = data::read_text(p)?;
        let (melt, card_opts) = data::parse_melt_card(
            &Source::new(p.display().to_string(), &text),
            &KineticOptions::default(),
        )?;
        let opts = kinetic_overrides(&a, card_opts);
        let e = evaluate_melt(&melt, &opts, slab, &cal)
            .with_context(|| format!("evaluating {}", p.display()))?;
        let melt = melt.with_interface(crate::kinetics::Interface::TurnbullAlpha(e.turnbull_alpha));
        (e, Kinetics::new(&melt, &opts)?)
    } else {
        let wt = a.wt_text.as_deref().filter(|t| !t.is_empty());
        let comp = composition_input(a.mol.as_deref(), wt, a.recipe.as_deref(), a.sum_tolerance)?;
        let models = load_models(a.models.as_deref(), a.viscosity_model.as_deref())?;
        let opts = kinetic_overrides(&a, KineticOptions::default());
        let e = evaluate_composition(&models, &comp, &opts, slab, &cal)?;
        let props = models.properties(&comp)?;
        let melt = models
            .melt(&props)?
            .with_interface(crate::kinetics::Interface::TurnbullAlpha(e.turnbull_alpha));
        (e, Kinetics::new(&melt, &opts)?)
    };
    if let Some(p) = &a.ttt {
        write_ttt(p, &kinetics)
            .with_context(|| format!("writing the TTT curve to {}", p.display()))?;
    }
    if let Some(p) = &a.plot {
        let svg = match kinetics.analyse() {
            Ok(s) => crate::plot::ttt_svg(&kinetics, &s, None, "TTT diagram"),
            Err(e) => crate::plot::message_svg("TTT diagram", &e.to_string()),
        };
        let tmp = p.with_extension("svg.partial");
        std::fs::write(&tmp, svg)
            .and_then(|_| std::fs::rename(&tmp, p))
            .with_context(|| format!("writing {}", p.display()))?;
    }
    let mut out = std::io::stdout().lock();
    if a.json {
        serde_json::to_writer_pretty(&mut out, &evaluation)?;
        writeln!(out)?;
    } else {
        write!(out, "{}", report::evaluation_text(&evaluation))?;
        if matches!(
            cal,
            Calibration::ToCriticalRate(_) | Calibration::ToNoseTime(_)
        ) {
            writeln!(
                out,
                "\nto keep this calibration, set turnbull_alpha = {:.5} (and calibrated_against = \"...\") in your model set or melt card",
                evaluation.turnbull_alpha
            )?;
        }
    }
    Ok(())
}

fn finish_table(
    df: polars::prelude::DataFrame,
    results: &[std::result::Result<Evaluation, String>],
    out: &Path,
    progress: &Bar,
) -> Result<()> {
    if let Some(b) = &progress.0 {
        b.finish_and_clear();
    }
    let failed = results.iter().filter(|r| r.is_err()).count();
    print!("{}", table_summary(&df, results, out));
    let mut df = table::append_results(df, results).context("assembling the results table")?;
    table::write_frame(out, &mut df)?;
    eprintln!(
        "quenchwise: {} rows evaluated, {} failed (see the error column); wrote {}",
        results.len(),
        failed,
        out.display()
    );
    eprintln!("{}", report::CAUTION);
    Ok(())
}

/// Rows shown on the terminal after a table run; the file has them all.
const SUMMARY_ROWS: usize = 40;

fn table_summary(
    df: &polars::prelude::DataFrame,
    results: &[std::result::Result<Evaluation, String>],
    out: &Path,
) -> String {
    let names: Option<Vec<Option<String>>> = ["name", "id", "label"].iter().find_map(|c| {
        let col = df
            .column(c)
            .ok()?
            .cast(&polars::prelude::DataType::String)
            .ok()?;
        let ca = col.str().ok()?.clone();
        Some(ca.iter().map(|v| v.map(str::to_string)).collect())
    });
    let mut s = format!(
        "{:>4}  {:<28} {:<18} {:>9} {:>11} {:>11}  {}\n",
        "row", "name", "primary phase", "T_L °C", "R_c K/s", "nose K/s", "note"
    );
    for (i, r) in results.iter().enumerate().take(SUMMARY_ROWS) {
        let name = names
            .as_ref()
            .and_then(|n| n[i].clone())
            .unwrap_or_default();
        let name: String = name.chars().take(28).collect();
        match r {
            Ok(e) => {
                let note = if e.viscosity_extrapolated || e.liquidus_extrapolated {
                    "extrapolated"
                } else {
                    ""
                };
                s.push_str(&format!(
                    "{:>4}  {:<28} {:<18} {:>9.1} {:>11} {:>11}  {}\n",
                    i + 1,
                    name,
                    e.primary_phase.as_deref().unwrap_or("-"),
                    e.liquidus_c,
                    report::sig(e.critical_rate_k_per_s),
                    report::sig(e.nose_rate_k_per_s),
                    note
                ));
            }
            Err(msg) => s.push_str(&format!(
                "{:>4}  {:<28} {:<18} {:>9} {:>11} {:>11}  error: {}\n",
                i + 1,
                name,
                "-",
                "-",
                "-",
                "-",
                msg
            )),
        }
    }
    if results.len() > SUMMARY_ROWS {
        s.push_str(&format!(
            "      ... {} more rows in {}\n",
            results.len() - SUMMARY_ROWS,
            out.display()
        ));
    }
    s
}

fn write_ttt(path: &Path, k: &Kinetics) -> Result<()> {
    let pts = k.ttt_curve(200);
    let tmp = path.with_extension("csv.partial");
    let mut s = String::from("temperature_k,temperature_c,time_to_detectable_s,nucleation_rate_per_m3_s,growth_rate_m_per_s\n");
    for p in pts.iter().filter(|p| p.time_s.is_finite()) {
        s.push_str(&format!(
            "{:.3},{:.3},{:.6e},{:.6e},{:.6e}\n",
            p.temperature.0,
            p.temperature.to_celsius().0,
            p.time_s,
            p.nucleation_per_m3_s,
            p.growth_m_per_s
        ));
    }
    std::fs::write(&tmp, s)?;
    std::fs::rename(&tmp, path)?;
    Ok(())
}

fn models(a: ModelArgs) -> Result<()> {
    let m = load_models(a.models.as_deref(), None)?;
    let mut out = std::io::stdout().lock();
    writeln!(out, "model set     {}", m.about.name)?;
    writeln!(out, "description   {}", m.about.description)?;
    writeln!(out, "source        {}", m.about.source)?;
    writeln!(out, "date          {}", m.about.date)?;
    writeln!(out, "units         {}", m.about.units)?;
    if m.about.invented {
        writeln!(
            out,
            "status        INVENTED coefficients: for demonstration only"
        )?;
    }
    writeln!(
        out,
        "\nviscosity     {} ({})",
        m.viscosity.name, m.viscosity.source
    )?;
    writeln!(out, "\ncrystal phases")?;
    writeln!(
        out,
        "  {:<20} {:<14} {:>10} {:>12} {:>9} {:>7} {:>7}  calibration",
        "name", "formula", "ΔH_m kJ/mol", "V_m cm³/mol", "T_m K", "growth", "α"
    )?;
    for p in &m.phases {
        writeln!(
            out,
            "  {:<20} {:<14} {:>10.1} {:>12.1} {:>9.0} {:>7} {:>7.3}  {}",
            p.name,
            p.formula,
            p.enthalpy_of_fusion_j_per_mol / 1e3,
            p.molar_volume_m3_per_mol * 1e6,
            p.melting_point.0,
            match p.growth {
                crate::kinetics::GrowthMode::Normal => "normal",
                crate::kinetics::GrowthMode::Screw => "screw",
            },
            p.turnbull_alpha,
            p.calibrated_against.as_deref().unwrap_or("not calibrated")
        )?;
    }
    Ok(())
}

#[cfg(test)]
mod tests {
    use super::*;

    fn parse(args: &[&str]) -> std::result::Result<Cli, clap::Error> {
        Cli::try_parse_from(std::iter::once("quenchwise").chain(args.iter().copied()))
    }

    #[test]
    fn wt_flag_with_and_without_value() {
        let c = parse(&["eval", "--compositions", "x.csv", "--out", "y.csv", "--wt"]).unwrap();
        let Command::Eval(a) = c.command else {
            panic!()
        };
        assert_eq!(a.wt_text.as_deref(), Some(""));
        let c = parse(&["eval", "--wt", "SiO2=75 Na2O=25"]).unwrap();
        let Command::Eval(a) = c.command else {
            panic!()
        };
        assert_eq!(a.wt_text.as_deref(), Some("SiO2=75 Na2O=25"));
    }

    #[test]
    fn table_inputs_need_out() {
        assert!(parse(&["eval", "--melts", "x.csv"]).is_err());
        assert!(parse(&["eval"]).is_err());
    }

    #[test]
    fn rate_unit_parses() {
        let c = parse(&[
            "eval",
            "--mol",
            "SiO2=100",
            "--calibrate-rate",
            "3",
            "--rate-unit",
            "K/min",
        ])
        .unwrap();
        let Command::Eval(a) = c.command else {
            panic!()
        };
        assert_eq!(a.rate_unit, RateUnit::PerMinute);
        assert!(parse(&["eval", "--mol", "SiO2=100", "--rate-unit", "K/h"]).is_err());
    }

    #[test]
    fn help_lines_fit_79_columns() {
        use clap::CommandFactory;
        let mut cmd = Cli::command();
        let sub = cmd.find_subcommand_mut("eval").unwrap();
        for arg in sub.get_arguments() {
            if let Some(h) = arg.get_help() {
                let s = h.to_string();
                assert!(
                    s.chars().count() <= 79,
                    "help of --{} is {} columns",
                    arg.get_id(),
                    s.chars().count()
                );
            }
        }
    }
}
