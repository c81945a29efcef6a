//! Cancelling each pipeline step: the run stops within a second of the
//! cancel, and the project's files are exactly as they were before the step.
//!
//! Setup: the small demo project, run once to the end so every step has
//! outputs to lose (its first scenario is appraised, so the appraisal step
//! is among them). Then, for each step, a forced run of the first scenario
//! is cancelled while that step runs, once at its start and once part-way
//! through (half of the step's own duration in the full run). Every step
//! of the registry is covered; the test reads the typed step events, not
//! the log text.

use fieldstone_core::progress::Observer;
use fieldstone_pipeline::steps::REGISTRY;
use fieldstone_pipeline::{run, Events, Quiet, Selection, StepEvent};
use std::collections::BTreeMap;
use std::hash::{Hash, Hasher};
use std::path::{Path, PathBuf};
use std::sync::atomic::{AtomicBool, Ordering};
use std::sync::Mutex;
use std::time::{Duration, Instant};

/// Path → hash of contents of every file in the project (the undo store
/// excluded).
fn state(dir: &Path) -> BTreeMap<PathBuf, u64> {
    fn walk(root: &Path, d: &Path, out: &mut BTreeMap<PathBuf, u64>) {
        for e in std::fs::read_dir(d).unwrap() {
            let e = e.unwrap();
            let p = e.path();
            if e.file_name() == fieldstone_core::io::undo::STORE {
                continue;
            }
            if e.file_type().unwrap().is_dir() {
                walk(root, &p, out);
            } else {
                let mut h = std::collections::hash_map::DefaultHasher::new();
                std::fs::read(&p).unwrap().hash(&mut h);
                out.insert(p.strip_prefix(root).unwrap().to_path_buf(), h.finish());
            }
        }
    }
    let mut out = BTreeMap::new();
    walk(dir, dir, &mut out);
    out
}

/// Cancels `delay` after the step `step` starts. Records the project's state
/// at the start of every step from then on, and which step was running when
/// the cancel came (a short step may finish before it).
struct CancelDuring {
    step: String,
    delay: Duration,
    dir: PathBuf,
    flag: AtomicBool,
    armed_at: Mutex<Option<Instant>>,
    fired_at: Mutex<Option<Instant>>,
    /// The step now running and the state before it.
    current: Mutex<Option<(String, BTreeMap<PathBuf, u64>)>>,
    /// `current` when the cancel came.
    at_cancel: Mutex<Option<(String, BTreeMap<PathBuf, u64>)>>,
    durations: Mutex<Vec<(String, f64)>>,
}

impl CancelDuring {
    fn new(step: &str, delay: Duration, dir: &Path) -> CancelDuring {
        CancelDuring {
            step: step.to_string(),
            delay,
            dir: dir.to_path_buf(),
            flag: AtomicBool::new(false),
            armed_at: Mutex::new(None),
            fired_at: Mutex::new(None),
            current: Mutex::new(None),
            at_cancel: Mutex::new(None),
            durations: Mutex::new(Vec::new()),
        }
    }
}

impl Events for CancelDuring {
    fn step(&self, event: &StepEvent<'_>) {
        match event {
            StepEvent::Done { key, seconds, .. } => {
                self.durations
                    .lock()
                    .unwrap()
                    .push((key.to_string(), *seconds));
                // Between steps no step is running: a cancel that comes now
                // is met by the next step before it starts.
                *self.current.lock().unwrap() = None;
            }
            StepEvent::Cancelled { key } => {
                let mut at = self.at_cancel.lock().unwrap();
                if self.flag.load(Ordering::Relaxed) && at.is_none() {
                    *at = Some((key.to_string(), state(&self.dir)));
                }
            }
            StepEvent::Started { key } => {
                let mut armed = self.armed_at.lock().unwrap();
                if armed.is_none() && key.split('/').next() == Some(self.step.as_str()) {
                    *armed = Some(Instant::now());
                }
                if armed.is_some() {
                    *self.current.lock().unwrap() = Some((key.to_string(), state(&self.dir)));
                }
            }
            _ => {}
        }
    }
}

impl Observer for CancelDuring {
    fn cancelled(&self) -> bool {
        if self.flag.load(Ordering::Relaxed) {
            return true;
        }
        let armed = *self.armed_at.lock().unwrap();
        if armed.is_some_and(|t| t.elapsed() >= self.delay) {
            self.flag.store(true, Ordering::Relaxed);
            *self.fired_at.lock().unwrap() = Some(Instant::now());
            *self.at_cancel.lock().unwrap() = self.current.lock().unwrap().clone();
            return true;
        }
        false
    }
}

#[test]
fn every_step_stops_within_a_second_of_cancel_and_leaves_the_project_as_before() {
    let dir = std::env::temp_dir().join(format!("fieldstone-cancel-{}", std::process::id()));
    let _ = std::fs::remove_dir_all(&dir);
    fieldstone_core::demo::write_demo(&dir, fieldstone_core::demo::DemoSize::Small, &Quiet)
        .unwrap();
    // The full run, for every step's outputs; then a forced one for the
    // durations, once everything loaded on first use (fonts, FFT plans) is
    // warm, so no step runs faster in the cancelled runs than it was timed.
    run(
        &dir,
        &Selection::First,
        false,
        &CancelDuring::new("none", Duration::MAX, &dir),
    )
    .unwrap();
    let timing = CancelDuring::new("none", Duration::MAX, &dir);
    run(&dir, &Selection::First, true, &timing).unwrap();
    let durations = timing.durations.into_inner().unwrap();
    let took = |step: &str| -> f64 {
        durations
            .iter()
            .filter(|(k, _)| k.split('/').next() == Some(step))
            .map(|(_, v)| *v)
            .sum()
    };
    let mut report = Vec::new();
    for step in REGISTRY.iter().map(|s| s.key()) {
        assert!(
            took(step) > 0.0,
            "{step} did not run in the small demo's first scenario"
        );
        for delay in [0.0, 0.5 * took(step)] {
            let obs = CancelDuring::new(step, Duration::from_secs_f64(delay), &dir);
            let r = run(&dir, &Selection::First, true, &obs);
            let stopped = Instant::now();
            let err = r.expect_err(&format!("{step}: a cancelled run reported success"));
            assert!(err.is_cancelled(), "{step}: {err}");

            let fired = obs.fired_at.lock().unwrap().expect("the cancel came");
            let lag = stopped.duration_since(fired).as_secs_f64();
            assert!(
                lag <= 1.0,
                "{step}: stopped {lag:.2} s after the cancel (at {delay:.2} s into a {:.2} s step)",
                took(step)
            );
            let (cancelled_step, before) = obs.at_cancel.lock().unwrap().take().unwrap();
            assert_eq!(
                err.step(),
                Some(cancelled_step.as_str()),
                "{step}: the error names another step than the one cancelled"
            );
            let after = state(&dir);
            let changed: Vec<_> = before
                .iter()
                .filter(|(k, v)| after.get(*k) != Some(v))
                .map(|(k, _)| k.display().to_string())
                .chain(
                    after
                        .keys()
                        .filter(|k| !before.contains_key(*k))
                        .map(|k| format!("{} (new)", k.display())),
                )
                .collect();
            assert!(
                changed.is_empty(),
                "{step}: cancelling {delay:.2} s after its start, during {cancelled_step}, changed {changed:?}"
            );
            report.push(format!(
                "{step}: {:.2} s step, cancelled {delay:.2} s after its start, during {cancelled_step}; stopped {lag:.3} s later",
                took(step)
            ));
        }
    }
    eprintln!("{}", report.join("\n"));
    std::fs::remove_dir_all(&dir).ok();
}
