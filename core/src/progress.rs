//! Progress and cancellation for long computations.
//!
//! Engines take an [`Observer`]: they report progress to it and ask it
//! whether to stop. The command line prints a progress line, the window draws
//! a bar and sets the cancel flag, tests record. Engines check
//! [`Observer::cancelled`] often enough to stop within a second.

use std::sync::atomic::{AtomicBool, Ordering};

/// Receives progress and answers whether to stop.
pub trait Observer: Sync {
    /// `done` of `total` units of work are finished.
    fn progress(&self, _done: usize, _total: usize) {}
    /// A line for the log (a step started, an iteration finished).
    fn message(&self, _text: &str) {}
    /// An inversion iteration finished (the live run log).
    fn iteration(&self, _record: &crate::invert::IterationRecord) {}
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
