//! What a pipeline run tells its caller, as values: a step started, was up
//! to date, warned, finished, failed or was cancelled.
//!
//! The runner reports every step through [`Events::step`]; progress,
//! messages and inversion iterations go through core's
//! [`Observer`](fieldstone_core::progress::Observer), which `Events`
//! extends. The default [`Events::step`] writes the same log line the
//! command line prints, so an observer that only prints needs nothing more;
//! the window and the tests match on the events instead of parsing text.

use crate::error::Error;
use fieldstone_core::progress::Observer;

/// One thing that happened to a step. `key` is the step's key as recorded
/// in the provenance (`import`, `inversion/<scenario>`, …).
#[derive(Debug)]
pub enum StepEvent<'a> {
    /// The step's record and outputs match: nothing to do.
    UpToDate { key: &'a str },
    /// The step began.
    Started { key: &'a str },
    /// The step warned; the work goes on.
    Warning { key: &'a str, text: &'a str },
    /// The step finished; `summary` is its one-line result.
    Done {
        key: &'a str,
        seconds: f64,
        summary: &'a str,
    },
    /// The step failed; its files were put back as they were.
    Failed { key: &'a str, error: &'a Error },
    /// The step was cancelled; its files were put back as they were.
    Cancelled { key: &'a str },
}

impl StepEvent<'_> {
    /// The step the event is about.
    pub fn key(&self) -> &str {
        match self {
            StepEvent::UpToDate { key }
            | StepEvent::Started { key }
            | StepEvent::Warning { key, .. }
            | StepEvent::Done { key, .. }
            | StepEvent::Failed { key, .. }
            | StepEvent::Cancelled { key } => key,
        }
    }

    /// The log line of the event.
    pub fn line(&self) -> String {
        match self {
            StepEvent::UpToDate { key } => format!("{key:<34} up to date"),
            StepEvent::Started { key } => format!("{key:<34} running"),
            StepEvent::Warning { text, .. } => format!("  warning: {text}"),
            StepEvent::Done {
                key,
                seconds,
                summary,
            } => format!("{key:<34} done in {seconds:.1} s: {summary}"),
            StepEvent::Failed { key, error } => format!("{key:<34} failed: {error}"),
            StepEvent::Cancelled { key } => format!("{key:<34} cancelled"),
        }
    }
}

/// An observer that also hears about steps.
pub trait Events: Observer {
    /// A step event. By default its log line goes to
    /// [`Observer::message`], except for a failure or a cancel, which the
    /// caller hears as the run's error.
    fn step(&self, event: &StepEvent<'_>) {
        if !matches!(
            event,
            StepEvent::Failed { .. } | StepEvent::Cancelled { .. }
        ) {
            self.message(&event.line());
        }
    }
}

/// Hears nothing and never cancels.
pub struct Quiet;
impl Observer for Quiet {}
impl Events for Quiet {}

/// The observer a step runs with: everything goes to the run's observer,
/// and warnings become [`StepEvent::Warning`] of this step.
pub(crate) struct StepObserver<'a> {
    pub key: &'a str,
    pub events: &'a dyn Events,
}

impl Observer for StepObserver<'_> {
    fn progress(&self, done: usize, total: usize) {
        self.events.progress(done, total);
    }
    fn message(&self, text: &str) {
        self.events.message(text);
    }
    fn warning(&self, text: &str) {
        self.events.step(&StepEvent::Warning {
            key: self.key,
            text,
        });
    }
    fn iteration(&self, record: &fieldstone_core::invert::IterationRecord) {
        self.events.iteration(record);
    }
    fn cancelled(&self) -> bool {
        self.events.cancelled()
    }
}
