//! The command line: every option with its help, grouped by heading, parsed
//! by clap. Nothing else happens here; `app` runs the commands.

use clap::{Args, Parser, Subcommand, ValueEnum};
use quenchwise::assess::DEFAULT_MELT_DIFFUSIVITY_M2_PER_S;
use quenchwise::composition::DEFAULT_SUM_TOLERANCE;
use quenchwise::units::RateUnit;
use std::path::PathBuf;

/// Every option that takes a value also takes a negative number ("-1"), so
/// that our own range checks answer (with the unit and the allowed range)
/// instead of clap's "unexpected argument '-1'".
fn negative_numbers_are_values(cmd: clap::Command) -> clap::Command {
    cmd.mut_args(|a| {
        if a.get_action().takes_values() {
            a.allow_negative_numbers(true)
        } else {
            a
        }
    })
    .mut_subcommands(negative_numbers_are_values)
}

impl Cli {
    /// Parse the command line (exits with clap's message on a syntax error).
    pub fn parse_args() -> Cli {
        Self::parse_from_iter(std::env::args_os()).unwrap_or_else(|e| e.exit())
    }

    /// Parse any argument list (the program name first).
    pub fn parse_from_iter<I, T>(args: I) -> Result<Cli, clap::Error>
    where
        I: IntoIterator<Item = T>,
        T: Into<std::ffi::OsString> + Clone,
    {
        use clap::{CommandFactory, FromArgMatches};
        let matches = negative_numbers_are_values(Cli::command()).try_get_matches_from(args)?;
        Cli::from_arg_matches(&matches)
    }
}

/// A rate unit on the command line.
#[derive(Debug, Clone, Copy, PartialEq, Eq, ValueEnum)]
pub enum RateUnitArg {
    /// kelvin per second
    #[value(name = "K/s")]
    PerSecond,
    /// kelvin per minute
    #[value(name = "K/min")]
    PerMinute,
}

impl From<RateUnitArg> for RateUnit {
    fn from(u: RateUnitArg) -> Self {
        match u {
            RateUnitArg::PerSecond => RateUnit::PerSecond,
            RateUnitArg::PerMinute => RateUnit::PerMinute,
        }
    }
}

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

    /// Leave the safety caution out of stderr (for scripts).
    ///
    /// eval, batch and screen otherwise print it once, at the end of the run.
    #[arg(long, global = true)]
    pub quiet: bool,
}

impl Command {
    /// Whether this command's answers lead to a melt, so that the safety
    /// caution is printed once at the end of the run.
    pub fn leads_to_a_melt(&self) -> bool {
        matches!(
            self,
            Command::Eval(_) | Command::Batch(_) | Command::Screen(_)
        )
    }
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
    ///   quenchwise eval --melt demo-datasets/melt-card.toml --uncertainty 4000 \
    ///       --quench-rate 0.01
    ///   quenchwise eval --compositions demo-datasets/candidates.csv --out results.csv
    ///
    /// A table is read, evaluated and written in batches; Ctrl-C (or SIGTERM)
    /// stops it after the rows in progress and writes nothing (exit 130).
    #[command(verbatim_doc_comment)]
    Eval(EvalArgs),
    /// Search compositions for recipes that vitrify with your quench (overnight-safe)
    ///
    /// Reads a screen config (see configs/demo-screen.toml), evaluates a
    /// space-filling set of candidates in parallel, refines the best, and
    /// writes a ranked shortlist with batch sheets to --out. Ctrl-C (or a
    /// SIGTERM from a batch system) stops at the next safe point, the work
    /// saved (a second one stops at once); --resume continues where it
    /// stopped.
    ///
    /// Examples:
    ///   quenchwise screen configs/demo-screen.toml --out results/
    ///   quenchwise screen configs/demo-screen.toml --out results/ --resume
    ///   quenchwise screen configs/demo-screen.toml --out shard-1 --shard 1/4
    #[command(verbatim_doc_comment)]
    Screen(ScreenArgs),
    /// Combine the shards of a split screen into one run's outputs
    ///
    /// Each shard is a `screen --shard K/N` run (say one Slurm array task);
    /// merge checks that the shards come from the same config, files and seed
    /// and cover every chunk once, then refines and shortlists as one
    /// process would: the shortlist is the one an unsplit run writes.
    ///
    /// Example:
    ///   quenchwise merge --out results/ shard-0 shard-1 shard-2 shard-3
    #[command(verbatim_doc_comment)]
    Merge(MergeArgs),
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
    /// Fit the models to your own measurements and write a model set
    ///
    /// Three steps, each reading a table (CSV or Parquet) and writing a model
    /// set that eval, screen and the next step load:
    ///   quenchwise fit viscosity viscosity.csv --models demo-soda-lime \
    ///       --name my-glasses --out my-glasses.toml
    ///   quenchwise fit liquidus liquidus.csv --models my-glasses.toml \
    ///       --out my-glasses.toml
    ///   quenchwise fit kinetics critical-rates.csv --models my-glasses.toml \
    ///       --out my-glasses.toml
    /// See demo-datasets/README.md for the columns and an invented example.
    #[command(verbatim_doc_comment)]
    Fit(FitArgs),
}

#[derive(Debug, Args)]
pub struct FitArgs {
    #[command(subcommand)]
    pub what: FitCommand,
}

#[derive(Debug, Subcommand)]
pub enum FitCommand {
    /// VFT (or MYEGA) viscosity model from viscosity points
    ///
    /// DATA columns: one per oxide (mol%, or wt% with --wt), temperature_k
    /// or temperature_c, log10_viscosity_pa_s or log10_viscosity_dpa_s
    /// (poise), optional glass (a label; rows of one glass share it).
    ///
    /// Example:
    ///   quenchwise fit viscosity demo-datasets/fit-viscosity.csv \
    ///       --out lab-viscosity.toml --residuals visc-residuals.csv
    #[command(verbatim_doc_comment)]
    Viscosity(FitViscosityArgs),
    /// Liquidus surface of each phase from measured liquidus temperatures
    ///
    /// DATA columns: one per oxide, liquidus_k or liquidus_c, and
    /// primary_phase (a phase of the base set, --models).
    ///
    /// Example:
    ///   quenchwise fit liquidus demo-datasets/fit-liquidus.csv \
    ///       --models demo-soda-lime --name lab --out lab.toml
    #[command(verbatim_doc_comment)]
    Liquidus(FitLiquidusArgs),
    /// Turnbull α of each phase (and nuclei density) from measured kinetics
    ///
    /// DATA columns: one per oxide and any of critical_rate_k_per_s (or
    /// critical_rate_k_per_min), nose_time_s (with nose_temperature_k: the
    /// time to the detectable fraction held there), nucleation_rate_per_m3_s
    /// or growth_rate_m_per_s (with temperature_k), optional phase.
    ///
    /// Example:
    ///   quenchwise fit kinetics demo-datasets/fit-critical-rates.csv \
    ///       --models lab.toml --log10-sd 0.15 --out lab.toml
    #[command(verbatim_doc_comment)]
    Kinetics(FitKineticsArgs),
}

/// What every fit reads and writes.
#[derive(Debug, Args)]
pub struct FitCommon {
    /// The measurements: a CSV or Parquet table.
    #[arg(value_name = "DATA")]
    pub data: PathBuf,

    /// Write the fitted model set (TOML) here; an existing file is replaced.
    ///
    /// The file holds the coefficients with their covariance, the fit
    /// statistics, the validity domains and the data's SHA-256. eval
    /// --models, screen ([models] set) and the next fit step load it.
    /// Example: --out lab.toml
    #[arg(long, value_name = "FILE.toml", help_heading = "Output")]
    pub out: PathBuf,

    /// Name of the fitted set [default: the base set's name].
    ///
    /// Required when the base set is the built-in demo-soda-lime, so a
    /// fitted set never passes for the demo. Example: --name lab-glasses
    #[arg(long, value_name = "NAME", help_heading = "Output")]
    pub name: Option<String>,

    /// Write every point's residual to this CSV file.
    ///
    /// One row per measurement: measured, fitted, residual (fitted minus
    /// measured, in the unit of the fit), and for viscosity and liquidus the
    /// held-out (leave-one-out) prediction. Example: --residuals residuals.csv
    #[arg(long, value_name = "FILE.csv", help_heading = "Output")]
    pub residuals: Option<PathBuf>,

    /// Draw the residuals (SVG): fitted and held out, with ±2σ lines.
    ///
    /// Residuals in the unit of the fit (log10 Pa·s, K or decades) against
    /// temperature or the measured value; not drawn by default. Example:
    /// --plot residuals.svg
    #[arg(long, value_name = "FILE.svg", help_heading = "Output")]
    pub plot: Option<PathBuf>,

    /// Read the oxide columns as wt% [default: mol%].
    ///
    /// Each row is converted to mole fractions with IUPAC 2021 molar masses
    /// before fitting. Example: --wt
    #[arg(long, help_heading = "Data")]
    pub wt: bool,

    /// How far (percentage points) a row may sum from 100.
    ///
    /// Rows within it are normalised to 100; others are errors naming the
    /// row. Example: --sum-tolerance 0.5
    #[arg(long, value_name = "POINTS", default_value_t = DEFAULT_SUM_TOLERANCE, help_heading = "Data")]
    pub sum_tolerance: f64,
}

/// A viscosity form to fit.
#[derive(Debug, Clone, Copy, PartialEq, Eq, ValueEnum)]
pub enum FormArg {
    /// log10 η = A + B/(T − C)
    Vft,
    /// Mauro et al. (2009)
    Myega,
}

#[derive(Debug, Args)]
pub struct FitViscosityArgs {
    #[command(flatten)]
    pub common: FitCommon,

    /// Base model set: the fitted viscosity replaces its own [default: none].
    ///
    /// Without it, --out is a viscosity file ([about] and [viscosity]) for
    /// eval --viscosity-model or a screen's [models] viscosity. With it,
    /// --out is a whole model set. A TOML file or "demo-soda-lime".
    #[arg(long, value_name = "FILE", help_heading = "Model")]
    pub models: Option<PathBuf>,

    /// Viscosity form: vft or myega.
    ///
    /// vft: log10(η/Pa·s) = A + B/(T − C), B and C in K. myega: Mauro et al.
    /// (2009) with log10 η∞, T_g (K) and fragility m. Example: --form myega
    #[arg(long, value_enum, default_value = "vft", help_heading = "Model")]
    pub form: FormArg,

    /// Make A (VFT) or log10 η∞ (MYEGA) linear in composition.
    ///
    /// By default it is one constant for every glass (B and C, or T_g and
    /// m, are always linear in the mole fractions of the oxides the data
    /// contain).
    #[arg(long, help_heading = "Model")]
    pub a_linear: bool,

    /// Add a pair term x_i·x_j to a parameter, e.g. b_k:Na2O*CaO.
    ///
    /// PARAMETER:OXIDE*OXIDE, the parameter one of a, b_k, c_k (VFT) or
    /// log_eta_inf, tg_k, fragility (MYEGA); repeat for more. Unit: that of
    /// the parameter per unit mole fraction squared. Default: none.
    #[arg(long = "pair", value_name = "PARAM:A*B", help_heading = "Model")]
    pub pairs: Vec<String>,

    /// Skip the leave-one-glass-out error (one refit per glass).
    ///
    /// By default each glass is left out in turn and predicted from a refit
    /// on the others; that error (log10 Pa·s and K) is what a new glass can
    /// expect. Example: --no-cv
    #[arg(long, help_heading = "Model")]
    pub no_cv: bool,

    /// Draw each glass's fitted viscosity curve with its measured points.
    ///
    /// One SVG per glass in this folder (created if missing), named after
    /// the glass (letters, digits and '-'; other signs as '_'): the fitted curve at its composition, log10(η/Pa·s)
    /// against °C, its fixpoints, and the measurements as rings. Not drawn
    /// by default. Example: --viscosity-plots curves/
    #[arg(long, value_name = "DIR", help_heading = "Output")]
    pub viscosity_plots: Option<PathBuf>,
}

#[derive(Debug, Args)]
pub struct FitLiquidusArgs {
    #[command(flatten)]
    pub common: FitCommon,

    /// Base model set whose phases the data name (TOML file or built-in).
    ///
    /// Its phases, crystal data and unfitted surfaces are kept. Example:
    /// --models demo-soda-lime
    #[arg(long, value_name = "FILE", help_heading = "Model")]
    pub models: PathBuf,

    /// Fit only a constant shift of this phase's base surface (repeatable).
    ///
    /// For a phase with few rows: one coefficient instead of one per oxide.
    /// Example: --shift cristobalite
    #[arg(long = "shift", value_name = "PHASE", help_heading = "Model")]
    pub shift: Vec<String>,

    /// Replace the base set's viscosity model: "giordano2008" or a TOML file.
    ///
    /// Written into the fitted set with the new surfaces; default: keep the
    /// base set's. Example: --viscosity-model lab-viscosity.toml
    #[arg(long, value_name = "NAME|FILE", help_heading = "Model")]
    pub viscosity_model: Option<PathBuf>,
}

#[derive(Debug, Args)]
pub struct FitKineticsArgs {
    #[command(flatten)]
    pub common: FitCommon,

    /// Base model set (TOML file or built-in); its α are the starting point.
    ///
    /// Its viscosity and liquidus give each row's melt, so fit those first.
    /// Example: --models lab.toml
    #[arg(long, value_name = "FILE", help_heading = "Model")]
    pub models: PathBuf,

    /// Fit α of this phase (repeatable) [default: the phases the data fix].
    ///
    /// By default: the phases named in the phase column, else the phase
    /// limiting each measured R_c or nose, else the primary phase of each
    /// measured rate. Example: --phase devitrite --phase wollastonite
    #[arg(long = "phase", value_name = "PHASE", help_heading = "Model")]
    pub phases: Vec<String>,

    /// Also fit one density of pre-existing nuclei, per m³, for every phase.
    ///
    /// Searched over 1 to 1e20 per m³ (log scale); off by default, when the
    /// density is --nuclei-per-m3. eval then uses the fitted density with
    /// this set. Example: --fit-nuclei
    #[arg(long, help_heading = "Model")]
    pub fit_nuclei: bool,

    /// Scatter of one measurement, in decades (log10) [default: from fit].
    ///
    /// Used for the standard errors instead of the residuals' scatter;
    /// needed when there are no more measurements than parameters.
    /// Example: --log10-sd 0.15 (a measured R_c good to about ±40 %).
    #[arg(long, value_name = "DECADES", help_heading = "Model")]
    pub log10_sd: Option<f64>,

    #[command(flatten)]
    pub kinetics: KineticArgs,
}

#[derive(Debug, Args)]
pub struct ScreenArgs {
    /// The screen config (TOML).
    #[arg(value_name = "CONFIG")]
    pub config: PathBuf,
    /// Output folder for the shortlist, tables, batch sheets and checkpoints.
    #[arg(long, value_name = "DIR")]
    pub out: PathBuf,
    #[command(flatten)]
    pub folder: FolderArgs,
    /// Evaluate only shard K of N (0-based) of the first pass.
    ///
    /// For a cluster job array; combine the shard folders with `quenchwise
    /// merge`. Example: --shard 3/8
    #[arg(long, value_name = "K/N")]
    pub shard: Option<String>,
    /// Worker threads [default: the config's, else all cores; at most 4 × cores].
    ///
    /// More threads than 4 per core only add switching: a larger value is
    /// capped at 4 × the cores of the machine, with a message.
    #[arg(long, value_name = "N")]
    pub threads: Option<usize>,
    /// Stop after N new chunks as if interrupted (for testing resume).
    #[arg(long, value_name = "N", hide = true)]
    pub stop_after_chunks: Option<usize>,
}

/// How a run treats its --out folder.
#[derive(Debug, Args)]
pub struct FolderArgs {
    /// Continue the interrupted run in --out (same config and input files).
    ///
    /// It must mean the same: the config (comments aside) and every file it
    /// reads are checked.
    #[arg(long, conflicts_with = "force")]
    pub resume: bool,
    /// Start again in a folder an earlier run wrote.
    ///
    /// Removes only the files quenchwise listed there (.quenchwise-files),
    /// never anything else, and refuses a folder quenchwise did not make.
    #[arg(long)]
    pub force: bool,
    /// Do not write report.html at the end (write it later with `report`).
    #[arg(long)]
    pub no_report: bool,
    /// Keep the checkpoints (.work/chunk-*.parquet) of a finished run.
    ///
    /// They are removed by default.
    #[arg(long)]
    pub keep_checkpoints: bool,
}

#[derive(Debug, Args)]
pub struct MergeArgs {
    /// The --out folders of the shard runs, in any order.
    #[arg(value_name = "SHARD_DIR", required = true)]
    pub shards: Vec<PathBuf>,
    /// Output folder for the merged shortlist, tables, batch sheets.
    #[arg(long, value_name = "DIR")]
    pub out: PathBuf,
    #[command(flatten)]
    pub folder: FolderArgs,
    /// Worker threads [default: the config's, else all cores].
    #[arg(long, value_name = "N")]
    pub threads: Option<usize>,
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
#[command(group(clap::ArgGroup::new("glass").required(true).multiple(true).args(["mol", "wt", "recipe", "compositions"])))]
pub struct BatchArgs {
    /// The glass in mol%, e.g. "SiO2=72 Na2O=14 CaO=10 Al2O3=4".
    #[arg(long, value_name = "OXIDES", help_heading = "Glass")]
    pub mol: Option<String>,
    /// The glass in wt%; with --compositions: read the table as wt%.
    ///
    /// `--wt "SiO2=74 Na2O=16 CaO=10"` is one glass in mass percent. Given
    /// without a value next to --compositions, it says the table's oxide
    /// columns are wt% rather than mol%.
    #[arg(long, value_name = "OXIDES", num_args = 0..=1, default_missing_value = "", help_heading = "Glass")]
    pub wt: Option<String>,
    /// The glass from a recipe file (TOML: name, basis = "mol%", [oxides]).
    ///
    /// The recipe's `name` heads the sheet. Example file:
    ///   name = "window trial 3"
    ///   basis = "mol%"
    ///   [oxides]
    ///   SiO2 = 72.0
    ///   Na2O = 14.0
    ///   CaO = 10.0
    ///   Al2O3 = 4.0
    #[arg(
        long,
        value_name = "FILE",
        help_heading = "Glass",
        verbatim_doc_comment
    )]
    pub recipe: Option<PathBuf>,
    /// A table (CSV or Parquet) of glasses, one per row: one sheet each.
    ///
    /// One column per oxide (SiO2, Na2O, ...) in mol% (wt% with a bare
    /// --wt); a `name` (or `id`, `label`) column heads each sheet. A row
    /// that cannot be batched says why on its sheet; the others still
    /// print, and the run ends with an error naming the rows. Example:
    ///   quenchwise batch --compositions my-recipes.csv --glass-kg 0.2
    #[arg(
        long,
        value_name = "FILE",
        help_heading = "Glass",
        verbatim_doc_comment
    )]
    pub compositions: Option<PathBuf>,
    /// Mass of glass to make, kg [default: 1].
    #[arg(
        hide_default_value = true,
        long,
        value_name = "KG",
        default_value_t = 1.0,
        help_heading = "Glass"
    )]
    pub glass_kg: f64,
    /// How far (percentage points) amounts may sum from 100 [default: 2].
    ///
    /// From 0 to 10. Amounts that sum within it of 100 are normalised (and a
    /// note says so); further off is an error. Example: --sum-tolerance 0.5
    #[arg(hide_default_value = true, long, value_name = "POINTS", default_value_t = DEFAULT_SUM_TOLERANCE, help_heading = "Glass")]
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
    /// Volatile oxides (B2O3, alkalis, P2O5) partly evaporate, and most of the
    /// SO3 that sodium sulfate brings leaves as gas: the batch then carries
    /// more of them. Values in (0, 1]; unlisted oxides keep 1.
    #[arg(long, value_name = "OXIDE=FRACTION", help_heading = "Raw materials")]
    pub retention: Option<String>,
    /// Allowed deviation of each delivered oxide, wt% of glass [default: 0.001].
    ///
    /// Above 0 and at most 10. 0.001 wt% is 10 mg per kg of glass. A
    /// multi-oxide mineral that would force an oxide beyond this is
    /// reported, naming the oxide.
    #[arg(
        hide_default_value = true,
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
    ///
    /// With --compositions, one CSV for every sheet, its first column the
    /// recipe's name.
    #[arg(long, help_heading = "Output")]
    pub csv: bool,
}

#[derive(Debug, Args)]
pub struct ModelArgs {
    /// Model set: a TOML file, "demo-soda-lime" (default) or "demo-borosilicate".
    ///
    /// The two built-in sets are invented. docs/model-set-template.toml
    /// explains every key of a model-set file.
    #[arg(value_name = "FILE", conflicts_with = "models")]
    pub file: Option<PathBuf>,
    /// The same as FILE.
    #[arg(long, value_name = "FILE")]
    pub models: Option<PathBuf>,
    /// Show only the validity domains (mol% per oxide and model).
    ///
    /// One line per oxide, one column per model (viscosity, each liquidus
    /// surface), "—" where a model does not cover the oxide: any amount of
    /// it is then flagged as an extrapolation.
    #[arg(long)]
    pub domains: bool,
}

/// The kinetic options `eval` and `fit kinetics` share.
#[derive(Debug, Args)]
pub struct KineticArgs {
    /// Detectable crystallised volume fraction X_c [default: 1e-6].
    ///
    /// The fraction at which a melt counts as crystallised (Uhlmann 1972).
    /// Overrides a melt card's value. Range (0, 1); values outside 1e-9 to
    /// 0.05 get a plausibility note.
    #[arg(long, value_name = "FRACTION", help_heading = "Kinetics")]
    pub detectable_fraction: Option<f64>,

    /// Driving-force form: turnbull (default) or hoffman.
    #[arg(long, value_name = "FORM", value_parser = ["turnbull", "hoffman"], help_heading = "Kinetics")]
    pub driving_force: Option<String>,

    /// Pre-existing nuclei of each crystal phase per m³ [default: 0].
    ///
    /// Impurities, undissolved batch grains and crucible debris that are
    /// already nuclei when cooling starts. 1e9 per m³ is one per mm³. With
    /// a model set whose α were fitted (quenchwise fit kinetics), the
    /// default is the density the fit used. Zero or positive; above 1e15 per
    /// m³ gets a plausibility note.
    #[arg(long, value_name = "PER_M3", help_heading = "Kinetics")]
    pub nuclei_per_m3: Option<f64>,

    /// Contact angle of crystals nucleating on the sample's walls, degrees.
    ///
    /// Adds nucleation on the crucible or mould walls, per unit area: about
    /// one site per λ² of wall, the barrier lowered by f(θ) = (2 + cos θ)(1 −
    /// cos θ)²/4, turned into a rate per volume with the wall area 2/d of a
    /// sample d thick (--sample-thickness-mm). 180 (the default) means no
    /// wall nucleation; homogeneous nucleation in the volume is always on.
    /// Range (0, 180].
    #[arg(long, value_name = "DEGREES", help_heading = "Kinetics")]
    pub contact_angle_deg: Option<f64>,

    /// Thickness of the sample whose walls nucleate, mm [default: 10].
    ///
    /// Positive. Example: --sample-thickness-mm 4
    #[arg(long, value_name = "MM", help_heading = "Kinetics")]
    pub sample_thickness_mm: Option<f64>,

    /// Below the decoupling temperature, let D ∝ (T/η)^XI (0 < XI ≤ 1).
    ///
    /// Near T_g diffusion decouples from viscosity and Stokes–Einstein
    /// underestimates the rates. This fractional Stokes–Einstein law applies
    /// below --decoupling-ratio × T_g and joins Stokes–Einstein there.
    /// Without it, Stokes–Einstein holds at every temperature.
    #[arg(long, value_name = "XI", help_heading = "Kinetics")]
    pub fractional_exponent: Option<f64>,

    /// Decoupling temperature as a multiple of T_g [default: 1.2].
    ///
    /// Where the fractional law takes over; a TTT nose below it is flagged.
    /// At least 1.
    #[arg(long, value_name = "RATIO", help_heading = "Kinetics")]
    pub decoupling_ratio: Option<f64>,
}

#[derive(Debug, Args)]
#[command(group(clap::ArgGroup::new("input").required(true).multiple(true).args(["mol", "wt_text", "recipe", "melt", "melt_cards", "compositions"])))]
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
    /// Skips the composition models. Keys: [viscosity] a, b_k, c_k (VFT), or
    /// form = "myega" with log_eta_inf, tg_k, fragility (Mauro et al. 2009);
    /// unit = "dPa.s" (poise) when log10 η is in dPa·s (default Pa·s);
    /// [crystal] (or one [[crystal]] with a name per phase) liquidus_k (K) or
    /// liquidus_c (°C),
    /// enthalpy_of_fusion_j_per_mol, molar_volume_m3_per_mol, turnbull_alpha
    /// or interface_energy_j_per_m2, growth ("normal" or "screw"), optional
    /// heat_capacity_change_j_per_mol_k, melting_point_k,
    /// heterogeneous_nuclei_per_m3; optional [kinetics] detectable_fraction,
    /// driving_force, heterogeneous_nuclei_per_m3, contact_angle_deg,
    /// sample_thickness_m, transport, fractional_exponent, decoupling_ratio.
    /// See demo-datasets/melt-card.toml.
    #[arg(long, value_name = "FILE", help_heading = "Input")]
    pub melt: Option<PathBuf>,

    /// A table (CSV or Parquet) of melt cards, one per row; needs --out.
    ///
    /// Columns are named like the card keys: a, b_k, c_k, liquidus_k (or
    /// liquidus_c, °C),
    /// enthalpy_of_fusion_j_per_mol, molar_volume_m3_per_mol, turnbull_alpha
    /// or interface_energy_j_per_m2, growth, and optionally the [kinetics]
    /// keys. Rows run in parallel; a failed row gets its reason in `error`.
    #[arg(long, value_name = "FILE", requires = "out", help_heading = "Input")]
    pub melt_cards: Option<PathBuf>,

    /// A table (CSV or Parquet) of compositions, one per row; needs --out.
    ///
    /// One column per oxide (SiO2, Na2O, ...) in mol% (wt% with --wt); other
    /// columns (names, ids, your own measurements) are passed through to the
    /// output unchanged: a result whose name one of them already has is
    /// written beside it as `<name>_model` (e.g. your measured
    /// critical_rate_k_per_s and the model's critical_rate_k_per_s_model).
    /// An empty oxide
    /// cell counts as 0; a cell that is not a number ("O.5", "NaN") is an
    /// error naming its row, line and column.
    #[arg(long, value_name = "FILE", requires = "out", help_heading = "Input")]
    pub compositions: Option<PathBuf>,

    /// Check the --compositions recipes against a screen config's limits.
    ///
    /// Each recipe is judged as the screen judges a candidate (composition
    /// limits, model domain, critical rate, melting temperature, liquidus,
    /// cost, T_g and working range where the config sets them). --out gets
    /// one row per recipe: passes_every_limit, failed_limits, and per limit
    /// a _pass column and a _margin column in the limit's unit (K, decades
    /// of R_c, mol%, currency per kg; negative = outside). Where the config
    /// prices glasses, a batch sheet per recipe goes beside --out
    /// (NAME-batch-sheets.txt). Example:
    ///   quenchwise eval --compositions mine.csv --against configs/demo-screen.toml --out checked.csv
    #[arg(
        long,
        value_name = "CONFIG",
        requires = "compositions",
        help_heading = "Input"
    )]
    pub against: Option<PathBuf>,

    /// Write the table of results here (.csv or .parquet).
    ///
    /// The input columns, then one column per result and an `error` column.
    /// A row without an error has a finite number in every result column,
    /// except critical_rate_<phase>_k_per_s of a phase whose liquidus lies
    /// below the glass transition of that row: that phase cannot crystallise
    /// from the melt, and its cell is empty. A row with an error has empty
    /// result cells.
    ///
    /// A .csv file shows meaningful digits (temperatures to 0.1 K or °C,
    /// rates to 4 significant figures, others to 6; input columns as
    /// given), and the warnings the first two evaluated rows share are
    /// written as codes (W1, W2, ...) with their legend once in
    /// NAME.warnings.txt and on stderr; other warnings stay in full. A
    /// .parquet file keeps every digit and every text.
    #[arg(long, value_name = "FILE", help_heading = "Output")]
    pub out: Option<PathBuf>,

    /// Print one JSON object instead of the table.
    #[arg(long, help_heading = "Output")]
    pub json: bool,

    /// Draw the TTT diagram (SVG) with the critical-rate cooling line.
    #[arg(long, value_name = "FILE.svg", help_heading = "Output")]
    pub plot: Option<PathBuf>,

    /// Draw the viscosity–temperature curve (SVG) with its fixpoints.
    ///
    /// The fixpoints: melting (10 Pa·s), working point (10³), softening
    /// point (10^6.6), T_g (10¹²) and strain point (10^13.5 Pa·s), each at
    /// the temperature where the curve reaches it. Example:
    /// --viscosity-plot eta.svg
    #[arg(long, value_name = "FILE.svg", help_heading = "Output")]
    pub viscosity_plot: Option<PathBuf>,

    /// Write the TTT curve (T, time to X_c, I, U) to this CSV file.
    #[arg(long, value_name = "FILE", help_heading = "Output")]
    pub ttt: Option<PathBuf>,

    /// Model set: a TOML file, "demo-soda-lime" (default) or "demo-borosilicate".
    ///
    /// The two built-in sets are invented; docs/model-set-template.toml
    /// explains every key of a model-set file.
    #[arg(long, value_name = "FILE", help_heading = "Models")]
    pub models: Option<PathBuf>,

    /// Replace the set's viscosity model: "giordano2008" or a TOML file.
    ///
    /// "giordano2008" is Giordano, Russell & Dingwell (2008) for natural silicate
    /// melts; soda-rich technical glasses fall outside its validity and are
    /// flagged.
    #[arg(long, value_name = "NAME|FILE", help_heading = "Models")]
    pub viscosity_model: Option<PathBuf>,

    /// The viscosity that defines the melting temperature, Pa·s [default: 10].
    ///
    /// 10 Pa·s (100 poise) is the common criterion for soda-lime glass; a
    /// borosilicate is often melted nearer 10^2.5 Pa·s. From 0.1 to 10000
    /// Pa·s (a data sheet in dPa·s: divide by 10). A screen config sets it
    /// as [furnace] melting_viscosity_pa_s. Example: --melting-viscosity 316
    #[arg(long, value_name = "PA_S", help_heading = "Models")]
    pub melting_viscosity: Option<f64>,

    /// How far (percentage points) amounts may sum from 100 [default: 2].
    ///
    /// From 0 to 10. Amounts that sum within it of 100 are normalised (and a
    /// note says so); further off is an error. Example: --sum-tolerance 0.5
    #[arg(hide_default_value = true, long, value_name = "POINTS", default_value_t = DEFAULT_SUM_TOLERANCE, help_heading = "Models")]
    pub sum_tolerance: f64,

    #[command(flatten)]
    pub kinetics: KineticArgs,

    /// Fit α so the model reproduces this measured critical cooling rate.
    ///
    /// Positive; in --rate-unit (K/s by default). Use the α it prints in
    /// your model set or melt card (as turnbull_alpha, with
    /// calibrated_against naming the measurement).
    #[arg(
        long,
        value_name = "RATE",
        help_heading = "Calibration",
        conflicts_with = "calibrate_nose_time_s"
    )]
    pub calibrate_rate: Option<f64>,

    /// Unit of --calibrate-rate and --quench-rate: K/s or K/min.
    #[arg(
        long,
        value_name = "UNIT",
        default_value = "K/s",
        help_heading = "Calibration"
    )]
    pub rate_unit: RateUnitArg,

    /// Fit α so the model reproduces this measured TTT nose time, in s.
    #[arg(long, value_name = "SECONDS", help_heading = "Calibration")]
    pub calibrate_nose_time_s: Option<f64>,

    /// Quench-plate temperature for the glassy-thickness estimate, °C [default: 25].
    ///
    /// Above absolute zero (−273.15 °C); a plate too hot to freeze the melt
    /// gets a note instead of a thickness. Example: --quench-surface-c -196
    #[arg(
        hide_default_value = true,
        long,
        value_name = "DEG_C",
        default_value_t = 25.0,
        help_heading = "Quench"
    )]
    pub quench_surface_c: f64,

    /// Thermal diffusivity of the melt, m²/s [default: 5e-7].
    ///
    /// Positive. Values outside 1e-7 to 5e-6 m²/s get a plausibility note.
    #[arg(hide_default_value = true, long, value_name = "M2_PER_S", default_value_t = DEFAULT_MELT_DIFFUSIVITY_M2_PER_S, help_heading = "Quench")]
    pub melt_diffusivity: f64,

    /// Worker threads for tables and --uncertainty draws [default: all cores].
    ///
    /// At most 4 × the cores of the machine: a larger value is capped there,
    /// with a message (more threads only add switching).
    #[arg(long, value_name = "N", help_heading = "Output")]
    pub threads: Option<usize>,

    /// Rows read, evaluated and written at a time for tables (for testing).
    #[arg(long, value_name = "N", hide = true)]
    pub batch_rows: Option<usize>,

    #[command(flatten)]
    pub uncertainty: UncertaintyArgs,
}

/// `eval --uncertainty`: Monte Carlo over what the models do not know.
#[derive(Debug, Args)]
pub struct UncertaintyArgs {
    /// Draw N Monte Carlo samples of the uncertain inputs: R_c band, P(glassy).
    ///
    /// Latin hypercube draws of every input with a stated spread: in a melt
    /// card turnbull_alpha_sd (or interface_energy_sd_j_per_m2) per crystal
    /// and heterogeneous_nuclei_per_m3 = [lo, hi] (log-uniform) in
    /// [kinetics]; in a model set the covariance `quenchwise fit` wrote for
    /// viscosity, liquidus and α. Prints the 5, 50 and 95 % critical rates,
    /// the sd of log10 R_c, P(R_c ≤ --quench-rate) and each input's share of
    /// the variance (--json writes them too). With a table (--melt-cards,
    /// --compositions) every row is drawn with its own seed (derived from
    /// --seed and the row's place) and --out gains the columns
    /// critical_rate_p05/p50/p95_k_per_s, log10_critical_rate_sd,
    /// failed_draws, probability_glassy, probability_glassy_se and
    /// probability_glassy_lower95 (a one-sided 95 % lower bound: 1 − 3/N when
    /// every draw is glassy, else Wilson's score bound) with --quench-rate, one
    /// variance_share_<input> per uncertain input (e.g.
    /// variance_share_turnbull_alpha_of_crystal; empty where a row does not
    /// draw it) and band_note; a melt-card table gives its spreads in the columns
    /// turnbull_alpha_sd (or interface_energy_sd_j_per_m2) and
    /// heterogeneous_nuclei_lo_per_m3 with heterogeneous_nuclei_hi_per_m3.
    /// Example: --uncertainty 4000 --quench-rate 1
    #[arg(
        long = "uncertainty",
        value_name = "N",
        help_heading = "Uncertainty",
        conflicts_with_all = ["calibrate_rate", "calibrate_nose_time_s"]
    )]
    pub draws: Option<usize>,

    /// Seed of the draws: the same seed gives the same numbers [default: 20261202].
    #[arg(
        long,
        value_name = "S",
        requires = "draws",
        help_heading = "Uncertainty"
    )]
    pub seed: Option<u64>,

    /// Your quench rate, in --rate-unit: P(glassy) = P(R_c ≤ this rate).
    ///
    /// The rate your quench reaches through the crystallisation window;
    /// measure it (a thermocouple in a test pour). Example: --quench-rate 60
    /// --rate-unit K/min.
    #[arg(
        long,
        value_name = "RATE",
        requires = "draws",
        help_heading = "Uncertainty"
    )]
    pub quench_rate: Option<f64>,
}

#[cfg(test)]
mod tests {
    use super::*;

    fn parse(args: &[&str]) -> std::result::Result<Cli, clap::Error> {
        Cli::parse_from_iter(std::iter::once("quenchwise").chain(args.iter().copied()))
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
        assert!(parse(&["eval", "--melt-cards", "x.csv"]).is_err());
        assert!(parse(&["eval"]).is_err());
    }

    #[test]
    fn a_negative_number_is_a_value_for_our_range_checks() {
        let c = parse(&[
            "eval",
            "--melt",
            "m.toml",
            "--uncertainty",
            "10",
            "--quench-rate",
            "-1",
        ])
        .unwrap();
        let Command::Eval(a) = c.command else {
            panic!()
        };
        assert_eq!(a.uncertainty.quench_rate, Some(-1.0));
        // Flags that take no value still refuse a stray number.
        assert!(parse(&["eval", "--melt", "m.toml", "--json", "-1"]).is_err());
    }

    #[test]
    fn fit_commands_parse() {
        let c = parse(&[
            "fit",
            "viscosity",
            "v.csv",
            "--out",
            "v.toml",
            "--form",
            "myega",
            "--pair",
            "tg_k:Na2O*CaO",
            "--pair",
            "fragility:SiO2*Na2O",
        ])
        .unwrap();
        let Command::Fit(FitArgs {
            what: FitCommand::Viscosity(a),
        }) = c.command
        else {
            panic!()
        };
        assert_eq!(a.form, FormArg::Myega);
        assert_eq!(a.pairs.len(), 2);
        assert!(
            parse(&["fit", "liquidus", "l.csv", "--out", "x.toml"]).is_err(),
            "--models is required"
        );
        let c = parse(&[
            "fit",
            "kinetics",
            "k.csv",
            "--models",
            "m.toml",
            "--out",
            "x.toml",
            "--phase",
            "devitrite",
            "--fit-nuclei",
            "--nuclei-per-m3",
            "1e9",
        ])
        .unwrap();
        let Command::Fit(FitArgs {
            what: FitCommand::Kinetics(a),
        }) = c.command
        else {
            panic!()
        };
        assert_eq!(a.phases, vec!["devitrite"]);
        assert_eq!(a.kinetics.nuclei_per_m3, Some(1e9));
        assert!(parse(&["models", "a.toml", "--models", "b.toml"]).is_err());
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
        assert_eq!(a.rate_unit, RateUnitArg::PerMinute);
        assert!(parse(&["eval", "--mol", "SiO2=100", "--rate-unit", "K/h"]).is_err());
    }

    #[test]
    fn help_lines_fit_79_columns() {
        use clap::CommandFactory;
        fn check(cmd: &clap::Command, path: &str) {
            for arg in cmd.get_arguments() {
                if let Some(h) = arg.get_help() {
                    let s = h.to_string();
                    assert!(
                        s.chars().count() <= 79,
                        "{path}: help of --{} is {} columns",
                        arg.get_id(),
                        s.chars().count()
                    );
                }
            }
            if let Some(a) = cmd.get_about() {
                let s = a.to_string();
                assert!(
                    s.chars().count() <= 79,
                    "{path}: about is {} columns",
                    s.chars().count()
                );
            }
            for sub in cmd.get_subcommands() {
                check(sub, &format!("{path} {}", sub.get_name()));
            }
        }
        let cmd = Cli::command();
        check(&cmd, "quenchwise");
    }
}
