//! quenchwise binary: parse the command line, run the command, print an
//! error (with its hint) once, and turn the outcome into the exit code:
//! 0 finished, 1 internal error, 2 bad input or nothing feasible, 130 stopped.

mod app;
mod cli;

use quenchwise::error::ErrorKind;
use std::process::ExitCode;

fn main() -> ExitCode {
    let cli = cli::Cli::parse_args();
    // The safety caution: once per run, on stderr, unless --quiet.
    let caution = !cli.quiet && cli.command.leads_to_a_melt();
    let outcome = app::run(cli);
    if caution && outcome.is_ok() {
        eprintln!("{}", quenchwise::report::CAUTION);
    }
    match outcome {
        Ok(app::Outcome::Finished) => ExitCode::SUCCESS,
        Ok(app::Outcome::Interrupted) => ExitCode::from(130),
        Ok(app::Outcome::NothingFeasible) => ExitCode::from(2),
        Err(err) => {
            eprintln!("quenchwise: {err}");
            if let Some(h) = err.hint() {
                eprintln!("hint: {h}");
            }
            match err.kind() {
                ErrorKind::BadInput => ExitCode::from(2),
                ErrorKind::Internal => ExitCode::from(1),
            }
        }
    }
}
