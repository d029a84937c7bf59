//! Integration tests, built into one binary so polars links once.

mod oracle;
mod tolerances;
mod util;

mod cli_batch;
mod cli_errors;
mod cli_eval;
mod cli_fit;
mod demo_models;
mod fit;
mod grd2008;
mod kinetics_reference;
mod layers;
mod plots;
mod report_browser;
mod screen;
