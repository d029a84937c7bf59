//! quenchwise: predict whether oxide melts vitrify with the quench at hand.
//!
//! The modules read in the order the data flows; each imports only the ones
//! above it in this list (a test in `tests/layers.rs` keeps it so):
//!
//! - [`units`], [`error`], [`numeric`]: SI newtypes and constants, the one
//!   error type, scalar solvers and least squares;
//! - [`composition`]: oxides, IUPAC 2021 masses, mol% ↔ wt%;
//! - [`properties`]: mixture models, viscosity, liquidus surfaces, model sets;
//! - [`kinetics`]: nucleation, growth, TTT, critical cooling rate;
//! - [`assess`]: the whole chain for one candidate;
//! - [`uncertainty`]: Monte Carlo of the inputs the models do not know
//!   exactly into a band of R_c and the probability of a glass;
//! - [`batch`]: raw materials and the least-cost batch;
//! - [`screen`]: the search under the user's limits;
//! - [`report`]: text, table columns, pictures, the HTML report;
//! - [`files`]: every file format and the screen's output folder.
//!
//! Everything up to [`report`] is free of I/O. The command line (`cli`) and
//! one handler per command (`app`) live in the binary.

pub mod assess;
pub mod batch;
pub mod composition;
pub mod error;
pub mod files;
pub mod kinetics;
pub mod numeric;
pub mod properties;
pub mod report;
pub mod screen;
pub mod uncertainty;
pub mod units;

/// The tests' named tolerances, one file shared with the integration tests.
#[cfg(test)]
#[path = "../tests/tolerances.rs"]
mod tolerances;
