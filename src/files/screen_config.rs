//! Screen configuration: the TOML file a user writes (`RawConfig`) turned
//! into a validated [`RunPlan`]: the problem and the search (what is solved)
//! kept apart from how the run goes (threads, the config's path, text and
//! hash). Errors name the file, the line and the key, all at once.

use super::melt_card::KineticsTable;
use super::model_set::{load_model_set, load_viscosity_model};
use super::raw_materials::read_raw_materials;
use super::source::{read_text, DataError, Problem, Source};
use crate::batch::{BatchSettings, CostModel};
use crate::composition::expr::parse_linear;
use crate::composition::Oxide;
use crate::error::Error;
use crate::kinetics::KineticOptions;
use crate::report::text::DEMO_SHELF_LABEL;
use crate::screen::{
    CostLimit, Equipment, LinearConstraint, ObjectiveKind, ScreenProblem, Search, Weights,
    DEFAULT_MARGIN_CAP_DECADES,
};
use crate::units::{Celsius, RateUnit};
use serde::Deserialize;
use std::collections::BTreeMap;
use std::path::{Path, PathBuf};
use std::sync::Arc;
use toml::Spanned;

#[derive(Deserialize)]
#[serde(deny_unknown_fields)]
struct RawConfig {
    search: RawSearch,
    oxides: BTreeMap<Spanned<String>, Spanned<[f64; 2]>>,
    #[serde(default)]
    constraint: Vec<RawConstraint>,
    equipment: RawEquipment,
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
}

#[derive(Deserialize)]
#[serde(deny_unknown_fields)]
struct RawSearch {
    seed: u64,
    first_pass_points: Spanned<usize>,
    #[serde(default = "default_refine_from")]
    refine_from: usize,
    #[serde(default = "default_refine_iterations")]
    refine_iterations: u64,
    #[serde(default)]
    threads: Option<usize>,
    #[serde(default = "default_chunk")]
    chunk_size: Spanned<usize>,
    #[serde(default)]
    allow_extrapolation: bool,
}

fn default_refine_from() -> usize {
    6
}
fn default_refine_iterations() -> u64 {
    60
}
fn default_chunk() -> Spanned<usize> {
    Spanned::new(0..0, 256)
}

#[derive(Deserialize)]
#[serde(deny_unknown_fields)]
struct RawConstraint {
    expr: Spanned<String>,
    min: Option<f64>,
    max: Option<f64>,
}

#[derive(Deserialize)]
#[serde(deny_unknown_fields)]
struct RawEquipment {
    #[serde(default)]
    name: Option<String>,
    cooling_rate: Spanned<f64>,
    #[serde(default = "default_unit")]
    unit: RateUnit,
    #[serde(default = "one")]
    safety_factor: Spanned<f64>,
}

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
}

/// How far below the furnace maximum the melting temperature must stay when
/// the config does not say, °C (common practice: a furnace is not run at its
/// rated maximum, and the 10 Pa·s point is only where fining starts).
pub const DEFAULT_MELTING_MARGIN_C: f64 = 20.0;

#[derive(Deserialize)]
#[serde(deny_unknown_fields)]
struct RawCost {
    max_per_kg_glass: Spanned<f64>,
    #[serde(default)]
    raw_materials: Option<String>,
    #[serde(default)]
    tolerance_wt_pct: Option<f64>,
}

#[derive(Deserialize)]
#[serde(deny_unknown_fields)]
struct RawProperties {
    glass_transition_c: Option<Spanned<[f64; 2]>>,
    working_range_k: Option<Spanned<[f64; 2]>>,
}

#[derive(Deserialize)]
#[serde(deny_unknown_fields)]
struct RawObjective {
    kind: ObjectiveKind,
    #[serde(default)]
    weights: Option<RawWeights>,
    #[serde(default)]
    margin_cap_decades: Option<Spanned<f64>>,
}

#[derive(Deserialize, Clone, Copy)]
#[serde(deny_unknown_fields)]
struct RawWeights {
    #[serde(default)]
    margin: f64,
    #[serde(default)]
    cost: f64,
    #[serde(default)]
    melting_temperature: f64,
}

#[derive(Deserialize)]
#[serde(deny_unknown_fields)]
struct RawShortlist {
    #[serde(default = "default_size")]
    size: usize,
    #[serde(default = "default_distance")]
    min_distance_mol_pct: f64,
}

fn default_size() -> usize {
    8
}
fn default_distance() -> f64 {
    2.0
}

#[derive(Deserialize)]
#[serde(deny_unknown_fields)]
struct RawModels {
    set: Option<String>,
    viscosity: Option<String>,
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
            e.message().trim().replace('\n', " "),
        )],
        hint: Some(hint.into()),
    })?;
    let mut problems: Vec<Problem> = Vec::new();
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

    let n = *raw.search.first_pass_points.get_ref();
    if n == 0 || n > 50_000_000 {
        push(
            raw.search.first_pass_points.span(),
            format!("first_pass_points must be between 1 and 50000000, got {n}"),
        );
    }
    let chunk = *raw.search.chunk_size.get_ref();
    if chunk == 0 {
        push(
            raw.search.chunk_size.span(),
            "chunk_size must be at least 1".into(),
        );
    }
    let mut oxides = Vec::new();
    for (k, v) in &raw.oxides {
        match k.get_ref().parse::<Oxide>() {
            Ok(o) => {
                let [lo, hi] = *v.get_ref();
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
        match parse_linear(c.expr.get_ref()) {
            Ok(w) => {
                if c.min.is_none() && c.max.is_none() {
                    push(
                        c.expr.span(),
                        format!("constraint '{}' needs min or max", c.expr.get_ref()),
                    );
                }
                constraints.push(LinearConstraint {
                    text: c.expr.get_ref().clone(),
                    weights: w,
                    min: c.min,
                    max: c.max,
                });
            }
            Err(m) => push(c.expr.span(), m.to_string()),
        }
    }
    let rate = *raw.equipment.cooling_rate.get_ref();
    if !(rate.is_finite() && rate > 0.0) {
        push(
            raw.equipment.cooling_rate.span(),
            format!(
                "cooling_rate must be positive, got {rate} {}",
                raw.equipment.unit.symbol()
            ),
        );
    }
    let safety = *raw.equipment.safety_factor.get_ref();
    if !(safety.is_finite() && safety >= 1.0) {
        push(
            raw.equipment.safety_factor.span(),
            format!("safety_factor must be at least 1, got {safety}"),
        );
    }
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
    let models = match raw.models.as_ref().and_then(|m| m.set.as_deref()) {
        None | Some("demo-soda-lime") => load_model_set(None),
        Some(p) => load_model_set(Some(&dir.join(p))),
    };
    let viscosity = raw
        .models
        .as_ref()
        .and_then(|m| m.viscosity.as_deref())
        .map(|v| {
            if v == "grd2008" || v == "demo-soda-lime" {
                load_viscosity_model(Path::new(v))
            } else {
                load_viscosity_model(&dir.join(v))
            }
        });
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
            let shelf_path = c
                .raw_materials
                .as_ref()
                .filter(|s| s.as_str() != "demo")
                .map(|p| dir.join(p));
            let label = shelf_path
                .as_ref()
                .map(|p| p.display().to_string())
                .unwrap_or_else(|| DEMO_SHELF_LABEL.into());
            let raws = read_raw_materials(shelf_path.as_deref())?;
            let mut settings = BatchSettings::default();
            if let Some(t) = c.tolerance_wt_pct {
                settings.tolerance_wt_pct = t;
            }
            Some((Arc::new(CostModel { raws, settings }), max, label))
        }
    };
    let (objective, weights) = match &raw.objective {
        None => (ObjectiveKind::Margin, Weights::default()),
        Some(o) => {
            let w = o.weights.unwrap_or(RawWeights {
                margin: 1.0,
                cost: 0.0,
                melting_temperature: 0.0,
            });
            (
                o.kind,
                Weights {
                    margin: w.margin,
                    cost: w.cost,
                    melting_temperature: w.melting_temperature,
                },
            )
        }
    };
    if matches!(objective, ObjectiveKind::Cost) && cost.is_none() {
        push(
            0..0,
            "objective kind = \"cost\" needs a [cost] table with the raw materials".into(),
        );
    }
    let tg_bounds = raw
        .properties
        .as_ref()
        .and_then(|p| p.glass_transition_c.as_ref())
        .map(|b| {
            let [lo, hi] = *b.get_ref();
            (Celsius(lo).to_kelvin(), Celsius(hi).to_kelvin())
        });
    let wr = raw
        .properties
        .as_ref()
        .and_then(|p| p.working_range_k.as_ref())
        .map(|b| {
            let [lo, hi] = *b.get_ref();
            (lo, hi)
        });
    let kin_table = raw.kinetics.unwrap_or_default();
    let kin = kin_table.overrides().apply(KineticOptions::default());
    if let Some((_, span)) = kin_table.nuclei_range() {
        push(
            span,
            "[kinetics]: a range of heterogeneous_nuclei_per_m3 is read by `eval --uncertainty` only; give one number here".into(),
        );
    }
    if let Err(e) = kin.validate() {
        let span = match &e {
            crate::kinetics::KineticsError::Value(v) => kin_table.span_of(v.name()),
            _ => None,
        };
        push(span.unwrap_or(0..0), format!("[kinetics]: {e}"));
    }
    let shortlist = raw.shortlist.unwrap_or(RawShortlist {
        size: default_size(),
        min_distance_mol_pct: default_distance(),
    });
    if shortlist.size == 0 {
        push(0..0, "[shortlist] size must be at least 1".into());
    }
    if !problems.is_empty() {
        return Err(src_error(&src, problems, hint).into());
    }
    let mut models = models?;
    if let Some(v) = viscosity {
        models = models.with_viscosity(v?);
    }
    // An oxide the models were not made for cannot be screened unless the user
    // allows extrapolation: its effect would be silently zero.
    if !raw.search.allow_extrapolation {
        for (k, v) in &raw.oxides {
            let Ok(o) = k.get_ref().parse::<Oxide>() else {
                continue;
            };
            if v.get_ref()[1] <= 0.0 {
                continue;
            }
            let mut missing = Vec::new();
            if models.viscosity.domain.max[o.index()] <= 0.0 {
                missing.push(format!("the viscosity model '{}'", models.viscosity.name));
            }
            if models.phases.iter().all(|p| p.domain.max[o.index()] <= 0.0) {
                missing.push("every liquidus surface".to_string());
            }
            if !missing.is_empty() {
                problems.push(src.problem(
                    k.span(),
                    format!(
                        "{o} may reach {} mol% here, but {} was not made for {o} (its validity domain leaves {o} out), so its effect would count as zero; narrow {o} to [0, 0], use a model set that covers it, or set allow_extrapolation = true under [search]",
                        v.get_ref()[1],
                        missing.join(" and ")
                    ),
                ));
            }
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
            equipment: Equipment {
                name: raw
                    .equipment
                    .name
                    .unwrap_or_else(|| "quench equipment".into()),
                rate: raw.equipment.unit.to_si(rate),
                safety_factor: safety,
            },
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
            shortlist_size: shortlist.size,
            min_distance_mol_pct: shortlist.min_distance_mol_pct,
        },
        search: Search {
            seed: raw.search.seed,
            first_pass_points: n,
            chunk_size: chunk,
            refine_from: raw.search.refine_from,
            refine_iterations: raw.search.refine_iterations,
        },
        batch_model,
        threads: raw.search.threads,
        config_path: path.to_path_buf(),
        base_dir,
        config_text: text.clone(),
        config_hash,
    })
}

fn src_error(src: &Source, problems: Vec<Problem>, hint: &str) -> DataError {
    DataError::Invalid {
        path: src.path.clone(),
        problems,
        hint: Some(hint.into()),
    }
}
