//! Progress of a long run, one definition for every command: a bar on a
//! terminal, or a line every 30 s when the output goes to a file (an
//! overnight run's log).

use std::io::IsTerminal;
use std::sync::atomic::{AtomicUsize, Ordering};
use std::sync::Mutex;
use std::time::Instant;

/// Progress of `total` units of work (rows, chunks); safe to update from
/// worker threads.
pub struct Progress {
    bar: Option<indicatif::ProgressBar>,
    label: &'static str,
    unit: &'static str,
    total: usize,
    done: AtomicUsize,
    lines: bool,
    last_line: Mutex<Instant>,
    start: Instant,
}

impl Progress {
    /// A bar on a terminal; elsewhere, periodic lines if `lines` is set,
    /// otherwise nothing.
    pub fn new(
        label: &'static str,
        unit: &'static str,
        total: usize,
        done: usize,
        lines: bool,
    ) -> Self {
        let bar = std::io::stderr().is_terminal().then(|| {
            let b = indicatif::ProgressBar::new(total as u64);
            let template =
                format!("{label} {{bar:40}} {{pos}}/{{len}} {unit}  {{per_sec}}  eta {{eta}}");
            b.set_style(
                indicatif::ProgressStyle::with_template(template.trim_start())
                    .unwrap_or_else(|_| indicatif::ProgressStyle::default_bar()),
            );
            b.set_position(done as u64);
            b
        });
        Progress {
            bar,
            label,
            unit,
            total,
            done: AtomicUsize::new(done),
            lines,
            last_line: Mutex::new(Instant::now()),
            start: Instant::now(),
        }
    }

    /// `done` units are finished.
    pub fn set(&self, done: usize) {
        self.done.store(done, Ordering::Relaxed);
        if let Some(b) = &self.bar {
            b.set_position(done as u64);
            return;
        }
        if !self.lines {
            return;
        }
        let Ok(mut last) = self.last_line.lock() else {
            return;
        };
        if last.elapsed().as_secs() >= 30 || done == self.total {
            *last = Instant::now();
            errln!(
                "quenchwise {}: {done}/{} {} done, {:.0} s elapsed",
                self.label,
                self.total,
                self.unit,
                self.start.elapsed().as_secs_f64()
            );
        }
    }

    /// One more unit is finished.
    pub fn inc(&self) {
        let done = self.done.fetch_add(1, Ordering::Relaxed) + 1;
        self.set(done);
    }

    /// Remove the bar.
    pub fn finish(&self) {
        if let Some(b) = &self.bar {
            b.finish_and_clear();
        }
    }
}
