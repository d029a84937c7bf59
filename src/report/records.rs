//! The columns of the screen's tables, defined once: the shortlist (CSV,
//! Parquet, JSON), the candidates table and the report all take their
//! names and values from here. The result columns of `eval` tables
//! ([`EVALUATION_FIELDS`], [`PHASE_FIELDS`]) are defined here too.

use crate::assess::Evaluation;
use crate::composition::Oxide;
use crate::kinetics::DrivingForce;
use crate::screen::{Equipment, Row, ScreenProblem};
use std::collections::BTreeMap;

/// One value of a row, typed.
#[derive(Debug, Clone, PartialEq)]
pub enum Cell<'a> {
    /// A number (None where there is none).
    Num(Option<f64>),
    /// A text (None where there is none).
    Text(Option<&'a str>),
    /// A yes/no (None where there is none).
    Bool(Option<bool>),
}

/// A named column and how to read it from a row.
#[derive(Clone, Copy)]
pub struct Field {
    pub name: &'static str,
    pub get: for<'a> fn(&'a Row) -> Cell<'a>,
}

/// A temperature in K as °C (the config and the report speak °C).
fn celsius(k: f64) -> f64 {
    crate::units::Kelvin(k).to_celsius().0
}

/// The decisive numbers of a screen's tables, right after the composition:
/// how far inside the quench a recipe is, its critical rate and its cost.
pub const DECISIVE_FIELDS: [Field; 3] = [
    Field {
        name: "margin_decades",
        get: |r| Cell::Num(r.margin_decades),
    },
    Field {
        name: "critical_rate_k_per_s",
        get: |r| Cell::Num(r.critical_rate_k_per_s),
    },
    Field {
        name: "cost_per_kg",
        get: |r| Cell::Num(r.cost_per_kg),
    },
];

/// The rest of the results, after the decisive numbers (and the Monte Carlo
/// columns): each temperature in K with its °C beside it.
pub const DETAIL_FIELDS: [Field; 10] = [
    Field {
        name: "melting_temperature_k",
        get: |r| Cell::Num(r.melting_temperature_k),
    },
    Field {
        name: "melting_temperature_c",
        get: |r| Cell::Num(r.melting_temperature_k.map(celsius)),
    },
    Field {
        name: "liquidus_k",
        get: |r| Cell::Num(r.liquidus_k),
    },
    Field {
        name: "liquidus_c",
        get: |r| Cell::Num(r.liquidus_k.map(celsius)),
    },
    Field {
        name: "primary_phase",
        get: |r| Cell::Text(r.primary_phase.as_deref()),
    },
    Field {
        name: "limiting_phase",
        get: |r| Cell::Text(r.limiting_phase.as_deref()),
    },
    Field {
        name: "glass_transition_k",
        get: |r| Cell::Num(r.glass_transition_k),
    },
    Field {
        name: "glass_transition_c",
        get: |r| Cell::Num(r.glass_transition_k.map(celsius)),
    },
    Field {
        name: "nose_rate_k_per_s",
        get: |r| Cell::Num(r.nose_rate_k_per_s),
    },
    Field {
        name: "vouched",
        get: |r| Cell::Bool(r.vouched),
    },
];

/// The last columns: the limits a recipe sits on, then its warnings.
pub const NOTE_FIELDS: [Field; 2] = [
    Field {
        name: "binding",
        get: |r| Cell::Text(Some(&r.binding)),
    },
    Field {
        name: "warnings",
        get: |r| Cell::Text(Some(&r.warnings)),
    },
];

/// The columns of a screen's Monte Carlo stage (a config with
/// `[uncertainty]`), after the decisive numbers in the shortlist and in the
/// table of the recipes drawn; the candidates table, written before the
/// draws, does not carry them.
pub const PROBABILITY_FIELDS: [Field; 6] = [
    Field {
        name: "probability_glassy",
        get: |r| Cell::Num(r.probability_glassy),
    },
    Field {
        name: "probability_glassy_lower95",
        get: |r| Cell::Num(r.probability_glassy_lower95),
    },
    Field {
        name: "critical_rate_p05_k_per_s",
        get: |r| Cell::Num(r.critical_rate_p05_k_per_s),
    },
    Field {
        name: "critical_rate_p95_k_per_s",
        get: |r| Cell::Num(r.critical_rate_p95_k_per_s),
    },
    Field {
        name: "band_vouched",
        get: |r| Cell::Bool(r.band_vouched),
    },
    Field {
        name: "probability_from",
        get: |r| Cell::Text(r.probability_from.as_deref()),
    },
];

/// The result columns of a table in their order (identity and composition
/// come before them): the decisive numbers, the Monte Carlo columns when
/// asked, the other results, then binding limits and warnings last.
pub fn fields(with_probability: bool) -> impl Iterator<Item = &'static Field> {
    let extra: &'static [Field] = if with_probability {
        &PROBABILITY_FIELDS
    } else {
        &[]
    };
    DECISIVE_FIELDS
        .iter()
        .chain(extra)
        .chain(DETAIL_FIELDS.iter())
        .chain(NOTE_FIELDS.iter())
}

/// How a CSV column rounds its numbers.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Digits {
    /// This many digits after the decimal point.
    Decimals(i32),
    /// This many significant figures.
    Significant(usize),
}

/// The digits a screen's CSV column shows (None: as they are, e.g. whole
/// numbers): amounts in mol% and wt% to 0.01, standard errors (`_se`) to 3
/// significant figures, temperatures to 0.1 K or °C,
/// margins (decades) and probabilities to 0.001, rates and costs to 4
/// significant figures, anything else to 6. A weighing to 0.01 wt% of a
/// 200 g batch is 20 mg; the models' own errors are kelvins, not tenths.
pub fn csv_digits(name: &str) -> Option<Digits> {
    if name.ends_with("_mol_pct") || name.ends_with("_wt_pct") {
        Some(Digits::Decimals(2))
    } else if name.ends_with("_se") {
        // A standard error: its leading figures, however small.
        Some(Digits::Significant(3))
    } else if name.ends_with("_k") || name.ends_with("_c") {
        Some(Digits::Decimals(1))
    } else if name.ends_with("_decades")
        || name.starts_with("probability")
        || name.starts_with("variance_share")
    {
        // Variance shares are estimates from binned draws: two decimals
        // of noise at best.
        Some(Digits::Decimals(3))
    } else if name.contains("_per_s") || name.contains("_per_min") || name.starts_with("cost") {
        Some(Digits::Significant(4))
    } else if matches!(name, "rank" | "index" | "evaluations") {
        None
    } else {
        Some(Digits::Significant(6))
    }
}

/// A number rounded to `decimals` digits after the point, as text: the one
/// rounding rule of every output (CSV cells through [`rounded`], and the
/// `{:.N}` of text outputs, which is what this is), so a value reads the
/// same in shortlist.csv and in a batch sheet (1152.85 written as a double
/// lies just below the tie and is 1152.8 in both).
pub fn fixed(x: f64, decimals: usize) -> String {
    format!("{x:.decimals$}")
}

/// A number rounded to the digits a CSV column shows ([`csv_digits`]):
/// decimals by [`fixed`] (no "-0"), significant figures through the
/// exponent form. Parquet and JSON keep every digit.
pub fn rounded(x: f64, d: Digits) -> f64 {
    if !x.is_finite() || x == 0.0 {
        return x;
    }
    let r = match scaled_rounding(x, d) {
        Some(r) => r,
        None => rounded_through_text(x, d),
    };
    // No "-0" in a table.
    if r == 0.0 {
        0.0
    } else {
        r
    }
}

/// The rounding of [`rounded`] through the decimal text: exact, and slow
/// (a table of 10⁶ rows spent a fifth of its time here).
fn rounded_through_text(x: f64, d: Digits) -> f64 {
    match d {
        Digits::Decimals(n) => fixed(x, n.max(0) as usize).parse().unwrap_or(x),
        Digits::Significant(n) => format!("{:.*e}", n.saturating_sub(1), x)
            .parse()
            .unwrap_or(x),
    }
}

/// 10^k for k = 0..=22, every one exactly representable (5²² < 2⁵³).
const EXACT_POWERS_OF_TEN: [f64; 23] = [
    1e0, 1e1, 1e2, 1e3, 1e4, 1e5, 1e6, 1e7, 1e8, 1e9, 1e10, 1e11, 1e12, 1e13, 1e14, 1e15, 1e16,
    1e17, 1e18, 1e19, 1e20, 1e21, 1e22,
];

/// 10^k for k = 0..=308, each the double nearest to it (the parser's
/// correctly rounded value; exact up to 10²²).
fn power_of_ten(k: u32) -> Option<f64> {
    static POWERS: std::sync::LazyLock<Vec<f64>> = std::sync::LazyLock::new(|| {
        (0..=308)
            .map(|k| format!("1e{k}").parse().unwrap_or(f64::INFINITY))
            .collect()
    });
    match EXACT_POWERS_OF_TEN.get(k as usize) {
        Some(p) => Some(*p),
        None => POWERS.get(k as usize).copied(),
    }
}

/// How far from one half y's fraction must lie, relative to |y|, for
/// [`scaled_rounding`] to round it: 2⁻⁵⁰, at least twice y's error.
const TIE_MARGIN: f64 = 4.0 * f64::EPSILON;

/// [`rounded_through_text`] without its formatting, where that provably
/// gives the same double, else None. x is scaled by the double nearest
/// 10^k to y = x·10^k and y is rounded to a whole number m: the text's
/// digits whenever y's error cannot cross a tie. y carries at most two
/// roundings (of 10^k for k > 22, and of the product or quotient), so its
/// error is under 2⁻⁵¹|y| (2⁻⁵²|y| to first order), and m is used only
/// when y's fraction lies more than 2⁻⁵⁰|y| ([`TIE_MARGIN`]) from one half
/// (with |y| < 2⁴⁰, at most 2⁻¹⁰ from it: few values go the slow way).
/// For k ≤ 22, m/10^k (or
/// m·10^|k|) is one correctly rounded operation on exact operands, so it is
/// the double the text m·10^−k parses to; beyond, that short text is parsed
/// (no float formatting, which is what made the text path slow). For
/// significant figures, k comes from log10 and is used only when y really
/// has that many digits before the point.
fn scaled_rounding(x: f64, d: Digits) -> Option<f64> {
    let k = match d {
        Digits::Decimals(n) => n.max(0),
        Digits::Significant(n) => n.max(1) as i32 - 1 - x.abs().log10().floor() as i32,
    };
    let p = power_of_ten(k.unsigned_abs())?;
    let y = if k >= 0 { x * p } else { x / p };
    // (An overflow to infinity lands here too, and so does an x so small
    // that y lost digits: its k needs a power beyond 10³⁰⁸.)
    if !y.is_finite() || y.abs() >= (1u64 << 40) as f64 {
        return None;
    }
    if let Digits::Significant(n) = d {
        let digits = EXACT_POWERS_OF_TEN.get(n.max(1))?;
        if y.abs() < digits / 10.0 || y.abs() >= *digits {
            return None;
        }
    }
    // y's error is under 2⁻⁵¹|y| (see above); twice that from a tie and
    // the rounding of y is the rounding of x·10^k.
    if (y.abs().fract() - 0.5).abs() <= y.abs() * TIE_MARGIN {
        return None;
    }
    let m = y.round();
    if k.unsigned_abs() as usize <= 22 {
        return Some(if k >= 0 { m / p } else { m * p });
    }
    // m·10^−k as text: at most 13 digits, a sign and an exponent.
    let mut text = [0u8; 32];
    let mut cursor = std::io::Cursor::new(&mut text[..]);
    std::io::Write::write_fmt(&mut cursor, format_args!("{}e{}", m as i64, -k)).ok()?;
    let len = cursor.position() as usize;
    std::str::from_utf8(&text[..len]).ok()?.parse().ok()
}

/// Warnings a table states once: each gets a code (`W1`, `W2`, ... in the
/// order of the first row) that its rows carry instead of the text, and
/// the legend (code, text, rows carrying it) is stated once beside the
/// table. The coded texts are those the first two evaluated rows share (a
/// text on every row is among them; a text tied to one row's numbers is
/// not); when no second row is evaluated within [`LEGEND_LOOK_AHEAD_ROWS`]
/// rows, the first row's own; a table with one evaluated row codes none.
/// The rule counts rows, so a streamed table gives the same codes however
/// it is cut into batches.
#[derive(Debug, Clone, Default, PartialEq, Eq)]
pub struct WarningLegend {
    /// (text, rows carrying it), in code order.
    entries: Vec<(String, usize)>,
    /// The coded texts are fixed.
    fixed: bool,
    /// The first evaluated row's warnings, until the texts are fixed.
    first: Option<Vec<String>>,
    /// Rows seen before the texts were fixed.
    rows_seen: usize,
}

/// Rows a [`WarningLegend`] looks at, at most, before it fixes its codes.
pub const LEGEND_LOOK_AHEAD_ROWS: usize = 4096;

/// One entry of a [`WarningLegend`].
#[derive(Debug, Clone, PartialEq, Eq)]
pub struct WarningCode {
    pub code: String,
    pub text: String,
    /// Rows of the table carrying it.
    pub rows: usize,
}

impl WarningLegend {
    /// A legend that has seen no row.
    pub fn new() -> Self {
        WarningLegend::default()
    }

    /// Whether the coded texts are fixed (rows can be coded).
    pub fn is_fixed(&self) -> bool {
        self.fixed
    }

    fn fix(&mut self, texts: Vec<String>) {
        for t in texts {
            if !self.entries.iter().any(|(e, _)| *e == t) {
                self.entries.push((t, 0));
            }
        }
        self.fixed = true;
        self.first = None;
    }

    /// See the next row of the table before it is coded: its warnings, or
    /// None for a row that failed.
    pub fn see(&mut self, warnings: Option<&[String]>) {
        if self.fixed {
            return;
        }
        self.rows_seen += 1;
        if let Some(w) = warnings {
            match self.first.take() {
                None => self.first = Some(w.to_vec()),
                Some(first) => {
                    let shared = first.into_iter().filter(|t| w.contains(t)).collect();
                    self.fix(shared);
                    return;
                }
            }
        }
        if self.rows_seen >= LEGEND_LOOK_AHEAD_ROWS {
            let first = self.first.take().unwrap_or_default();
            self.fix(first);
        }
    }

    /// The table ended: fix the codes if they are not (one evaluated row:
    /// nothing repeats, nothing is coded).
    pub fn finish(&mut self) {
        if !self.fixed {
            self.fix(Vec::new());
        }
    }

    /// A row's warnings as the CSV file writes them: the coded ones as their
    /// codes, the others in full, joined by "; ". Before the codes are fixed
    /// every text is written in full.
    pub fn code_row(&mut self, warnings: &[String]) -> String {
        use std::fmt::Write as _;
        // Written straight into one string (no string per warning, no
        // join): a streamed table codes every row on its calling thread.
        let mut out = String::with_capacity(warnings.iter().map(|w| w.len() + 2).sum());
        for (i, w) in warnings.iter().enumerate() {
            if i > 0 {
                out.push_str("; ");
            }
            match self.entries.iter().position(|(t, _)| t == w) {
                Some(k) => {
                    self.entries[k].1 += 1;
                    // (Writing into a String cannot fail.)
                    let _ = write!(out, "W{}", k + 1);
                }
                None => out.push_str(w),
            }
        }
        out
    }

    /// The codes, their texts and how many rows carry each.
    pub fn codes(&self) -> Vec<WarningCode> {
        self.entries
            .iter()
            .enumerate()
            .map(|(k, (t, n))| WarningCode {
                code: format!("W{}", k + 1),
                text: t.clone(),
                rows: *n,
            })
            .collect()
    }
}

/// The column of an oxide's amount.
pub fn oxide_column(o: Oxide) -> String {
    format!("{o}_mol_pct")
}

/// The column of an oxide's amount in wt%.
pub fn oxide_wt_column(o: Oxide) -> String {
    format!("{o}_wt_pct")
}

/// The oxide a column name holds, if it is an oxide column.
pub fn oxide_of_column(name: &str) -> Option<Oxide> {
    name.strip_suffix("_mol_pct")?.parse().ok()
}

/// A result field by name.
pub fn field(name: &str) -> Option<&'static Field> {
    fields(true).find(|f| f.name == name)
}

/// A column per quench option, when a screen config lists more than one
/// `[[equipment]]`: `glassy_with_<name>` and `margin_with_<name>_decades`
/// (log10(rate / R_c)); where the probability decides
/// (`ScreenProblem::probability_decides`), also
/// `probability_glassy_with_<name>`, P(R_c ≤ rate) from the screen's draws.
/// `glassy_with_<name>` follows the rule that decides: R_c ≤ rate / safety
/// factor, or P(R_c ≤ rate) ≥ min_probability. They follow
/// `margin_decades`, the deciding option's margin, in every table.
#[derive(Debug, Clone)]
pub struct EquipmentField {
    pub name: String,
    pub equipment: Equipment,
    /// Which column of the option this is.
    pub kind: EquipmentColumn,
    /// The option's place in `ScreenProblem::equipment_options` (and in
    /// `Row::probability_glassy_with`).
    pub option: usize,
    /// The least probability asked for, where the probability decides.
    pub min_probability: Option<f64>,
}

/// The columns of one quench option.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum EquipmentColumn {
    /// Glassy with this option, by the rule that decides (a yes/no).
    Glassy,
    /// P(R_c ≤ rate) from the draws (only where the probability decides).
    Probability,
    /// log10(rate / R_c), decades.
    Margin,
}

impl EquipmentField {
    /// Whether the column holds numbers (else yes/no).
    pub fn is_number(&self) -> bool {
        self.kind != EquipmentColumn::Glassy
    }

    /// The value of this column for a glass of critical rate `critical_rate`
    /// (K/s) with the probabilities of every option from the draws
    /// (`Row::probability_glassy_with`; empty when not drawn).
    pub fn cell(&self, critical_rate: Option<f64>, probabilities: &[Option<f64>]) -> Cell<'static> {
        let p = probabilities.get(self.option).copied().flatten();
        match (self.kind, self.min_probability) {
            (EquipmentColumn::Margin, _) => Cell::Num(
                critical_rate
                    .and_then(|r| self.equipment.verdict(r))
                    .map(|v| v.margin_decades),
            ),
            (EquipmentColumn::Probability, _) => Cell::Num(p),
            (EquipmentColumn::Glassy, Some(m)) => Cell::Bool(p.map(|p| p >= m)),
            (EquipmentColumn::Glassy, None) => Cell::Bool(
                critical_rate
                    .and_then(|r| self.equipment.verdict(r))
                    .map(|v| v.glassy),
            ),
        }
    }

    /// The value of this column in a screen's row.
    pub fn get(&self, r: &Row) -> Cell<'static> {
        self.cell(r.critical_rate_k_per_s, &r.probability_glassy_with)
    }
}

/// The name of an equipment option as it stands in column names: lower
/// case, letters, digits and underscores.
pub fn equipment_column_name(name: &str) -> String {
    column_safe(&name.trim().to_lowercase())
}

/// The per-option columns of a problem: none with a single quench option
/// (its verdict is `margin_decades` and the cooling-rate limit), else two
/// per option (three where the probability decides), the deciding one first.
pub fn equipment_fields(problem: &ScreenProblem) -> Vec<EquipmentField> {
    if problem.more_equipment.is_empty() {
        return Vec::new();
    }
    let min_probability = problem
        .uncertainty
        .and_then(|u| u.min_probability)
        .filter(|_| problem.probability_decides());
    problem
        .equipment_options()
        .enumerate()
        .flat_map(|(option, q)| {
            let n = equipment_column_name(&q.name);
            let field = |name: String, kind| EquipmentField {
                name,
                equipment: q.clone(),
                kind,
                option,
                min_probability,
            };
            let mut v = vec![field(format!("glassy_with_{n}"), EquipmentColumn::Glassy)];
            if min_probability.is_some() {
                v.push(field(
                    format!("probability_glassy_with_{n}"),
                    EquipmentColumn::Probability,
                ));
            }
            v.push(field(
                format!("margin_with_{n}_decades"),
                EquipmentColumn::Margin,
            ));
            v
        })
        .collect()
}

/// Which rule the `glassy_with_<name>` columns follow, in words.
pub fn equipment_rule_text(problem: &ScreenProblem) -> String {
    match problem.uncertainty.and_then(|u| u.min_probability) {
        Some(m) if problem.probability_decides() => format!(
            "glassy_with_… = P(R_c ≤ that option's rate) ≥ min_probability {m}, from the screen's draws (probability_glassy_with_… columns)"
        ),
        _ => "glassy_with_… = R_c ≤ that option's rate / its safety factor".to_string(),
    }
}

/// The column the per-option columns follow.
pub const EQUIPMENT_FIELDS_AFTER: &str = "margin_decades";

/// One value of an evaluation's row, typed.
#[derive(Debug, Clone, PartialEq)]
pub enum EvalCell<'a> {
    /// A number (None where there is none).
    Num(Option<f64>),
    /// A text (None where there is none).
    Text(Option<&'a str>),
    /// A yes/no.
    Bool(Option<bool>),
    /// Several texts, written joined by "; " (the warnings).
    Joined(&'a [String]),
}

/// Which evaluations carry a column of an `eval` table.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Carried {
    /// Every evaluation.
    Always,
    /// Evaluations of a composition with a model set (not melt cards).
    WithModels,
    /// Evaluations whose kinetic factor is tied to a measurement.
    WhenCalibrated,
}

/// The kind of an [`EvalCell`], known without a row.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum CellKind {
    Num,
    Text,
    Bool,
    Joined,
}

/// A column of an `eval` table and how to read it from an evaluation.
#[derive(Clone, Copy)]
pub struct EvalField {
    pub name: &'static str,
    pub carried: Carried,
    /// What `get` gives (the variant of [`EvalCell`]).
    pub kind: CellKind,
    pub get: for<'a> fn(&'a Evaluation) -> EvalCell<'a>,
}

/// The word a table writes for a driving force (as in model sets and cards).
pub fn driving_force_name(d: DrivingForce) -> &'static str {
    match d {
        DrivingForce::Turnbull => "turnbull",
        DrivingForce::Hoffman => "hoffman",
    }
}

macro_rules! eval_fields {
    ($($name:ident: $carried:ident $kind:ident |$e:ident| $get:expr;)*) => {
        &[$(EvalField {
            name: stringify!($name),
            carried: Carried::$carried,
            kind: CellKind::$kind,
            get: |$e| EvalCell::$kind($get),
        }),*]
    };
}

/// The result columns of an `eval` table (besides the per-phase ones of
/// [`PHASE_FIELDS`] and the `error` column). The composition itself is not
/// repeated: the input columns carry it. `tests/tables.rs` checks that these
/// are exactly the numbers and texts an [`Evaluation`] serialises to.
pub const EVALUATION_FIELDS: &[EvalField] = eval_fields![
    model_set: WithModels Text |e| e.model_set.as_deref();
    primary_phase: WithModels Text |e| e.primary_phase.as_deref();
    limiting_phase: Always Text |e| Some(e.limiting_phase.as_str());
    liquidus_k: Always Num |e| Some(e.liquidus_k);
    liquidus_c: Always Num |e| Some(e.liquidus_c);
    glass_transition_k: Always Num |e| Some(e.glass_transition_k);
    glass_transition_c: Always Num |e| Some(e.glass_transition_c);
    melting_temperature_k: WithModels Num |e| e.melting_temperature_k;
    melting_temperature_c: WithModels Num |e| e.melting_temperature_c;
    melting_viscosity_pa_s: WithModels Num |e| e.melting_viscosity_pa_s;
    working_point_k: WithModels Num |e| e.working_point_k;
    working_point_c: WithModels Num |e| e.working_point_c;
    softening_point_k: WithModels Num |e| e.softening_point_k;
    softening_point_c: WithModels Num |e| e.softening_point_c;
    strain_point_k: WithModels Num |e| e.strain_point_k;
    strain_point_c: WithModels Num |e| e.strain_point_c;
    reduced_glass_transition: WithModels Num |e| e.reduced_glass_transition;
    fragility: Always Num |e| Some(e.fragility);
    freeze_temperature_k: Always Num |e| Some(e.freeze_temperature_k);
    nose_temperature_k: Always Num |e| Some(e.nose_temperature_k);
    nose_temperature_c: Always Num |e| Some(e.nose_temperature_c);
    nose_time_s: Always Num |e| Some(e.nose_time_s);
    nose_rate_k_per_s: Always Num |e| Some(e.nose_rate_k_per_s);
    nose_rate_k_per_min: Always Num |e| Some(e.nose_rate_k_per_min);
    critical_rate_k_per_s: Always Num |e| Some(e.critical_rate_k_per_s);
    critical_rate_k_per_min: Always Num |e| Some(e.critical_rate_k_per_min);
    nose_nucleation_rate_per_m3_s: Always Num |e| Some(e.nose_nucleation_rate_per_m3_s);
    nose_growth_rate_m_per_s: Always Num |e| Some(e.nose_growth_rate_m_per_s);
    turnbull_alpha: Always Num |e| Some(e.turnbull_alpha);
    interface_energy_j_per_m2: Always Num |e| Some(e.interface_energy_j_per_m2);
    kinetics_calibrated: Always Bool |e| Some(e.kinetics_calibrated);
    calibrated_against: WhenCalibrated Text |e| e.calibrated_against.as_deref();
    detectable_fraction: Always Num |e| Some(e.detectable_fraction);
    driving_force: Always Text |e| Some(driving_force_name(e.driving_force));
    heterogeneous_nuclei_per_m3: Always Num |e| Some(e.heterogeneous_nuclei_per_m3);
    wall_contact_angle_deg: Always Num |e| Some(e.wall_contact_angle_deg);
    sample_thickness_m: Always Num |e| Some(e.sample_thickness_m);
    transport: Always Text |e| Some(e.transport.as_str());
    max_glassy_thickness_mm: Always Num |e| e.max_glassy_thickness_mm;
    quench_surface_k: Always Num |e| Some(e.quench_surface_k);
    melt_thermal_diffusivity_m2_per_s: Always Num |e| Some(e.melt_thermal_diffusivity_m2_per_s);
    viscosity_extrapolated: Always Bool |e| Some(e.viscosity_extrapolated);
    liquidus_extrapolated: Always Bool |e| Some(e.liquidus_extrapolated);
    vouched: Always Bool |e| Some(e.vouched);
    warnings: Always Joined |e| e.warnings.as_slice();
];

/// A value per crystal phase: column `<prefix>_<phase>_<suffix>`, the
/// phase's name made safe for any table tool by [`column_safe`].
#[derive(Clone, Copy)]
pub struct PhaseField {
    pub prefix: &'static str,
    pub suffix: &'static str,
    pub get: fn(&Evaluation) -> &BTreeMap<String, f64>,
}

/// The per-phase columns of an `eval` table: every phase's liquidus, and
/// the critical rate each phase alone would need (empty for a phase whose
/// liquidus lies below that row's glass transition).
pub const PHASE_FIELDS: [PhaseField; 2] = [
    PhaseField {
        prefix: "liquidus",
        suffix: "k",
        get: |e| &e.liquidus_by_phase_k,
    },
    PhaseField {
        prefix: "critical_rate",
        suffix: "k_per_s",
        get: |e| &e.critical_rate_by_phase_k_per_s,
    },
];

impl PhaseField {
    /// The column of one phase.
    pub fn column(&self, phase: &str) -> String {
        format!("{}_{}_{}", self.prefix, column_safe(phase), self.suffix)
    }
}

/// A name safe for any table tool: letters, digits and underscores.
pub fn column_safe(name: &str) -> String {
    name.chars()
        .map(|c| if c.is_ascii_alphanumeric() { c } else { '_' })
        .collect()
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn oxide_columns_round_trip() {
        for o in Oxide::ALL {
            assert_eq!(oxide_of_column(&oxide_column(o)), Some(o));
        }
        assert_eq!(oxide_of_column("liquidus_k"), None);
        assert!(field("liquidus_k").is_some() && field("nope").is_none());
    }

    /// One rounding rule: a CSV cell rounded to n decimals reads as the
    /// text outputs' `{:.n}` of the same value, ties included (1152.85 as a
    /// double lies just below the tie: 1152.8 in both; multiplying by 10
    /// first would round it up to 1152.9).
    #[test]
    fn csv_and_text_round_alike() {
        assert_eq!(rounded(1152.85, Digits::Decimals(1)), 1152.8);
        assert_eq!(fixed(1152.85, 1), "1152.8");
        let mut x = 1000.0;
        while x < 1300.0 {
            for n in [1usize, 2, 3] {
                assert_eq!(
                    format!("{:.n$}", rounded(x, Digits::Decimals(n as i32))),
                    fixed(x, n),
                    "{x}"
                );
            }
            x += 0.005;
        }
        assert_eq!(rounded(-0.04, Digits::Decimals(1)), 0.0);
        assert!(rounded(-0.04, Digits::Decimals(1)).is_sign_positive());
        assert_eq!(rounded(0.000123456, Digits::Significant(4)), 0.0001235);
    }

    /// The shortcut gives the very double the decimal text gives, bit for
    /// bit, wherever it answers: values over 30 decades (and, for
    /// significant figures, over the whole range of doubles, subnormals
    /// included), both signs, every digit count the tables use, near-ties
    /// from the decimal grid included (fixed SplitMix-style sequence).
    #[test]
    fn scaled_rounding_equals_the_text_rounding_bit_for_bit() {
        // Source: the Rust standard library's exact float formatting and
        // parsing (`{:.N}`, `{:.Ne}`, `str::parse::<f64>`): the slow path,
        // kept as the reference.
        let mut next = crate::numeric::split_mix(0x7ab1e5_u64);
        let (mut answered, mut tried) = (0, 0);
        for i in 0..200_000 {
            let mut x = if i % 5 == 4 {
                // A rate or a time far from 1: beyond the exact powers.
                10f64.powf(-323.0 + 631.0 * next())
            } else {
                10f64.powf(-15.0 + 30.0 * next())
            };
            if i % 3 == 0 {
                // On or next to the decimal grid: ties and near-ties.
                let q = 10f64.powi((next() * 8.0) as i32 - 4);
                x = ((x / q).round() + 0.5) * q * (1.0 + (next() - 0.5) * 1e-15);
            } else if i % 3 == 1 {
                // Within a few units in the last place of a tie of the grid
                // the digit count rounds to: where the rounding of x·10^k
                // itself can flip the answer.
                let d = [0, 1, 2, 4][(next() * 4.0) as usize];
                let q = if next() < 0.5 {
                    10f64.powi(-d)
                } else {
                    10f64.powi(x.abs().log10().floor() as i32 - 5)
                };
                let tie = ((x / q).floor() + 0.5) * q;
                let ulps = (next() * 7.0) as i64 - 3;
                x = f64::from_bits((tie.to_bits() as i64 + ulps) as u64);
            }
            if i % 2 == 0 {
                x = -x;
            }
            for d in [
                Digits::Decimals(0),
                Digits::Decimals(1),
                Digits::Decimals(2),
                Digits::Decimals(4),
                Digits::Significant(1),
                Digits::Significant(3),
                Digits::Significant(4),
                Digits::Significant(6),
            ] {
                tried += 1;
                if let Some(r) = scaled_rounding(x, d) {
                    answered += 1;
                    let t = rounded_through_text(x, d);
                    assert_eq!(r.to_bits(), t.to_bits(), "{x:e} {d:?}: {r:e} vs {t:e}");
                }
            }
        }
        // The shortcut must answer for most values, or it buys nothing.
        assert!(answered * 10 > tried * 6, "{answered} of {tried}");
        // Far from 1 it answers too: the significant figures of 10^±40.
        for x in [1.234_567_8e-40, -9.876_543_2e40, 5e-324, 1.7e308] {
            let d = Digits::Significant(4);
            let r = scaled_rounding(x, d);
            if x.abs() > 1e-300 {
                assert!(r.is_some(), "{x:e}");
            }
            if let Some(r) = r {
                assert_eq!(r.to_bits(), rounded_through_text(x, d).to_bits(), "{x:e}");
            }
        }
    }

    fn w(t: &[&str]) -> Vec<String> {
        t.iter().map(|s| s.to_string()).collect()
    }

    /// Codes for the warnings the first two evaluated rows share; a text
    /// tied to one row stays in full; failed rows are skipped.
    #[test]
    fn a_legend_codes_what_the_first_two_rows_share() {
        let rows = [
            Some(w(&["invented", "nose at 914 K", "uncalibrated"])),
            None,
            Some(w(&["invented", "uncalibrated", "nose at 939 K"])),
            Some(w(&["uncalibrated", "invented"])),
        ];
        let mut l = WarningLegend::new();
        l.see(rows[0].as_deref());
        assert!(!l.is_fixed());
        l.see(rows[1].as_deref());
        assert!(!l.is_fixed());
        l.see(rows[2].as_deref());
        assert!(l.is_fixed());
        let coded: Vec<String> = rows.iter().flatten().map(|r| l.code_row(r)).collect();
        assert_eq!(coded[0], "W1; nose at 914 K; W2");
        assert_eq!(coded[1], "W1; W2; nose at 939 K");
        assert_eq!(coded[2], "W2; W1");
        let codes = l.codes();
        assert_eq!(codes.len(), 2);
        assert_eq!((codes[0].text.as_str(), codes[0].rows), ("invented", 3));
        assert_eq!((codes[1].code.as_str(), codes[1].rows), ("W2", 3));
        // One evaluated row: nothing repeats, nothing is coded.
        let mut one = WarningLegend::new();
        one.see(rows[0].as_deref());
        one.finish();
        assert_eq!(
            one.code_row(rows[0].as_ref().unwrap()),
            "invented; nose at 914 K; uncalibrated"
        );
        // No second evaluated row within the look-ahead: the first row's own.
        let mut far = WarningLegend::new();
        far.see(rows[0].as_deref());
        for _ in 1..LEGEND_LOOK_AHEAD_ROWS {
            far.see(None);
        }
        assert!(far.is_fixed());
        assert_eq!(far.codes().len(), 3);
    }
}
