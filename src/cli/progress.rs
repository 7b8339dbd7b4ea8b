//! A progress line with an estimate of the time left, for commands that run many independent jobs (strategies,
//! start times, sweep cases), or with a state of the caller's own words and the time so far, for work whose length
//! is not known ahead (a fit's iterations). Printed on stderr only when stderr is a terminal, at most every 5 %, so
//! logs stay clean; safe to tick from worker threads.
use std::io::IsTerminal;
use std::sync::atomic::{AtomicBool, AtomicUsize, Ordering};
use std::time::Instant;

/// Counts finished jobs and shows how many are left and about how long they will take.
pub struct Progress {
    label: String,
    total: usize,
    done: AtomicUsize,
    shown_pct: AtomicUsize,
    started: Instant,
    enabled: bool,
    noted: AtomicBool,
}

impl Progress {
    /// A progress line for `total` jobs, shown only on a terminal.
    pub fn new(label: impl Into<String>, total: usize) -> Self {
        Progress {
            label: label.into(),
            total,
            done: AtomicUsize::new(0),
            shown_pct: AtomicUsize::new(0),
            started: Instant::now(),
            enabled: std::io::stderr().is_terminal(),
            noted: AtomicBool::new(false),
        }
    }

    /// One more job finished.
    pub fn tick(&self) {
        let done = self.done.fetch_add(1, Ordering::Relaxed) + 1;
        self.show(done, self.total);
    }

    /// `done` of `total` jobs finished (for callers that count themselves).
    pub fn show(&self, done: usize, total: usize) {
        let pct = done * 100 / total.max(1) / 5 * 5;
        if !self.enabled || self.shown_pct.fetch_max(pct, Ordering::Relaxed) >= pct {
            return;
        }
        let elapsed = self.started.elapsed().as_secs_f64();
        let left = elapsed / done.max(1) as f64 * (total - done.min(total)) as f64;
        eprint!(
            "\r{}: {pct:3} % ({done}/{total}), about {left:.0} s left   ",
            self.label
        );
        if done >= total {
            eprintln!();
        }
    }

    /// Show `state` (the caller's words, e.g. "iteration 2 of at most 30") and the seconds since the start,
    /// overwriting the last state; [`Progress::end`] closes the line.
    pub fn note(&self, state: &str) {
        if !self.enabled {
            return;
        }
        self.noted.store(true, Ordering::Relaxed);
        let elapsed = self.started.elapsed().as_secs_f64();
        eprint!("\r{}: {state}, {elapsed:.0} s   ", self.label);
    }

    /// After [`Progress::note`]: end the line, so that what follows (the results, or an error) starts on its own.
    pub fn end(&self) {
        if self.noted.swap(false, Ordering::Relaxed) {
            eprintln!();
        }
    }
}
