//! One handler per command: from parsed options to the library and back to
//! the terminal. The only home of the Ctrl-C handler, the progress bar and
//! the global thread pool. Handlers return an [`Outcome`]; only `main` exits.

mod batch;
mod eval;
mod fit;
mod input;
mod models;
mod progress;
mod screen;
mod uncertainty;

use crate::cli::{Cli, Command};
use quenchwise::error::Error;

/// How a command ended, for the exit code.
#[derive(Debug, Clone, PartialEq, Eq)]
pub enum Outcome {
    /// Done (exit 0).
    Finished,
    /// Stopped by Ctrl-C or SIGTERM with the work saved (exit 130).
    Interrupted,
    /// A screen in which no recipe meets every limit (exit 2).
    NothingFeasible,
}

/// Run a parsed command line.
///
/// # Errors
/// Bad input (exit 2) or a failure of the program (exit 1).
pub fn run(cli: Cli) -> Result<Outcome, Error> {
    match cli.command {
        Command::Eval(a) => eval::eval(a),
        Command::Models(a) => models::models(a),
        Command::Fit(a) => fit::fit(a),
        Command::Batch(a) => batch::batch(a),
        Command::Screen(a) => screen::screen(a),
        Command::Check(a) => screen::check(a),
        Command::Report(a) => screen::report(a),
        Command::Merge(a) => screen::merge(a),
    }
}

/// `--threads` checked.
fn threads(n: Option<usize>) -> Result<Option<usize>, Error> {
    match n {
        Some(0) => Err(Error::bad_input("--threads must be at least 1")),
        other => Ok(other),
    }
}
