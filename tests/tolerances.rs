//! Named tolerances shared by the tests, with the reason for each value.
//!
//! Keeping them in one place (as statrs keeps `prec.rs`) makes it visible when a
//! check is loosened.

// Each user (unit tests, integration tests) reads only some of them.
#![allow(dead_code)]

/// Reference molar masses are printed to 4 decimals of ~100 g/mol.
pub const MOLAR_MASS_RTOL: f64 = 1e-6;

/// The accuracy target for the critical cooling rate (docs/science.md, "Continuous cooling"): 0.1 % relative.
pub const CRITICAL_RATE_RTOL: f64 = 1e-3;

/// Agreement between the fast quadrature and the dense oracle in the tests:
/// a quarter of the accuracy target, so the target is met with room to spare.
pub const ORACLE_RTOL: f64 = 2.5e-4;

/// Values quoted to 5–6 significant figures (regression values).
pub const PRINTED_5SF_RTOL: f64 = 1e-4;
