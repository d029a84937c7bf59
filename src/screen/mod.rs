//! The screen: search the bounded composition simplex for recipes that vitrify
//! with the user's quench, melt in their furnace and fit their budget.
//!
//! Two passes, both deterministic and addressable by index so a run can be
//! split into chunks (for checkpoints now, for a cluster's job array later):
//! 1. a space-filling pass: Sobol points (Joe & Kuo direction numbers) mapped
//!    into the feasible composition polytope (oxide limits, the balance oxide
//!    closing the sum to 100 mol%, linear constraints) by a triangular map
//!    built from Fourier–Motzkin projections ([`polytope`]): no point is
//!    spent on composition limits;
//! 2. local refinement from the best distinct seeds by sequential quadratic
//!    programming with finite-difference gradients ([`sqp`]): the polytope
//!    rows exact, the user's nonlinear limits as inequality constraints.
//!
//! Then a shortlist of distinct feasible recipes ranked by the objective.
//! No I/O here: [`run`] takes a store for checkpoints and an observer for
//! progress; `files::run_folder` keeps them on disk and writes the outputs.
//!
//! References
//! - I. M. Sobol', USSR Comput. Math. Math. Phys. 7 (1967) 86–112,
//!   doi:10.1016/0041-5553(67)90144-9; S. Joe, F. Y. Kuo, SIAM J. Sci. Comput.
//!   30 (2008) 2635–2654, doi:10.1137/070709359.
//! - M. J. D. Powell, Lecture Notes in Math. 630 (1978) 144–157,
//!   doi:10.1007/BFb0067703 (SQP with the damped BFGS update).

pub mod candidate;
pub mod check;
pub mod first_pass;
pub mod limits;
pub mod polytope;
pub mod probability;
pub mod problem;
pub(crate) mod qp;
pub mod refine;
pub mod run;
pub(crate) mod select;
pub mod simplex;
pub mod snap;
pub mod sqp;

pub use candidate::{
    evaluate_candidate, evaluate_candidate_with, Candidate, Gauge, Pass, Row, BINDING_GAUGE_TOL,
};
pub use first_pass::{chunk_count, sobol_points, space_filling_chunk, space_filling_rows};
pub use limits::{Limit, LimitSet, LimitSummary};
pub use polytope::Polytope;
pub use problem::{
    CostLimit, Equipment, EquipmentVerdict, LinearConstraint, ObjectiveKind, ScreenProblem,
    ScreenUncertainty, Search, Snapping, Weights, DEFAULT_MARGIN_CAP_DECADES,
};
pub use refine::{refine, RefineError, ScreenModel};
pub use run::{
    run, run_chunks, ScreenEnd, ScreenObserver, ScreenStore, Shortlisted, Stage, Unobserved,
};
pub use simplex::{composition_violation, dist2, Simplex};
