//! Background work: one job at a time on its own thread, reporting log
//! lines, inversion iterations and progress through a channel; cancellable.

use fieldstone_core::invert::IterationRecord;
use fieldstone_core::progress::Observer;
use fieldstone_pipeline::{Error, Events, StepEvent};
use std::sync::atomic::{AtomicBool, Ordering};
use std::sync::mpsc::{channel, Receiver, Sender};
use std::sync::Arc;
use std::time::Instant;

/// What a job sends to the window.
pub enum Event {
    Line(String),
    Iteration(IterationRecord),
    Progress(usize, usize),
    /// What the views show, loaded from the folder after the work.
    Loaded(Box<super::state::Views>),
    Finished(Result<String, Failure>),
}

/// Why a job ended without its result: the message, the step that failed
/// (from the pipeline's typed error, not from the text) and whether the
/// user cancelled.
#[derive(Debug, Clone, PartialEq)]
pub struct Failure {
    pub message: String,
    pub step: Option<String>,
    pub cancelled: bool,
}

impl From<Error> for Failure {
    fn from(e: Error) -> Failure {
        Failure {
            message: e.to_string(),
            step: e.step().map(str::to_string),
            cancelled: e.is_cancelled(),
        }
    }
}

struct Reporter {
    tx: std::sync::Mutex<Sender<Event>>,
    cancel: Arc<AtomicBool>,
    ctx: Option<egui::Context>,
}

impl Reporter {
    fn send(&self, e: Event) {
        if let Ok(tx) = self.tx.lock() {
            let _ = tx.send(e);
        }
        if let Some(c) = &self.ctx {
            c.request_repaint();
        }
    }
}

impl Observer for Reporter {
    fn progress(&self, done: usize, total: usize) {
        self.send(Event::Progress(done, total));
    }
    fn message(&self, text: &str) {
        self.send(Event::Line(text.to_string()));
    }
    fn iteration(&self, r: &IterationRecord) {
        self.send(Event::Iteration(r.clone()));
    }
    fn cancelled(&self) -> bool {
        self.cancel.load(Ordering::Relaxed)
    }
}

impl Events for Reporter {
    fn step(&self, event: &StepEvent<'_>) {
        // A failure reaches the log once, as the job's own last line.
        if !matches!(event, StepEvent::Failed { .. }) {
            self.send(Event::Line(event.line()));
        }
    }
}

/// A running (or finished) job.
pub struct Job {
    pub title: String,
    pub started: Instant,
    rx: Receiver<Event>,
    cancel: Arc<AtomicBool>,
    pub lines: Vec<String>,
    pub iterations: Vec<IterationRecord>,
    pub progress: Option<(usize, usize)>,
    pub result: Option<Result<String, Failure>>,
    /// The views loaded after the work, when the job was asked to.
    pub loaded: Option<Box<super::state::Views>>,
    /// True when the job loads the views after its work (a pipeline run).
    pub reloads: bool,
    handle: Option<std::thread::JoinHandle<()>>,
}

impl Job {
    /// Starts `work` on a new thread; then, when `reload` names a project
    /// folder and file, loads what the views show from it on the same
    /// thread (whether the work succeeded or not: steps that finished
    /// before a failure changed files), so the frame never reads them.
    pub fn start(
        title: &str,
        ctx: Option<egui::Context>,
        reload: Option<(
            std::path::PathBuf,
            fieldstone_core::project::file::ProjectFile,
        )>,
        work: impl FnOnce(&dyn Events) -> Result<String, Error> + Send + 'static,
    ) -> Job {
        let (tx, rx) = channel();
        let reloads = reload.is_some();
        let cancel = Arc::new(AtomicBool::new(false));
        let rep = Reporter {
            tx: std::sync::Mutex::new(tx),
            cancel: cancel.clone(),
            ctx,
        };
        let handle = std::thread::spawn(move || {
            let r = std::panic::catch_unwind(std::panic::AssertUnwindSafe(|| work(&rep)))
                .unwrap_or_else(|_| Err(Error::internal("the job stopped on an internal error; the project on disk is as it was after the last finished step")));
            if let Some((dir, project)) = reload {
                // The run saved provenance: read the project as it is now,
                // falling back to the one the job started with.
                let project = fieldstone_core::project::file::ProjectFile::load(&dir)
                    .map(|l| l.project)
                    .unwrap_or(project);
                rep.send(Event::Loaded(Box::new(super::state::load_views(
                    &dir, &project,
                ))));
            }
            rep.send(Event::Finished(r.map_err(Failure::from)));
        });
        Job {
            title: title.to_string(),
            started: Instant::now(),
            rx,
            cancel,
            lines: vec![],
            iterations: vec![],
            progress: None,
            result: None,
            loaded: None,
            reloads,
            handle: Some(handle),
        }
    }

    /// Takes every event sent so far; true when something arrived.
    pub fn poll(&mut self) -> bool {
        let mut any = false;
        while let Ok(e) = self.rx.try_recv() {
            any = true;
            match e {
                Event::Line(l) => self.lines.push(l),
                Event::Iteration(r) => self.iterations.push(r),
                Event::Progress(a, b) => self.progress = Some((a, b)),
                Event::Loaded(v) => self.loaded = Some(v),
                Event::Finished(r) => {
                    self.result = Some(r);
                    if let Some(h) = self.handle.take() {
                        let _ = h.join();
                    }
                }
            }
        }
        any
    }

    pub fn running(&self) -> bool {
        self.result.is_none()
    }

    pub fn cancel(&self) {
        self.cancel.store(true, Ordering::Relaxed);
    }

    /// Waits for the job to end (after a cancel).
    pub fn wait(&mut self) {
        while self.running() {
            std::thread::sleep(std::time::Duration::from_millis(10));
            self.poll();
        }
    }
}
