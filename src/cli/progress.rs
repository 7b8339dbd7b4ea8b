//! A progress line with an estimate of the time left, for commands that run many independent jobs (strategies,
//! start times, sweep cases). Printed on stderr only when stderr is a terminal, at most every 5 %, so logs stay
//! clean; safe to tick from worker threads.
use std::io::IsTerminal;
use std::sync::atomic::{AtomicUsize, Ordering};
use std::time::Instant;

/// Counts finished jobs and shows how many are left and about how long they will take.
pub struct Progress {
    label: String,
    total: usize,
    done: AtomicUsize,
    shown_pct: AtomicUsize,
    started: Instant,
    enabled: bool,
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
}
