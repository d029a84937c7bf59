//! One handler per command: from parsed options to the library and back to
//! the terminal. The only home of the Ctrl-C handler, the progress bar and
//! the global thread pool. Handlers return an [`Outcome`]; only `main` exits.

mod against;
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
use quenchwise::files::screen_config::{max_threads, THREADS_PER_CORE};
use std::sync::atomic::{AtomicBool, Ordering};
use std::sync::{Arc, OnceLock};

/// The flag Ctrl-C and SIGTERM raise (one handler per process), lowered:
/// call it once per command, before the work it may stop. The command
/// stops at its next safe point; a second signal before that ends the
/// process at once (exit 130), as Ctrl-C would without the handler.
fn lowered_stop_flag() -> &'static Arc<AtomicBool> {
    static FLAG: OnceLock<Arc<AtomicBool>> = OnceLock::new();
    let flag = FLAG.get_or_init(|| {
        let flag = Arc::new(AtomicBool::new(false));
        let f = flag.clone();
        // If a handler cannot be installed the command still works; it just
        // cannot be stopped gracefully.
        let _ = ctrlc::set_handler(move || {
            if f.swap(true, Ordering::SeqCst) {
                eprintln!("\nquenchwise: stopped at once (a second Ctrl-C or SIGTERM)");
                std::process::exit(130);
            }
        });
        flag
    });
    flag.store(false, Ordering::SeqCst);
    flag
}

/// How a command ended, for the exit code.
#[derive(Debug, Clone, PartialEq, Eq)]
pub enum Outcome {
    /// Done (exit 0).
    Finished,
    /// Stopped by Ctrl-C or SIGTERM: a screen with the work saved, a table
    /// with nothing written (exit 130).
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

/// The cores this machine offers (1 when it cannot tell).
fn cores() -> usize {
    std::thread::available_parallelism()
        .map(|n| n.get())
        .unwrap_or(1)
}

/// `--threads` checked: at least 1, and capped at [`THREADS_PER_CORE`] × the
/// cores, with a message when capped.
fn threads(n: Option<usize>) -> Result<Option<usize>, Error> {
    match n {
        Some(0) => Err(Error::bad_input("--threads must be at least 1")),
        Some(t) => {
            let cores = cores();
            let cap = max_threads();
            if t > cap {
                errln!(
                    "quenchwise: --threads {t} capped at {cap} ({THREADS_PER_CORE} × the {cores} cores of this machine)"
                );
                Ok(Some(cap))
            } else {
                Ok(Some(t))
            }
        }
        None => Ok(None),
    }
}

/// A numeric option checked against its range, both ends included unless
/// `open_low` (then the low end is excluded).
///
/// # Errors
/// NaN, an infinity, or a value outside the range, naming the option, the
/// range and the value.
fn in_range(
    option: &str,
    value: f64,
    range: (f64, f64),
    open_low: bool,
    unit: &str,
) -> Result<f64, Error> {
    let (lo, hi) = range;
    let ok = value.is_finite() && value <= hi && if open_low { value > lo } else { value >= lo };
    if ok {
        return Ok(value);
    }
    let unit = if unit.is_empty() {
        String::new()
    } else {
        format!(" {unit}")
    };
    let bracket = if open_low { "(" } else { "[" };
    let hi_text = if hi == f64::INFINITY {
        "inf)".to_string()
    } else {
        format!("{hi}]")
    };
    Err(Error::bad_input(format!(
        "{option} must lie in {bracket}{lo}, {hi_text}{unit}, got {value}{unit}"
    )))
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn ranges_refuse_nan_negative_and_outside() {
        assert_eq!(in_range("--x", 1.0, (0.0, 10.0), false, "K").unwrap(), 1.0);
        let e = in_range("--x", f64::NAN, (0.0, 10.0), false, "K").unwrap_err();
        assert_eq!(e.to_string(), "--x must lie in [0, 10] K, got NaN K");
        assert!(in_range("--x", -1.0, (0.0, 10.0), false, "").is_err());
        assert!(in_range("--x", 0.0, (0.0, 10.0), true, "").is_err());
        assert!(in_range("--x", f64::INFINITY, (0.0, f64::INFINITY), false, "").is_err());
        assert_eq!(threads(Some(1)).unwrap(), Some(1));
        assert!(threads(Some(0)).is_err());
        assert_eq!(threads(Some(usize::MAX)).unwrap(), Some(max_threads()));
    }
}
