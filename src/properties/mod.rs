//! Composition → properties: additive (mixture) models for viscosity and
//! liquidus, the crystal data of each phase, and model sets that bundle them.
//! No I/O: model files are read by `files`, this layer only evaluates.

pub mod crystal;
pub mod fit;
pub mod liquidus;
pub mod mixture;
pub mod model_set;
pub mod viscosity;

pub use crystal::{GrowthMode, Interface};
pub use fit::{FitRecord, KineticsFitRecord, Provenance};
pub use liquidus::{LiquidusSurface, PhaseLiquidus};
pub use mixture::{Domain, FractionBasis, MixtureModel, ProductTerm, Term};
pub use model_set::{About, ModelError, ModelSet, Phase, Properties};
pub use viscosity::{
    fixpoints, ViscosityCoefficient, ViscosityCurve, ViscosityError, ViscosityForm, ViscosityModel,
    ViscosityParam, GLASS_TRANSITION_LOG_VISCOSITY,
};
