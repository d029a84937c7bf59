//! Every file format: model sets, melt cards, recipes, raw materials, tables
//! (CSV and Parquet), screen configs, and a screen's output folder with its
//! checkpoints. Each reader turns a file into the core's validated types and
//! names the file, the line and what was expected when it cannot.

pub(crate) mod checkpoint;
pub mod fit_data;
pub mod melt_card;
pub mod model_set;
pub mod model_writer;
pub mod raw_materials;
pub mod recipe;
pub mod results;
pub mod run_folder;
pub mod screen_config;
pub mod source;
pub mod table;
pub mod table_stream;
