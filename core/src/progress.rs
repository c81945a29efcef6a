//! Progress and cancellation for long computations.
//!
//! Engines take an [`Observer`]: they report progress to it and ask it
//! whether to stop. The command line prints a progress line, the window draws
//! a bar and sets the cancel flag, tests record. Engines check
//! [`Observer::cancelled`] often enough to stop within a second.

use serde::{Deserialize, Serialize};
use std::sync::atomic::{AtomicBool, Ordering};

/// Receives progress and answers whether to stop.
pub trait Observer: Sync {
    /// `done` of `total` units of work are finished.
    fn progress(&self, _done: usize, _total: usize) {}
    /// A line for the log (a step started, an iteration finished).
    fn message(&self, _text: &str) {}
    /// Something the user should look at, though the work goes on (a loop
    /// drifting fast, a gap in a base record). Shown as a log line unless
    /// the observer does more with it.
    fn warning(&self, text: &str) {
        self.message(&format!("  warning: {text}"));
    }
    /// An inversion iteration finished (the live run log).
    fn iteration(&self, _record: &IterationRecord) {}
    /// True when the work should stop as soon as possible.
    fn cancelled(&self) -> bool {
        false
    }
}

/// Reports nothing and never cancels.
pub struct Silent;
impl Observer for Silent {}

/// Cancels when its flag is set (from another thread).
#[derive(Debug, Default)]
pub struct CancelFlag(pub AtomicBool);

impl CancelFlag {
    pub fn cancel(&self) {
        self.0.store(true, Ordering::Relaxed);
    }
}

impl Observer for CancelFlag {
    fn cancelled(&self) -> bool {
        self.0.load(Ordering::Relaxed)
    }
}

/// One row of the run log.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct IterationRecord {
    pub iteration: usize,
    pub beta: f64,
    pub phi_d: f64,
    pub phi_m: f64,
    pub phi_s: f64,
    pub phi_x: f64,
    pub phi_y: f64,
    pub phi_z: f64,
    pub chi_factor: f64,
    pub cg_iterations: usize,
    pub at_lower: usize,
    pub at_upper: usize,
    pub epsilon: Option<f64>,
    pub elapsed_s: f64,
}
