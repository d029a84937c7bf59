//! quenchwise: predict whether oxide melts vitrify with the quench at hand.
//!
//! Numeric core, free of I/O: [`units`], [`composition`], [`quadrature`],
//! [`kinetics`], [`models`] and [`evaluate`]. Around it: [`data`] (model
//! files, melt cards, recipes), [`table`] (CSV/Parquet through polars),
//! [`report`] (text) and [`cli`].

pub mod batch;
pub mod cli;
pub mod composition;
pub mod config;
pub mod data;
pub mod evaluate;
pub mod kinetics;
pub mod models;
pub mod plot;
pub mod quadrature;
pub mod report;
pub mod report_html;
pub mod screen;
pub mod screen_run;
pub mod table;
pub mod tolerances;
pub mod units;
