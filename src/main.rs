//! quenchwise binary: parse the command line, run the command, print an
//! error (with its hint) once, and turn the outcome into the exit code:
//! 0 finished, 1 internal error, 2 bad input or nothing feasible, 130 stopped.

// The terminal writers of the binary. Unlike println! and eprintln! they do
// not panic when the other end of a pipe has gone (`quenchwise check c.toml |
// head -1`): the reader no longer wants the text, so it is dropped.
macro_rules! outln {
    ($($t:tt)*) => {{
        use std::io::Write as _;
        let _ = writeln!(std::io::stdout(), $($t)*);
    }};
}
macro_rules! out {
    ($($t:tt)*) => {{
        use std::io::Write as _;
        let _ = write!(std::io::stdout(), $($t)*);
    }};
}
macro_rules! errln {
    ($($t:tt)*) => {{
        use std::io::Write as _;
        let _ = writeln!(std::io::stderr(), $($t)*);
    }};
}
macro_rules! errout {
    ($($t:tt)*) => {{
        use std::io::Write as _;
        let _ = write!(std::io::stderr(), $($t)*);
    }};
}

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
        errln!("{}", quenchwise::report::CAUTION);
    }
    match outcome {
        Ok(app::Outcome::Finished) => ExitCode::SUCCESS,
        Ok(app::Outcome::Interrupted) => ExitCode::from(130),
        Ok(app::Outcome::NothingFeasible) => ExitCode::from(2),
        Err(err) => {
            errln!("quenchwise: {err}");
            if let Some(h) = err.hint() {
                errln!("hint: {h}");
            }
            match err.kind() {
                ErrorKind::BadInput => ExitCode::from(2),
                ErrorKind::Internal => ExitCode::from(1),
            }
        }
    }
}
