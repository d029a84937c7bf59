//! Integration tests, built into one binary so polars links once.

mod oracle;
mod tolerances;
mod util;

mod batch_sheets;
mod borosilicate;
mod cli_batch;
mod cli_errors;
mod cli_eval;
mod cli_fit;
mod demo_models;
mod eval_against;
mod fault_injection;
mod fit;
mod giordano2008;
mod hostile;
mod issue14;
mod kinetics_reference;
mod lab_outputs;
mod lab_ready;
mod layers;
mod main_job;
mod melt_card_units;
mod model_files;
mod oxides;
mod plots;
mod proptests;
mod quench_options;
mod report_browser;
mod run_folder;
mod screen;
mod screen_probability;
mod slurm;
mod tables;
mod terminal;
mod uncertainty;
