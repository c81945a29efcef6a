//! Runs every stale step of a project, in order.
//!
//! The shared steps run once; then each selected scenario's chain. A step
//! whose record matches and whose outputs exist is skipped. Each step that
//! runs is recorded in the project's provenance (inputs, parameter hash,
//! program version, start and end) and the project is saved atomically
//! after it, so an interrupted run loses at most the step in progress. A
//! step that fails or is cancelled puts the files under `data/` and `runs/`
//! back as they were before it (`core::io::undo`).

use crate::context::Context;
use crate::error::{Error, Result};
use crate::events::{Events, StepEvent, StepObserver};
use crate::paths::now_iso;
use crate::plan::{plan, states, Planned};
use crate::steps::StepJob;
use fieldstone_core::io::undo::Snapshot;
use fieldstone_core::project::file::{ProjectFile, Scenario};
use fieldstone_core::project::provenance::{StepRecord, StepState};
use std::path::Path;

/// Which scenarios to run.
#[derive(Debug, Clone, PartialEq)]
pub enum Selection {
    /// Only the shared steps (import to mesh).
    None,
    /// The first scenario of the project.
    First,
    Named(String),
    All,
}

/// How a step ended in a run.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Outcome {
    Ran,
    UpToDate,
}

/// What a pipeline run did.
#[derive(Debug, Clone, Default)]
pub struct Report {
    /// (step key, outcome, seconds).
    pub steps: Vec<(String, Outcome, f64)>,
}

impl Report {
    /// How many steps ran.
    pub fn ran(&self) -> usize {
        self.steps.iter().filter(|s| s.1 == Outcome::Ran).count()
    }
}

fn record(p: &mut ProjectFile, pl: &Planned, started: String) {
    p.provenance.retain(|r| r.step != pl.key);
    p.provenance.push(StepRecord {
        step: pl.key.clone(),
        inputs: pl.inputs.clone(),
        parameters_hash: pl.parameters_hash.clone(),
        program_version: format!("fieldstone {}", env!("CARGO_PKG_VERSION")),
        started,
        finished: now_iso(),
    });
}

/// The scenarios a selection names.
fn selected(dir: &Path, p: &ProjectFile, which: &Selection) -> Result<Vec<Scenario>> {
    Ok(match which {
        Selection::All => p.scenarios.clone(),
        Selection::None => vec![],
        Selection::First => p.scenarios.first().cloned().into_iter().collect(),
        Selection::Named(n) => vec![p
            .scenarios
            .iter()
            .find(|s| &s.name == n)
            .cloned()
            .ok_or_else(|| {
                format!(
                    "no scenario '{n}' in {} (there are: {})",
                    dir.join("project.json").display(),
                    p.scenarios
                        .iter()
                        .map(|s| s.name.as_str())
                        .collect::<Vec<_>>()
                        .join(", ")
                )
            })?],
    })
}

/// One run of the pipeline over a project folder.
struct Run<'a> {
    dir: &'a Path,
    force: bool,
    events: &'a dyn Events,
    project: ProjectFile,
    context: Context,
    report: Report,
}

impl Run<'_> {
    /// Runs step `idx` of `chain` unless it is up to date.
    fn step(&mut self, chain: &[&Planned], idx: usize, scenario: Option<&Scenario>) -> Result<()> {
        let pl = chain[idx];
        let key = pl.key.as_str();
        let st = states(&self.project.provenance, &chain[..=idx]);
        if !self.force && st[idx] == StepState::Done {
            self.events.step(&StepEvent::UpToDate { key });
            self.report
                .steps
                .push((pl.key.clone(), Outcome::UpToDate, 0.0));
            return Ok(());
        }
        if self.events.cancelled() {
            self.events.step(&StepEvent::Cancelled { key });
            return Err(Error::Step {
                key: pl.key.clone(),
                source: Box::new(Error::Cancelled),
            });
        }
        let started = now_iso();
        let t0 = std::time::Instant::now();
        self.events.step(&StepEvent::Started { key });
        // A step that fails or is cancelled leaves the project's files as
        // they were before it.
        let snapshot = Snapshot::take(self.dir, &["data", "runs"]).map_err(|e| Error::Step {
            key: pl.key.clone(),
            source: Box::new(Error::Internal(format!(
                "could not record the project's files before the step: {e}"
            ))),
        })?;
        let observer = StepObserver {
            key,
            events: self.events,
        };
        let outcome = pl.stage().run(&mut StepJob {
            dir: self.dir,
            project: &self.project,
            scenario,
            context: &mut self.context,
            observer: &observer,
        });
        // A cancel that arrives while the step runs undoes the step, even
        // when the step finished before it looked at the flag; a step that
        // fails while the flag is set was stopped by it.
        let outcome = match outcome {
            _ if self.events.cancelled() => Err(Error::Cancelled),
            other => other,
        };
        let summary = match outcome {
            Ok(s) => {
                snapshot
                    .discard()
                    .map_err(|e| Error::Internal(e.to_string()))?;
                s
            }
            Err(e) => {
                self.context.forget_model();
                if e.is_cancelled() {
                    self.events.step(&StepEvent::Cancelled { key });
                } else {
                    self.events.step(&StepEvent::Failed { key, error: &e });
                }
                return Err(match snapshot.restore() {
                    Ok(()) => Error::Step {
                        key: pl.key.clone(),
                        source: Box::new(e),
                    },
                    Err(r) => Error::NotRestored {
                        key: pl.key.clone(),
                        source: Box::new(e),
                        restore: r.to_string(),
                    },
                });
            }
        };
        let seconds = t0.elapsed().as_secs_f64();
        self.events.step(&StepEvent::Done {
            key,
            seconds,
            summary: &summary,
        });
        record(&mut self.project, pl, started);
        self.project
            .save(self.dir)
            .map_err(|e| Error::Internal(e.to_string()))?;
        self.report
            .steps
            .push((pl.key.clone(), Outcome::Ran, seconds));
        Ok(())
    }
}

/// Runs the stale steps of the project in `dir` for the selected scenarios
/// (all steps with `force`), saving the project after each.
pub fn run(dir: &Path, which: &Selection, force: bool, events: &dyn Events) -> Result<Report> {
    let loaded = ProjectFile::load(dir).map_err(|e| e.to_string())?;
    if let Some(why) = loaded.read_only_because {
        return Err(format!("{why}; run it with the newer program").into());
    }
    let project = loaded.project;
    let scenarios = selected(dir, &project, which)?;
    let plan = plan(dir, &project)?;
    std::fs::create_dir_all(dir.join("data"))
        .map_err(|e| Error::Internal(format!("{}: {e}", dir.join("data").display())))?;
    let mut run = Run {
        dir,
        force,
        events,
        context: Context::new(dir),
        project,
        report: Report::default(),
    };
    let shared: Vec<&Planned> = plan.shared.iter().collect();
    for i in 0..shared.len() {
        run.step(&shared, i, None)?;
    }
    for s in &scenarios {
        let chain = plan
            .chain_of(&s.name)
            .ok_or_else(|| Error::internal(format!("scenario '{}' is not in the plan", s.name)))?;
        for i in shared.len()..chain.len() {
            run.step(&chain, i, Some(s))?;
        }
    }
    Ok(run.report)
}
