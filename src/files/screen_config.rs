//! Screen configuration: the TOML file a user writes (`RawConfig`) turned
//! into a validated [`RunPlan`]: the problem and the search (what is solved)
//! kept apart from how the run goes (threads, the config's path, text and
//! hash). Errors name the file, the line and the key, all at once.

use super::melt_card::KineticsTable;
use super::model_set::{built_in_model_set, load_model_set, load_viscosity_model};
use super::raw_materials::read_raw_materials;
use super::source::{read_text, DataError, Pair, Problem, Source};
use crate::batch::{BatchSettings, CostModel, MAX_BATCH_TOLERANCE_WT_PCT};
use crate::composition::expr::parse_linear;
use crate::composition::Oxide;
use crate::error::Error;
use crate::kinetics::KineticOptions;
use crate::report::records::equipment_column_name;
use crate::report::text::DEMO_SHELF_LABEL;
use crate::screen::{
    CostLimit, Equipment, LinearConstraint, ObjectiveKind, ScreenProblem, ScreenUncertainty,
    Search, Snapping, Weights, DEFAULT_MARGIN_CAP_DECADES,
};
use crate::uncertainty::melt::model_set_inputs;
use crate::uncertainty::MIN_DRAWS;
use crate::units::{Celsius, RateUnit, CELSIUS_OFFSET};
use serde::Deserialize;
use std::collections::BTreeMap;
use std::path::{Path, PathBuf};
use std::sync::Arc;
use toml::Spanned;

#[derive(Deserialize)]
#[serde(deny_unknown_fields)]
struct RawConfig {
    search: RawSearch,
    oxides: BTreeMap<Spanned<String>, Spanned<Pair>>,
    #[serde(default)]
    constraint: Vec<RawConstraint>,
    equipment: Spanned<RawEquipments>,
    furnace: RawFurnace,
    #[serde(default)]
    cost: Option<RawCost>,
    #[serde(default)]
    properties: Option<RawProperties>,
    #[serde(default)]
    objective: Option<RawObjective>,
    #[serde(default)]
    shortlist: Option<RawShortlist>,
    #[serde(default)]
    models: Option<RawModels>,
    #[serde(default)]
    kinetics: Option<KineticsTable>,
    #[serde(default)]
    uncertainty: Option<Spanned<RawUncertainty>>,
    #[serde(default)]
    batch: Option<RawBatch>,
}

#[derive(Deserialize)]
#[serde(deny_unknown_fields)]
struct RawBatch {
    glass_kg: Spanned<f64>,
}

/// The glass a batch sheet makes when `[batch] glass_kg` does not say, kg.
pub const DEFAULT_BATCH_GLASS_KG: f64 = 1.0;
/// The largest `[batch] glass_kg` (a larger one is a typing accident).
pub const MAX_BATCH_GLASS_KG: f64 = 1000.0;
/// The smallest `[batch] glass_kg`: one gram (a sheet for less reads as zeros).
pub const MIN_BATCH_GLASS_KG: f64 = 0.001;
/// Whether snapping can give an amount in [lo, hi] mol%: 0 (when lo is 0)
/// or a grid multiple at least the minimum amount; else what it can give.
fn snapped_amount_in(snap: Snapping, lo: f64, hi: f64) -> Result<f64, String> {
    if lo <= 0.0 {
        return Ok(0.0);
    }
    let from = lo.max(snap.min_amount_mol_pct);
    let r = snap.resolution_mol_pct;
    let m = if r > 0.0 {
        // The smallest grid multiple at or above `from` (1e-9: 0.1·3 is
        // not quite 0.3 in doubles).
        (from / r - 1e-9).ceil() * r
    } else {
        from
    };
    if m <= hi + 1e-9 {
        Ok(m)
    } else if r > 0.0 {
        Err(format!(
            "0, or multiples of {r} mol% from {} mol% up",
            snap.min_amount_mol_pct
        ))
    } else {
        Err(format!("0, or {} mol% and up", snap.min_amount_mol_pct))
    }
}

/// The coarsest `[shortlist] resolution_mol_pct`.
pub const MAX_RESOLUTION_MOL_PCT: f64 = 10.0;
/// The finest `[shortlist] resolution_mol_pct`: nobody weighs a thousandth of
/// a mol%, and the grid arithmetic stays exact far below its limits.
pub const MIN_RESOLUTION_MOL_PCT: f64 = 0.001;
/// The slowest equipment cooling rate, K/s (about 0.06 K/min, slower than any
/// furnace cools).
pub const MIN_EQUIPMENT_RATE_K_PER_S: f64 = 1e-6;
/// The largest `[shortlist] min_amount_mol_pct`.
pub const MAX_MIN_AMOUNT_MOL_PCT: f64 = 10.0;

#[derive(Deserialize)]
#[serde(deny_unknown_fields)]
struct RawUncertainty {
    #[serde(default = "default_draws")]
    draws: Spanned<usize>,
    #[serde(default)]
    min_probability: Option<Spanned<f64>>,
    #[serde(default)]
    seed: Option<u64>,
}

/// Draws per recipe when `[uncertainty]` does not say: a probability to
/// about ±0.035 (binomial standard error at p = 0.5).
pub const DEFAULT_SCREEN_DRAWS: usize = 200;
/// The most draws per recipe a screen may ask for (each recipe drawn costs
/// this many critical-rate solves).
pub const MAX_SCREEN_DRAWS: usize = 100_000;

fn default_draws() -> Spanned<usize> {
    Spanned::new(0..0, DEFAULT_SCREEN_DRAWS)
}

#[derive(Deserialize)]
#[serde(deny_unknown_fields)]
struct RawSearch {
    seed: u64,
    first_pass_points: Spanned<usize>,
    #[serde(default = "default_refine_from")]
    refine_from: Spanned<usize>,
    #[serde(default = "default_refine_iterations")]
    refine_iterations: Spanned<u64>,
    #[serde(default)]
    threads: Option<Spanned<usize>>,
    #[serde(default = "default_chunk")]
    chunk_size: Spanned<usize>,
    #[serde(default)]
    allow_extrapolation: bool,
}

fn default_refine_from() -> Spanned<usize> {
    Spanned::new(0..0, 6)
}
fn default_refine_iterations() -> Spanned<u64> {
    Spanned::new(0..0, 60)
}
fn default_chunk() -> Spanned<usize> {
    Spanned::new(0..0, 256)
}

#[derive(Deserialize)]
#[serde(deny_unknown_fields)]
struct RawConstraint {
    expr: Spanned<String>,
    min: Option<Spanned<f64>>,
    max: Option<Spanned<f64>>,
}

#[derive(Deserialize)]
#[serde(deny_unknown_fields)]
struct RawEquipment {
    #[serde(default)]
    name: Option<Spanned<String>>,
    cooling_rate: Spanned<f64>,
    #[serde(default = "default_unit")]
    unit: RateUnit,
    #[serde(default = "one")]
    safety_factor: Spanned<f64>,
    #[serde(default)]
    decides: Option<Spanned<bool>>,
}

/// `[equipment]` (one table) or `[[equipment]]` (one or more): read through
/// the TOML reader's own tables, so every key keeps its line.
struct RawEquipments(Vec<RawEquipment>);

impl<'de> Deserialize<'de> for RawEquipments {
    fn deserialize<D: serde::Deserializer<'de>>(d: D) -> Result<Self, D::Error> {
        struct Visit;
        impl<'de> serde::de::Visitor<'de> for Visit {
            type Value = RawEquipments;
            fn expecting(&self, f: &mut std::fmt::Formatter) -> std::fmt::Result {
                f.write_str("an [equipment] table or one or more [[equipment]] tables")
            }
            fn visit_map<A: serde::de::MapAccess<'de>>(
                self,
                m: A,
            ) -> Result<Self::Value, A::Error> {
                RawEquipment::deserialize(serde::de::value::MapAccessDeserializer::new(m))
                    .map(|e| RawEquipments(vec![e]))
            }
            fn visit_seq<A: serde::de::SeqAccess<'de>>(
                self,
                s: A,
            ) -> Result<Self::Value, A::Error> {
                Vec::<RawEquipment>::deserialize(serde::de::value::SeqAccessDeserializer::new(s))
                    .map(RawEquipments)
            }
        }
        d.deserialize_any(Visit)
    }
}

/// The name of an `[[equipment]]` without one.
pub const DEFAULT_EQUIPMENT_NAME: &str = "quench equipment";

fn default_unit() -> RateUnit {
    RateUnit::PerSecond
}
fn one() -> Spanned<f64> {
    Spanned::new(0..0, 1.0)
}

#[derive(Deserialize)]
#[serde(deny_unknown_fields)]
struct RawFurnace {
    max_temperature_c: Spanned<f64>,
    #[serde(default)]
    liquidus_margin_c: Option<Spanned<f64>>,
    #[serde(default)]
    melting_margin_c: Option<Spanned<f64>>,
    #[serde(default)]
    melting_viscosity_pa_s: Option<Spanned<f64>>,
}

/// The range a config's `[furnace] melting_viscosity_pa_s` may take, Pa·s:
/// the melting temperature is where a melt is fluid enough to fine and
/// homogenise, 10 Pa·s by common practice (some melt at 10^1.5 to
/// 10^2.5 Pa·s); beyond these it is no melting criterion (10^3 Pa·s is the
/// working point; below 0.1 Pa·s is a slip of units).
pub const MELTING_VISCOSITY_RANGE_PA_S: (f64, f64) = (0.1, 1e4);

/// How far below the furnace maximum the melting temperature must stay when
/// the config does not say, °C (common practice: a furnace is not run at its
/// rated maximum, and the 10 Pa·s point is only where fining starts).
pub const DEFAULT_MELTING_MARGIN_C: f64 = 20.0;

#[derive(Deserialize)]
#[serde(deny_unknown_fields)]
struct RawCost {
    max_per_kg_glass: Spanned<f64>,
    #[serde(default)]
    raw_materials: Option<Spanned<String>>,
    #[serde(default)]
    tolerance_wt_pct: Option<Spanned<f64>>,
}

#[derive(Deserialize)]
#[serde(deny_unknown_fields)]
struct RawProperties {
    glass_transition_c: Option<Spanned<Pair>>,
    working_range_k: Option<Spanned<Pair>>,
}

#[derive(Deserialize)]
#[serde(deny_unknown_fields)]
struct RawObjective {
    kind: Spanned<ObjectiveKind>,
    #[serde(default)]
    weights: Option<RawWeights>,
    #[serde(default)]
    margin_cap_decades: Option<Spanned<f64>>,
}

#[derive(Deserialize)]
#[serde(deny_unknown_fields)]
struct RawWeights {
    #[serde(default)]
    margin: Option<Spanned<f64>>,
    #[serde(default)]
    cost: Option<Spanned<f64>>,
    #[serde(default)]
    melting_temperature: Option<Spanned<f64>>,
}

#[derive(Deserialize)]
#[serde(deny_unknown_fields)]
struct RawShortlist {
    #[serde(default = "default_size")]
    size: Spanned<usize>,
    #[serde(default = "default_distance")]
    min_distance_mol_pct: Spanned<f64>,
    #[serde(default)]
    resolution_mol_pct: Option<Spanned<f64>>,
    #[serde(default)]
    min_amount_mol_pct: Option<Spanned<f64>>,
}

fn default_size() -> Spanned<usize> {
    Spanned::new(0..0, 8)
}
fn default_distance() -> Spanned<f64> {
    Spanned::new(0..0, 2.0)
}

#[derive(Deserialize)]
#[serde(deny_unknown_fields)]
struct RawModels {
    set: Option<Spanned<String>>,
    viscosity: Option<Spanned<String>>,
}

/// A validated screen config: the problem and the search, and how the run goes.
#[derive(Debug, Clone)]
pub struct RunPlan {
    pub problem: ScreenProblem,
    pub search: Search,
    /// The least-cost batch behind the cost limit (for the batch sheets).
    pub batch_model: Option<Arc<CostModel>>,
    /// Worker threads (None: all cores).
    pub threads: Option<usize>,
    pub config_path: PathBuf,
    /// The folder that relative paths inside the config are taken from
    /// (absolute when it exists): the config's own folder, or the base it was
    /// loaded with. Recorded in checkpoints and provenance, so that a merge or
    /// a report run from another folder reads the same files.
    pub base_dir: PathBuf,
    pub config_text: String,
    /// FNV-1a hash of the config text and the program version.
    pub config_hash: u64,
    /// What the loader changed and the user should hear about (a capped
    /// thread count), one sentence each.
    pub notes: Vec<String>,
    /// The glass each batch sheet makes, kg (`[batch] glass_kg`).
    pub batch_glass_kg: f64,
}

/// The fastest quench a config may name, K/s: a larger rate is a unit slip
/// (splat cooling and melt spinning, the fastest common quenches, reach
/// about 1e6 K/s; common practice).
pub const MAX_EQUIPMENT_RATE_K_PER_S: f64 = 1e9;

/// The largest `first_pass_points`.
pub const MAX_FIRST_PASS_POINTS: usize = 50_000_000;
/// The largest `chunk_size` (a chunk is held in memory while it is evaluated).
pub const MAX_CHUNK_SIZE: usize = 1_000_000;
/// The largest `refine_from` (each seed runs its own Nelder–Mead).
pub const MAX_REFINE_FROM: usize = 1000;
/// The largest `refine_iterations`.
pub const MAX_REFINE_ITERATIONS: u64 = 100_000;
/// The largest `[shortlist] size`.
pub const MAX_SHORTLIST_SIZE: usize = 1000;
/// The largest `threads` a config may ask for (a larger count is a typing
/// accident); counts above [`max_threads`] are capped with a note.
pub const MAX_THREADS: usize = 1024;
/// Worker threads allowed per core.
pub const THREADS_PER_CORE: usize = 4;
/// The widest distance two compositions can lie apart, mol% (Euclidean:
/// 100 mol% of one oxide against 100 mol% of another is 100·√2 apart).
pub const MAX_MIN_DISTANCE_MOL_PCT: f64 = 141.43;

/// [`THREADS_PER_CORE`] × the cores of this machine.
pub fn max_threads() -> usize {
    THREADS_PER_CORE
        * std::thread::available_parallelism()
            .map(|n| n.get())
            .unwrap_or(1)
}

/// FNV-1a, 64 bit (a stable hash for checkpoint headers).
pub(crate) fn fnv1a(bytes: &[u8]) -> u64 {
    let mut h: u64 = 0xcbf29ce484222325;
    for b in bytes {
        h ^= *b as u64;
        h = h.wrapping_mul(0x100000001b3);
    }
    h
}

/// Read and validate a screen config; paths inside it are relative to its folder.
/// What the loader changed (a capped thread count) is in `RunPlan.notes`, for
/// the command to say.
///
/// # Errors
/// Syntax, unknown keys, bad values, unreadable model or raw-material files —
/// all problems of the file at once, each with its line.
pub fn load(path: &Path) -> Result<RunPlan, Error> {
    load_with_base(path, None)
}

/// As [`load`], with relative paths inside the config taken from `base`
/// (used to re-load the copy of a config stored with a screen's results).
///
/// # Errors
/// As [`load`].
pub fn load_with_base(path: &Path, base: Option<&Path>) -> Result<RunPlan, Error> {
    let text = read_text(path)?;
    let src = Source::new(path.display().to_string(), &text);
    let hint = "see configs/demo-screen.toml for every key, with comments";
    let raw: RawConfig = toml::from_str(&text).map_err(|e| DataError::Invalid {
        path: src.path.clone(),
        problems: vec![src.problem(
            e.span().unwrap_or(0..0),
            super::source::shape_message(e.message()),
        )],
        hint: Some(hint.into()),
    })?;
    let mut problems: Vec<Problem> = Vec::new();
    let mut notes: Vec<String> = Vec::new();
    let mut push = |span: std::ops::Range<usize>, m: String| problems.push(src.problem(span, m));
    let dir = base
        .map(Path::to_path_buf)
        .unwrap_or_else(|| path.parent().unwrap_or(Path::new(".")).to_path_buf());
    let base_dir = {
        let d = if dir.as_os_str().is_empty() {
            Path::new(".")
        } else {
            dir.as_path()
        };
        std::fs::canonicalize(d).unwrap_or_else(|_| d.to_path_buf())
    };

    // Whole numbers of the search, each within its range (S4).
    let mut count = |key: &str, v: &Spanned<usize>, lo: usize, hi: usize| -> usize {
        let x = *v.get_ref();
        if !(lo..=hi).contains(&x) {
            push(
                v.span(),
                format!("{key} must be between {lo} and {hi}, got {x}"),
            );
        }
        x
    };
    let n = count(
        "first_pass_points",
        &raw.search.first_pass_points,
        1,
        MAX_FIRST_PASS_POINTS,
    );
    let chunk = count("chunk_size", &raw.search.chunk_size, 1, MAX_CHUNK_SIZE);
    let refine_from = count("refine_from", &raw.search.refine_from, 0, MAX_REFINE_FROM);
    let shortlist = raw.shortlist.unwrap_or(RawShortlist {
        size: default_size(),
        min_distance_mol_pct: default_distance(),
        resolution_mol_pct: None,
        min_amount_mol_pct: None,
    });
    let size = count("[shortlist] size", &shortlist.size, 1, MAX_SHORTLIST_SIZE);
    let threads = raw
        .search
        .threads
        .as_ref()
        .map(|t| count("threads", t, 1, MAX_THREADS));
    let iterations = *raw.search.refine_iterations.get_ref();
    if iterations > MAX_REFINE_ITERATIONS {
        push(
            raw.search.refine_iterations.span(),
            format!(
                "refine_iterations must be between 0 and {MAX_REFINE_ITERATIONS}, got {iterations}"
            ),
        );
    }
    let threads = threads.map(|t| {
        let cap = max_threads();
        if t > cap {
            notes.push(format!(
                "threads = {t} capped at {cap} ({THREADS_PER_CORE} × the cores of this machine)"
            ));
            cap
        } else {
            t
        }
    });

    let mut oxides: Vec<(Oxide, f64, f64)> = Vec::new();
    let mut named: Vec<(Oxide, &Spanned<String>)> = Vec::new();
    for (k, v) in &raw.oxides {
        match k.get_ref().parse::<Oxide>() {
            Ok(o) => {
                // S7: names differ only in case, yet name one oxide.
                if let Some((_, other)) = named.iter().find(|(q, _)| *q == o) {
                    // Keys come sorted: name the one that comes first in the file.
                    let (first, again) = if other.span().start <= k.span().start {
                        (*other, k)
                    } else {
                        (k, *other)
                    };
                    let line = src.problem(first.span(), "").line;
                    push(
                        again.span(),
                        format!(
                            "'{}' names {o} again (first as '{}' on line {line}); oxide names ignore case",
                            again.get_ref(),
                            first.get_ref()
                        ),
                    );
                    continue;
                }
                named.push((o, k));
                if let Some(m) = v.get_ref().count_problem(&format!("{o} limits"), "mol%") {
                    push(v.span(), m);
                    continue;
                }
                let [lo, hi] = v.get_ref().values;
                if !(lo.is_finite() && hi.is_finite() && 0.0 <= lo && lo <= hi && hi <= 100.0) {
                    push(v.span(), format!("{o} limits must be [min, max] with 0 <= min <= max <= 100 mol%, got [{lo}, {hi}]"));
                }
                oxides.push((o, lo, hi));
            }
            Err(_) => push(
                k.span(),
                format!(
                    "unknown oxide '{}'; known oxides are {}",
                    k.get_ref(),
                    Oxide::known_list()
                ),
            ),
        }
    }
    oxides.sort_by_key(|(o, ..)| o.index());
    if oxides.len() < 2 {
        push(
            0..0,
            "[oxides] needs at least two oxides with [min, max] mol%".into(),
        );
    } else {
        let lo: f64 = oxides.iter().map(|o| o.1).sum();
        let hi: f64 = oxides.iter().map(|o| o.2).sum();
        if lo > 100.0 || hi < 100.0 {
            let span = raw.oxides.keys().next().map(|k| k.span()).unwrap_or(0..0);
            push(
                span,
                format!(
                    "the oxide limits cannot sum to 100 mol% (minima sum to {lo}, maxima to {hi})"
                ),
            );
        }
    }
    let mut constraints = Vec::new();
    for c in &raw.constraint {
        let bound = |b: &Option<Spanned<f64>>| b.as_ref().map(|b| *b.get_ref());
        let (min, max) = (bound(&c.min), bound(&c.max));
        for (key, b) in [("min", &c.min), ("max", &c.max)] {
            if let Some(b) = b {
                if !b.get_ref().is_finite() {
                    push(
                        b.span(),
                        format!(
                            "constraint {key} must be a finite number of mol%, got {}",
                            b.get_ref()
                        ),
                    );
                }
            }
        }
        if let (Some(lo), Some(hi), Some(span)) = (min, max, c.max.as_ref().map(|m| m.span())) {
            if lo > hi {
                push(
                    span,
                    format!(
                        "constraint '{}' has min {lo} above max {hi}: no recipe can meet it",
                        c.expr.get_ref()
                    ),
                );
            }
        }
        match parse_linear(c.expr.get_ref()) {
            Ok(w) => {
                if min.is_none() && max.is_none() {
                    push(
                        c.expr.span(),
                        format!("constraint '{}' needs min or max", c.expr.get_ref()),
                    );
                }
                constraints.push(LinearConstraint {
                    text: c.expr.get_ref().clone(),
                    weights: w,
                    min,
                    max,
                });
            }
            Err(m) => push(c.expr.span(), m.to_string()),
        }
    }
    // The quench options: each rate and safety factor checked, names
    // distinct, at most one marked `decides = true` (else the first decides).
    let listed = raw.equipment.get_ref().0.len();
    if listed == 0 {
        push(
            raw.equipment.span(),
            "equipment = [] lists no quench: give at least one [[equipment]] with cooling_rate"
                .into(),
        );
    }
    let mut options: Vec<Equipment> = Vec::new();
    let mut deciding: Option<usize> = None;
    let mut seen: Vec<(String, usize)> = Vec::new();
    for (i, q) in raw.equipment.get_ref().0.iter().enumerate() {
        let name = match &q.name {
            Some(n) => {
                let t = n.get_ref().trim().to_string();
                if t.is_empty() {
                    push(n.span(), "equipment name must not be empty".into());
                } else if let Some((first, line)) = seen
                    .iter()
                    .find(|(s, _)| equipment_column_name(s) == equipment_column_name(&t))
                {
                    let why = if first.eq_ignore_ascii_case(&t) {
                        String::new()
                    } else {
                        format!(
                            " ('{first}' and '{t}' give the same column, glassy_with_{})",
                            equipment_column_name(&t)
                        )
                    };
                    push(
                        n.span(),
                        format!("equipment name '{t}' is used twice (first on line {line}){why}; each quench option needs its own name (names ignore case, and spaces and signs count as '_')"),
                    );
                } else {
                    seen.push((t.clone(), src.problem(n.span(), "").line));
                }
                t
            }
            None if listed > 1 => {
                push(
                    q.cooling_rate.span(),
                    "with more than one [[equipment]], each needs a name = \"...\" (it heads its column in the shortlist and its line in the plots)".into(),
                );
                DEFAULT_EQUIPMENT_NAME.to_string()
            }
            None => DEFAULT_EQUIPMENT_NAME.to_string(),
        };
        let which = if listed > 1 {
            format!("[[equipment]] '{name}': ")
        } else {
            String::new()
        };
        let rate = *q.cooling_rate.get_ref();
        if !(rate.is_finite() && rate > 0.0) {
            push(
                q.cooling_rate.span(),
                format!(
                    "{which}cooling_rate must be a positive number of {}, got {rate}",
                    q.unit.symbol()
                ),
            );
        } else if q.unit.to_si(rate).0 < MIN_EQUIPMENT_RATE_K_PER_S {
            push(
                q.cooling_rate.span(),
                format!(
                    "{which}cooling_rate {rate} {} is below {MIN_EQUIPMENT_RATE_K_PER_S:e} K/s, slower than any furnace cools; check the unit",
                    q.unit.symbol()
                ),
            );
        } else if q.unit.to_si(rate).0 > MAX_EQUIPMENT_RATE_K_PER_S {
            push(
                q.cooling_rate.span(),
                format!(
                    "{which}cooling_rate {rate} {} is above {MAX_EQUIPMENT_RATE_K_PER_S:e} K/s, faster than any bulk quench (splat and melt spinning reach about 1e6 K/s); check the unit",
                    q.unit.symbol()
                ),
            );
        }
        let safety = *q.safety_factor.get_ref();
        if !(safety.is_finite() && safety >= 1.0) {
            push(
                q.safety_factor.span(),
                format!("{which}safety_factor must be at least 1, got {safety}"),
            );
        }
        if let Some(d) = &q.decides {
            if *d.get_ref() {
                match deciding {
                    Some(first) => push(
                        d.span(),
                        format!(
                            "decides = true is given twice ('{}' already decides): one quench option decides feasibility and ranking",
                            options[first].name
                        ),
                    ),
                    None => deciding = Some(i),
                }
            }
        }
        options.push(Equipment {
            name,
            rate: q.unit.to_si(rate),
            safety_factor: safety,
        });
    }
    let first = deciding.unwrap_or(0).min(options.len().saturating_sub(1));
    let (equipment, more_equipment) = if options.is_empty() {
        (None, Vec::new())
    } else {
        let e = options.remove(first);
        (Some(e), options)
    };
    let fmax = *raw.furnace.max_temperature_c.get_ref();
    if !(fmax.is_finite() && fmax > 0.0 && fmax < 3000.0) {
        push(
            raw.furnace.max_temperature_c.span(),
            format!("max_temperature_c must be between 0 and 3000 °C, got {fmax}"),
        );
    }
    let mut furnace_margin = |key: &str, m: &Option<Spanned<f64>>, default: f64| -> f64 {
        let v = m.as_ref().map(|m| *m.get_ref()).unwrap_or(default);
        if let Some(m) = m {
            if !(v.is_finite() && v >= 0.0 && v < fmax) {
                push(
                    m.span(),
                    format!(
                        "{key} must be zero or positive and below max_temperature_c, got {v} °C"
                    ),
                );
            }
        }
        v
    };
    let margin = furnace_margin("liquidus_margin_c", &raw.furnace.liquidus_margin_c, 0.0);
    let melting_margin = furnace_margin(
        "melting_margin_c",
        &raw.furnace.melting_margin_c,
        DEFAULT_MELTING_MARGIN_C,
    );
    let melting_viscosity = match &raw.furnace.melting_viscosity_pa_s {
        None => None,
        Some(v) => {
            let x = *v.get_ref();
            let (lo, hi) = MELTING_VISCOSITY_RANGE_PA_S;
            if !(x.is_finite() && (lo..=hi).contains(&x)) {
                push(
                    v.span(),
                    format!(
                        "melting_viscosity_pa_s must lie between {lo} and {hi} Pa·s, got {x} (10 Pa·s, 100 poise, is the common melting criterion; a data sheet in dPa·s: divide by 10)"
                    ),
                );
                None
            } else {
                Some(x)
            }
        }
    };
    let cap = raw
        .objective
        .as_ref()
        .and_then(|o| o.margin_cap_decades.as_ref());
    let margin_cap = cap
        .map(|c| *c.get_ref())
        .unwrap_or(DEFAULT_MARGIN_CAP_DECADES);
    if let Some(c) = cap {
        if !(margin_cap.is_finite() && margin_cap > 0.0) {
            push(
                c.span(),
                format!("margin_cap_decades must be positive, got {margin_cap}"),
            );
        }
    }
    // Files the config names: a problem with one is reported at the line
    // that names it (L1), with the file's own problem below.
    let file_problem = |key: &str, s: &Spanned<String>, e: Error| {
        let written = s.get_ref();
        let text = e.to_string();
        // A file that cannot be opened is named once: its error starts with
        // the path it was looked for at.
        let message = match text.split_once(": ") {
            Some((p, why)) if !text.contains('\n') && Path::new(p).ends_with(written) => {
                if p == written.as_str() {
                    format!("{key} = \"{written}\" cannot be used: {why}")
                } else {
                    format!("{key} = \"{written}\" cannot be used: {why} (looked for {p})")
                }
            }
            _ => format!("{key} = \"{written}\" cannot be used:\n{text}"),
        };
        (s.span(), message)
    };
    let models_spec = raw.models.as_ref().and_then(|m| m.set.as_ref());
    let models = match models_spec.map(|s| s.get_ref().as_str()) {
        None => load_model_set(None).ok(),
        Some(n) if built_in_model_set(n).is_some() => load_model_set(Some(Path::new(n))).ok(),
        Some(p) => match load_model_set(Some(&dir.join(p))) {
            Ok(m) => Some(m),
            Err(e) => {
                if let Some(s) = models_spec {
                    let (span, m) = file_problem("[models] set", s, e.into());
                    push(span, m);
                }
                None
            }
        },
    };
    let viscosity = match raw.models.as_ref().and_then(|m| m.viscosity.as_ref()) {
        None => None,
        Some(v) => {
            let spec = v.get_ref().as_str();
            let loaded = if spec == "giordano2008" || built_in_model_set(spec).is_some() {
                load_viscosity_model(Path::new(spec))
            } else {
                load_viscosity_model(&dir.join(spec))
            };
            match loaded {
                Ok(m) => Some(m),
                Err(e) => {
                    let (span, m) = file_problem("[models] viscosity", v, e.into());
                    push(span, m);
                    None
                }
            }
        }
    };
    let cost = match &raw.cost {
        None => None,
        Some(c) => {
            let max = *c.max_per_kg_glass.get_ref();
            if !(max.is_finite() && max > 0.0) {
                push(
                    c.max_per_kg_glass.span(),
                    format!("max_per_kg_glass must be positive, got {max}"),
                );
            }
            let mut settings = BatchSettings::default();
            if let Some(t) = &c.tolerance_wt_pct {
                let v = *t.get_ref();
                if !(v.is_finite() && v > 0.0 && v <= MAX_BATCH_TOLERANCE_WT_PCT) {
                    push(
                        t.span(),
                        format!(
                            "tolerance_wt_pct must lie in (0, {MAX_BATCH_TOLERANCE_WT_PCT}] wt% of glass, got {v}"
                        ),
                    );
                }
                settings.tolerance_wt_pct = v;
            }
            let shelf = c
                .raw_materials
                .as_ref()
                .filter(|s| s.get_ref().as_str() != "demo");
            let shelf_path = shelf.map(|p| dir.join(p.get_ref()));
            let label = shelf_path
                .as_ref()
                .map(|p| p.display().to_string())
                .unwrap_or_else(|| DEMO_SHELF_LABEL.into());
            match (read_raw_materials(shelf_path.as_deref()), shelf) {
                (Ok(raws), _) => Some((Arc::new(CostModel { raws, settings }), max, label)),
                (Err(e), Some(s)) => {
                    let (span, m) = file_problem("[cost] raw_materials", s, e.into());
                    push(span, m);
                    None
                }
                (Err(e), None) => return Err(e.into()),
            }
        }
    };
    let (objective, weights) = match &raw.objective {
        None => (ObjectiveKind::Margin, Weights::default()),
        Some(o) => {
            let w = match &o.weights {
                None => Weights::default(),
                Some(w) => {
                    let mut weight = |key: &str, v: &Option<Spanned<f64>>| -> f64 {
                        let x = v.as_ref().map_or(0.0, |v| *v.get_ref());
                        if let Some(v) = v {
                            if !(x.is_finite() && x >= 0.0) {
                                push(
                                    v.span(),
                                    format!(
                                        "weights.{key} must be a finite number, zero or positive, got {x}"
                                    ),
                                );
                            }
                        }
                        x
                    };
                    Weights {
                        margin: weight("margin", &w.margin),
                        cost: weight("cost", &w.cost),
                        melting_temperature: weight("melting_temperature", &w.melting_temperature),
                    }
                }
            };
            if matches!(o.kind.get_ref(), ObjectiveKind::Blend)
                && !(w.margin > 0.0 || w.cost > 0.0 || w.melting_temperature > 0.0)
            {
                push(
                    o.kind.span(),
                    "objective kind = \"blend\" needs at least one positive weight in [objective.weights]".into(),
                );
            }
            (*o.kind.get_ref(), w)
        }
    };
    if matches!(objective, ObjectiveKind::Cost) && raw.cost.is_none() {
        push(
            raw.objective.as_ref().map_or(0..0, |o| o.kind.span()),
            "objective kind = \"cost\" needs a [cost] table with the raw materials".into(),
        );
    }
    let mut bounds = |key: &str, b: &Spanned<Pair>, lowest: f64, unit: &str| -> (f64, f64) {
        if let Some(m) = b.get_ref().count_problem(key, unit) {
            push(b.span(), m);
            return (0.0, 0.0);
        }
        let [lo, hi] = b.get_ref().values;
        if !(lo.is_finite() && hi.is_finite() && lo >= lowest && lo <= hi) {
            push(
                b.span(),
                format!(
                    "{key} must be [min, max] with {lowest} <= min <= max {unit}, got [{lo}, {hi}]"
                ),
            );
        }
        (lo, hi)
    };
    let tg_bounds = raw
        .properties
        .as_ref()
        .and_then(|p| p.glass_transition_c.as_ref())
        .map(|b| {
            let (lo, hi) = bounds("glass_transition_c", b, -CELSIUS_OFFSET, "°C");
            (Celsius(lo).to_kelvin(), Celsius(hi).to_kelvin())
        });
    let wr = raw
        .properties
        .as_ref()
        .and_then(|p| p.working_range_k.as_ref())
        .map(|b| bounds("working_range_k", b, 0.0, "K"));
    let kin_table = raw.kinetics.unwrap_or_default();
    let kin = kin_table.overrides().apply(KineticOptions::default());
    let mut nuclei_range = None;
    if let Some((r, span)) = kin_table.nuclei_range() {
        if raw.uncertainty.is_none() {
            push(
                span,
                "[kinetics]: a range of heterogeneous_nuclei_per_m3 is drawn only with an [uncertainty] table; give one number here, or add [uncertainty]".into(),
            );
        } else if r.len() == 2 && r.iter().all(|v| v.is_finite()) && 0.0 < r[0] && r[0] <= r[1] {
            nuclei_range = Some((r[0], r[1]));
        } else {
            push(
                span,
                format!("[kinetics]: heterogeneous_nuclei_per_m3 = [lo, hi] needs 0 < lo <= hi per m³, got {r:?}"),
            );
        }
    }
    let uncertainty = raw.uncertainty.as_ref().map(|t| {
        let t = t.get_ref();
        let draws = *t.draws.get_ref();
        if !(MIN_DRAWS..=MAX_SCREEN_DRAWS).contains(&draws) {
            push(
                t.draws.span(),
                format!("[uncertainty] draws must be between {MIN_DRAWS} and {MAX_SCREEN_DRAWS} per recipe drawn, got {draws}"),
            );
        }
        let min_probability = t.min_probability.as_ref().map(|m| {
            let v = *m.get_ref();
            if !(v.is_finite() && v > 0.0 && v <= 1.0) {
                push(
                    m.span(),
                    format!("[uncertainty] min_probability must be a probability above 0 and at most 1, got {v}"),
                );
            } else if v > most_shown(draws) + 1e-12 {
                // Rule of three (docs/science.md, "What is reported"): N
                // draws all glassy show P ≥ 1 − 3/N at 95 %, no more.
                let need = if v < 1.0 {
                    format!("raise draws to at least {}", ((3.0 / (1.0 - v)) - 1e-9).ceil())
                } else {
                    "no number of draws shows a certainty: ask for less than 1".to_string()
                };
                push(
                    m.span(),
                    format!(
                        "[uncertainty] min_probability = {v} cannot be shown by {draws} draws: even with every draw glassy, the 95 % bound is 1 − 3/{draws} = {:.4} (rule of three); {need}, or lower min_probability to at most {:.4}",
                        most_shown(draws),
                        most_shown(draws)
                    ),
                );
            }
            v
        });
        ScreenUncertainty {
            draws,
            seed: t.seed.unwrap_or(raw.search.seed),
            min_probability,
            nuclei_range_per_m3: nuclei_range,
            preselection: Default::default(),
        }
    });
    if objective == ObjectiveKind::Probability && uncertainty.is_none() {
        push(
            raw.objective.as_ref().map_or(0..0, |o| o.kind.span()),
            "objective kind = \"probability\" needs an [uncertainty] table (draws = N, and min_probability = p if a recipe must reach it)".into(),
        );
    }
    if let Err(e) = kin.validate() {
        let span = match &e {
            crate::kinetics::KineticsError::Value(v) => kin_table.span_of(v.name()),
            _ => None,
        };
        push(span.unwrap_or(0..0), format!("[kinetics]: {e}"));
    }
    let distance = *shortlist.min_distance_mol_pct.get_ref();
    if !(distance.is_finite() && (0.0..=MAX_MIN_DISTANCE_MOL_PCT).contains(&distance)) {
        push(
            shortlist.min_distance_mol_pct.span(),
            format!(
                "min_distance_mol_pct must lie in [0, {MAX_MIN_DISTANCE_MOL_PCT}] mol% (100·√2 is the widest two compositions can lie apart), got {distance}"
            ),
        );
    }
    let resolution = shortlist.resolution_mol_pct.as_ref().map(|r| {
        let v = *r.get_ref();
        let steps = 100.0 / v;
        if !(v.is_finite() && (MIN_RESOLUTION_MOL_PCT..=MAX_RESOLUTION_MOL_PCT).contains(&v)) {
            push(
                r.span(),
                format!("[shortlist] resolution_mol_pct must lie in [{MIN_RESOLUTION_MOL_PCT}, {MAX_RESOLUTION_MOL_PCT}] mol%, got {v}"),
            );
        } else if (steps - steps.round()).abs() > 1e-6 * steps {
            push(
                r.span(),
                format!("[shortlist] resolution_mol_pct must divide 100 mol% into whole steps (so that the balance oxide lands on the grid too), e.g. 0.1, 0.25, 0.5 or 1; got {v}"),
            );
        }
        v
    });
    let min_amount = shortlist.min_amount_mol_pct.as_ref().map(|m| {
        let v = *m.get_ref();
        if !(v.is_finite() && (0.0..=MAX_MIN_AMOUNT_MOL_PCT).contains(&v)) {
            push(
                m.span(),
                format!("[shortlist] min_amount_mol_pct must lie in [0, {MAX_MIN_AMOUNT_MOL_PCT}] mol%, got {v}"),
            );
        }
        v
    });
    let snapping = (resolution.is_some() || min_amount.is_some()).then(|| Snapping {
        resolution_mol_pct: resolution.unwrap_or(0.0),
        min_amount_mol_pct: min_amount.unwrap_or(0.0),
    });
    // Snapping can only give a free oxide 0 or a grid multiple from the
    // minimum amount up: a range holding neither could never be met, and
    // every snapped recipe would be dropped (the balance oxide, widest
    // range, takes the rest and is not snapped on its own).
    if let Some(snap) = snapping {
        let balance = crate::screen::simplex::balance_index(&oxides);
        for (i, &(o, lo, hi)) in oxides.iter().enumerate() {
            if i == balance || lo >= hi {
                continue;
            }
            if let Some(v) = snapped_amount_in(snap, lo, hi).err() {
                let span = named
                    .iter()
                    .find(|(q, _)| *q == o)
                    .and_then(|(_, k)| raw.oxides.get(*k))
                    .map(|v| v.span())
                    .unwrap_or(0..0);
                push(span, format!("{o} range [{lo}, {hi}] mol% holds no amount snapping can give ({v}); widen the range or change [shortlist] resolution_mol_pct / min_amount_mol_pct"));
            }
        }
    }
    let batch_glass_kg = match &raw.batch {
        None => DEFAULT_BATCH_GLASS_KG,
        Some(b) => {
            let v = *b.glass_kg.get_ref();
            if !(v.is_finite() && (MIN_BATCH_GLASS_KG..=MAX_BATCH_GLASS_KG).contains(&v)) {
                push(
                    b.glass_kg.span(),
                    format!("[batch] glass_kg must lie in [{MIN_BATCH_GLASS_KG}, {MAX_BATCH_GLASS_KG}] kg of glass, got {v}"),
                );
            }
            v
        }
    };
    if !problems.is_empty() {
        return Err(src_error(&src, problems, hint).into());
    }
    let mut models = models.ok_or_else(|| Error::internal("the model set was not loaded"))?;
    if let Some(v) = viscosity {
        models = models.with_viscosity(v);
    }
    if let Some(v) = melting_viscosity {
        models.melting_viscosity_pa_s = v;
    }
    // An oxide the models were not made for cannot be screened unless the user
    // allows extrapolation: its effect would be silently zero.
    if !raw.search.allow_extrapolation {
        for (k, v) in &raw.oxides {
            let Ok(o) = k.get_ref().parse::<Oxide>() else {
                continue;
            };
            if v.get_ref().values[1] <= 0.0 {
                continue;
            }
            let mut missing = Vec::new();
            if !models.viscosity.domain.covers(o) {
                missing.push(format!("the viscosity model '{}'", models.viscosity.name));
            }
            if !models.phases.iter().any(|p| p.domain.covers(o)) {
                missing.push("any liquidus surface".to_string());
            }
            if !missing.is_empty() {
                problems.push(src.problem(
                    k.span(),
                    format!(
                        "{o} may reach {} mol% here, but {} (no validity domain lists it), so its effect would count as zero; narrow {o} to [0, 0], use a model set that covers it, or set allow_extrapolation = true under [search]",
                        v.get_ref().values[1],
                        match missing.as_slice() {
                            [one] => format!("{one} does not cover {o}"),
                            _ => format!("neither {} covers {o}", missing.join(" nor ")),
                        }
                    ),
                ));
            }
        }
        if !problems.is_empty() {
            return Err(src_error(&src, problems, hint).into());
        }
    }
    // The draws need spreads: the set's fit records, a turnbull_alpha_sd, or
    // a range of the nuclei density.
    if let (Some(t), Some(u)) = (&raw.uncertainty, &uncertainty) {
        match model_set_inputs(&models, &kin, u.nuclei_range_per_m3) {
            Ok((inputs, _)) if !inputs.is_empty() => {}
            Ok(_) => problems.push(src.problem(
                t.span(),
                format!(
                    "[uncertainty]: model set '{}' gives no spread to draw from (no fit record, no turnbull_alpha_sd) and [kinetics] gives no heterogeneous_nuclei_per_m3 = [lo, hi]",
                    models.about.name
                ),
            )),
            Err(e) => problems.push(src.problem(t.span(), format!("[uncertainty]: {e}"))),
        }
        if !problems.is_empty() {
            return Err(src_error(&src, problems, hint).into());
        }
    }
    let config_hash = fnv1a(format!("{}\n{}", env!("CARGO_PKG_VERSION"), text).as_bytes());
    let batch_model = cost.as_ref().map(|c| c.0.clone());
    let cost = cost.map(|(model, max_per_kg, label)| CostLimit {
        model,
        max_per_kg,
        label,
    });
    Ok(RunPlan {
        problem: ScreenProblem {
            oxides,
            constraints,
            equipment: equipment.ok_or_else(|| Error::internal("no quench option was read"))?,
            more_equipment,
            furnace_max: Celsius(fmax).to_kelvin(),
            melting_max: Celsius(fmax - melting_margin).to_kelvin(),
            liquidus_max: Celsius(fmax - margin).to_kelvin(),
            cost,
            glass_transition_bounds: tg_bounds,
            working_range_bounds_k: wr,
            objective,
            weights,
            margin_cap_decades: margin_cap,
            allow_extrapolation: raw.search.allow_extrapolation,
            models,
            kinetic_options: kin,
            shortlist_size: size,
            min_distance_mol_pct: distance,
            uncertainty,
            snapping,
        },
        search: Search {
            seed: raw.search.seed,
            first_pass_points: n,
            chunk_size: chunk,
            refine_from,
            refine_iterations: iterations,
        },
        batch_model,
        threads,
        config_path: path.to_path_buf(),
        base_dir,
        config_text: text.clone(),
        config_hash,
        notes,
        batch_glass_kg,
    })
}

fn src_error(src: &Source, problems: Vec<Problem>, hint: &str) -> DataError {
    DataError::Invalid {
        path: src.path.clone(),
        problems,
        hint: Some(hint.into()),
    }
}

/// The largest probability `draws` draws can show at 95 %: 1 − 3/draws, the
/// bound when every draw is glassy (the rule of three; Hanley &
/// Lippman-Hand 1983, JAMA 249, 1743).
fn most_shown(draws: usize) -> f64 {
    1.0 - crate::uncertainty::rule_of_three(draws)
}
