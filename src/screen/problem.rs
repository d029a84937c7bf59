//! What a screen solves, built in code: the oxides that vary and their
//! limits, the user's equipment, furnace, budget and property bounds, the
//! objective and the shape of the shortlist ([`ScreenProblem`]); and how the
//! search looks for it ([`Search`]). A screen config file is one way to build
//! both (see `files::screen_config`); tests build them directly.

use crate::assess::GlassCost;
use crate::composition::{Oxide, N_OXIDES};
use crate::kinetics::KineticOptions;
use crate::properties::ModelSet;
use crate::units::{Kelvin, KelvinPerSecond};
use std::sync::Arc;

/// A linear constraint on mol%: min ≤ Σ w_i x_i ≤ max.
#[derive(Debug, Clone, PartialEq)]
pub struct LinearConstraint {
    /// The expression as the user wrote it, e.g. "Na2O + K2O".
    pub text: String,
    pub weights: [f64; N_OXIDES],
    pub min: Option<f64>,
    pub max: Option<f64>,
}

/// Margins above this count as this, decades (the default cap).
pub const DEFAULT_MARGIN_CAP_DECADES: f64 = 3.0;

/// Objective weights for the blend (per decade of margin, per cost unit, per 100 K).
#[derive(Debug, Clone, Copy, PartialEq, serde::Serialize)]
pub struct Weights {
    pub margin: f64,
    pub cost: f64,
    pub melting_temperature: f64,
}

impl Default for Weights {
    fn default() -> Self {
        Weights {
            margin: 1.0,
            cost: 0.0,
            melting_temperature: 0.0,
        }
    }
}

/// What the screen ranks by.
#[derive(serde::Deserialize, Clone, Copy, PartialEq, Eq, Debug, serde::Serialize)]
#[serde(rename_all = "snake_case")]
pub enum ObjectiveKind {
    /// Largest margin log10(R_equipment / R_c).
    Margin,
    /// Least cost per kg of glass.
    Cost,
    /// Lowest melting temperature (η = 10 Pa·s).
    MeltingTemperature,
    /// Weighted blend of the three.
    Blend,
    /// Highest probability of a glass at the equipment rate, P(R_c ≤ R),
    /// from Monte Carlo draws of the models' uncertain inputs (needs
    /// [`ScreenUncertainty`]).
    Probability,
}

/// The quench the recipes must survive.
#[derive(Debug, Clone, PartialEq)]
pub struct Equipment {
    pub name: String,
    /// The cooling rate the equipment delivers.
    pub rate: KelvinPerSecond,
    /// R_c must be at most rate / safety factor.
    pub safety_factor: f64,
}

impl Equipment {
    /// The verdict of this quench on a glass with critical rate `critical_rate`
    /// (K/s): glassy when R_c ≤ rate / safety factor; the margin is
    /// log10(rate / R_c), decades (as the screen's `margin_decades`).
    /// None when the critical rate is not a positive number.
    pub fn verdict(&self, critical_rate: f64) -> Option<EquipmentVerdict> {
        if !(critical_rate.is_finite() && critical_rate > 0.0) {
            return None;
        }
        Some(EquipmentVerdict {
            glassy: critical_rate <= self.rate.0 / self.safety_factor,
            margin_decades: (self.rate.0 / critical_rate).log10(),
        })
    }
}

/// Whether one quench option makes a glass of a recipe, and by how much.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct EquipmentVerdict {
    /// R_c ≤ rate / safety factor.
    pub glassy: bool,
    /// log10(rate / R_c), decades (negative: the quench is too slow).
    pub margin_decades: f64,
}

/// The Monte Carlo stage of a screen (docs/science.md, "Uncertainty in the
/// screen"): how many draws of the model set's uncertain inputs, from which
/// seed, and the least probability of a glass a recipe must reach.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct ScreenUncertainty {
    /// Latin hypercube draws per recipe drawn.
    pub draws: usize,
    /// Seed of the draws (the same draws serve every recipe).
    pub seed: u64,
    /// With a value, a recipe needs P(glassy at the equipment rate) ≥ this,
    /// and the probability replaces the safety factor as the limit on R_c.
    pub min_probability: Option<f64>,
    /// log-uniform range of the pre-existing nuclei per m³ (the point
    /// estimate uses its geometric mean).
    pub nuclei_range_per_m3: Option<(f64, f64)>,
    /// Which recipes are drawn (a config always bounds; tests compare with
    /// drawing every one).
    pub preselection: super::probability::Preselection,
}

/// A cost ceiling and the model that prices a glass.
#[derive(Debug, Clone)]
pub struct CostLimit {
    pub model: Arc<dyn GlassCost>,
    /// Largest cost per kg of glass, in the currency of the price list.
    pub max_per_kg: f64,
    /// Where the prices come from (shown in outputs).
    pub label: String,
}

/// The question a screen answers.
#[derive(Debug, Clone)]
pub struct ScreenProblem {
    /// The oxides that vary, with [min, max] mol%, in [`Oxide::ALL`] order.
    pub oxides: Vec<(Oxide, f64, f64)>,
    pub constraints: Vec<LinearConstraint>,
    /// The quench that decides feasibility and ranking (the `[[equipment]]`
    /// marked `decides = true`, else the first listed).
    pub equipment: Equipment,
    /// Further quench options of the config, in the order listed: each is
    /// reported (a verdict per recipe, a line per plot) but decides nothing.
    pub more_equipment: Vec<Equipment>,
    /// The furnace's maximum temperature.
    pub furnace_max: Kelvin,
    /// The melting temperature (10 Pa·s) must stay below this (furnace maximum
    /// − melting margin).
    pub melting_max: Kelvin,
    /// The liquidus must stay below this (furnace maximum − margin).
    pub liquidus_max: Kelvin,
    pub cost: Option<CostLimit>,
    pub glass_transition_bounds: Option<(Kelvin, Kelvin)>,
    /// Working point minus softening point, K.
    pub working_range_bounds_k: Option<(f64, f64)>,
    pub objective: ObjectiveKind,
    pub weights: Weights,
    /// Margins above this (decades) count as this in the objectives: beyond
    /// it, extra margin is model noise.
    pub margin_cap_decades: f64,
    /// Candidates outside the models' validity domains may count as feasible.
    pub allow_extrapolation: bool,
    pub models: ModelSet,
    pub kinetic_options: KineticOptions,
    /// Recipes in the shortlist.
    pub shortlist_size: usize,
    /// No two shortlisted recipes closer than this (Euclidean, mol%).
    pub min_distance_mol_pct: f64,
    /// The Monte Carlo stage, when the config asks for one.
    pub uncertainty: Option<ScreenUncertainty>,
    /// Shortlisted recipes snapped to amounts a person can weigh
    /// ([`super::snap`]); None keeps them as the optimiser found them.
    pub snapping: Option<Snapping>,
}

/// How shortlisted recipes are snapped to amounts a person can weigh
/// (docs/science.md, "Snapping the shortlist").
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Snapping {
    /// The grid every amount but the balance oxide's lands on, mol%; 0: no
    /// grid (only the minimum applies). 100 is a whole multiple of it, so
    /// the balance oxide, which takes the rest, lands on it too.
    pub resolution_mol_pct: f64,
    /// Amounts below this become zero, mol% (0: none).
    pub min_amount_mol_pct: f64,
}

impl ScreenProblem {
    /// The largest critical rate allowed: R_equipment / safety factor.
    pub fn allowed_rate(&self) -> KelvinPerSecond {
        KelvinPerSecond(self.equipment.rate.0 / self.equipment.safety_factor)
    }

    /// Every quench option: the deciding one first, then the others as listed.
    pub fn equipment_options(&self) -> impl Iterator<Item = &Equipment> {
        std::iter::once(&self.equipment).chain(&self.more_equipment)
    }

    /// Whether the probability of a glass (not the safety factor) decides
    /// whether a recipe's critical rate is acceptable.
    pub fn probability_decides(&self) -> bool {
        self.uncertainty
            .is_some_and(|u| u.min_probability.is_some())
    }
}

/// How the search goes: these settings change which candidates are tried,
/// so they are part of what makes a result reproducible.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Search {
    /// Randomises the quasi-random first pass; same seed, same shortlist.
    pub seed: u64,
    /// Candidates in the space-filling first pass.
    pub first_pass_points: usize,
    /// Candidates per chunk (the unit of checkpoints and of cluster shards).
    pub chunk_size: usize,
    /// Best distinct seeds refined locally.
    pub refine_from: usize,
    /// SQP iterations per refinement (each costs one evaluation per free
    /// oxide for the gradients, plus the line search).
    pub refine_iterations: u64,
}
