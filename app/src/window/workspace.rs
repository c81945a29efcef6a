//! The open project and what every panel shares: the document, the
//! selected step and scenario, the background job and its log, the map's
//! frame and textures, the cursor readout and the display settings of maps
//! and sections.

use super::canvas::{MapFrame, Textures};
use super::jobs::Job;
use super::state::Doc;
use super::{Dialog, Step};
use crate::pipeline::{self, Selection};
use egui::Color32;
use fieldstone_core::invert::IterationRecord;
use fieldstone_core::project::provenance::StepState;

/// How maps and sections are drawn, whichever step shows them.
#[derive(Debug, Clone, PartialEq)]
pub struct Display {
    pub hillshade: bool,
    /// Colours by histogram equalisation instead of a linear stretch.
    pub equalise: bool,
    /// Contours on maps and slices: None off, NaN automatic, else the interval.
    pub contours: Option<f64>,
    /// Cell edges, padding and air on sections.
    pub cell_edges: bool,
    /// Drill holes with their logged values on sections.
    pub hole_logs: bool,
    /// Elevation of plan slices (m; NaN until a mesh chooses one).
    pub slice_z: f64,
    /// Where the sections cross (E, N in m; the core's centre until chosen).
    pub section_at: Option<[f64; 2]>,
}

impl Default for Display {
    fn default() -> Self {
        Display {
            hillshade: false,
            equalise: false,
            contours: None,
            cell_edges: false,
            hole_logs: true,
            slice_z: f64::NAN,
            section_at: None,
        }
    }
}

/// Everything the panels share.
pub struct Workspace {
    pub doc: Option<Doc>,
    pub step: Step,
    pub scenario: usize,
    pub job: Option<Job>,
    /// The log of the last job (kept when it ends), and messages.
    pub log: Vec<String>,
    pub failed_step: Option<String>,
    pub map: MapFrame,
    pub textures: Textures,
    /// The cursor's map position and the value under it.
    pub hover: Option<([f64; 2], Option<f64>)>,
    /// Units of the value under the cursor.
    pub units: String,
    pub dialog: Option<Dialog>,
    pub display: Display,
    /// The iterations of the last job (kept when it ends).
    pub last_iterations: Vec<IterationRecord>,
    /// When the forms last changed the project (edits within a moment of
    /// each other undo together).
    pub last_edit: Option<std::time::Instant>,
    /// The title and result of the last job to end, for the panel that
    /// started it.
    pub finished: Option<(String, Result<String, super::jobs::Failure>)>,
}

impl Default for Workspace {
    fn default() -> Self {
        Workspace {
            doc: None,
            step: Step::Survey,
            scenario: 0,
            job: None,
            log: vec![],
            failed_step: None,
            map: MapFrame::default(),
            textures: Textures::default(),
            hover: None,
            units: String::new(),
            dialog: None,
            display: Display::default(),
            last_iterations: vec![],
            last_edit: None,
            finished: None,
        }
    }
}

impl Workspace {
    /// True while a background job runs.
    pub fn busy(&self) -> bool {
        self.job.as_ref().is_some_and(|j| j.running())
    }

    /// Makes `p`, a form's edited copy of the project, the project when it
    /// differs; edits within a moment of each other undo together.
    pub fn commit(&mut self, p: fieldstone_core::project::file::ProjectFile) {
        let Some(doc) = self.doc.as_mut() else { return };
        if p == doc.project || doc.read_only.is_some() {
            return;
        }
        let now = std::time::Instant::now();
        if self
            .last_edit
            .is_none_or(|t| now.duration_since(t).as_secs_f32() > 0.8)
        {
            doc.before_edit();
        }
        self.last_edit = Some(now);
        doc.project = p;
        doc.changed();
    }

    pub fn scenario_name(&self) -> String {
        self.doc
            .as_ref()
            .and_then(|d| d.project.scenarios.get(self.scenario))
            .map(|s| s.name.clone())
            .unwrap_or_default()
    }

    /// Starts the pipeline for `which` in the background.
    pub fn start_pipeline(&mut self, which: Selection, force: bool, ctx: Option<egui::Context>) {
        if self.job.as_ref().is_some_and(|j| j.running()) {
            return;
        }
        let Some(doc) = self.doc.as_mut() else { return };
        if doc.dirty() {
            if let Err(e) = doc.save() {
                self.dialog = Some(Dialog::Error(e));
                return;
            }
        }
        let dir = doc.dir.clone();
        let title = match &which {
            Selection::Named(n) => format!("run of scenario {n}"),
            Selection::All => "run of every scenario".into(),
            _ => "shared steps".into(),
        };
        self.log.clear();
        self.failed_step = None;
        let reload = Some((dir.clone(), doc.project.clone()));
        self.job = Some(Job::start(&title, ctx, reload, move |obs| {
            let r = pipeline::run(&dir, &which, force, obs)?;
            Ok(format!(
                "{} steps ran, {} up to date",
                r.ran(),
                r.steps.len() - r.ran()
            ))
        }));
    }

    /// Starts `work` (an export, say) as a background job with progress and
    /// cancel; its result reaches the run log. The views are not reloaded.
    pub fn start_task(
        &mut self,
        title: &str,
        ctx: &egui::Context,
        work: impl FnOnce(&dyn pipeline::Events) -> Result<String, String> + Send + 'static,
    ) {
        if self.busy() {
            return;
        }
        self.failed_step = None;
        self.job = Some(Job::start(title, Some(ctx.clone()), None, move |obs| {
            work(obs).map_err(pipeline::Error::from)
        }));
    }

    /// Takes job events; takes the views a pipeline job loaded when it ends.
    pub fn poll_job(&mut self) {
        let Some(job) = self.job.as_mut() else { return };
        job.poll();
        if let Some(r) = job.result.clone() {
            self.log.append(&mut job.lines);
            self.finished = Some((job.title.clone(), r.clone()));
            match r {
                Ok(m) => self.log.push(format!("{} finished: {m}", job.title)),
                Err(e) => {
                    self.failed_step = e.step.clone();
                    let how = if e.cancelled { "stopped" } else { "failed" };
                    self.log.push(format!("{} {how}: {}", job.title, e.message));
                }
            }
            let iterations = std::mem::take(&mut job.iterations);
            let loaded = job.loaded.take();
            let reloads = job.reloads;
            self.job = None;
            if !reloads {
                return;
            }
            self.last_iterations = iterations;
            if let Some(d) = self.doc.as_mut() {
                // The pipeline saved provenance; take it without losing edits.
                if let Ok(l) = fieldstone_core::project::file::ProjectFile::load(&d.dir) {
                    d.project.provenance = l.project.provenance.clone();
                    d.saved.provenance = l.project.provenance;
                }
                match loaded {
                    Some(v) => d.take_views(*v),
                    None => d.reload(),
                }
            }
            self.textures = Textures::default();
        }
    }

    pub(super) fn state_label(&self, step: Step) -> (&'static str, Color32) {
        let Some(d) = &self.doc else {
            return ("—", Color32::GRAY);
        };
        let key = step.key(&self.scenario_name());
        if self.failed_step.as_deref() == Some(key.as_str()) {
            return ("failed", Color32::from_rgb(190, 40, 40));
        }
        let prev_done = Step::ALL
            .iter()
            .position(|s| *s == step)
            .map(|i| {
                i == 0
                    || d.state_of(&Step::ALL[i - 1].key(&self.scenario_name()))
                        == Some(StepState::Done)
            })
            .unwrap_or(false);
        match d.state_of(&key) {
            Some(StepState::Done) => ("done", Color32::from_rgb(40, 130, 60)),
            Some(StepState::Stale) => ("stale", Color32::from_rgb(200, 120, 0)),
            _ if prev_done => ("ready", Color32::from_rgb(40, 90, 170)),
            _ => ("not started", Color32::GRAY),
        }
    }

    pub(super) fn summary(&self, step: Step) -> String {
        let Some(d) = &self.doc else {
            return String::new();
        };
        let v = &d.views;
        match step {
            Step::Survey => match &v.gravity_raw {
                Some(r) => format!(
                    "{} gravity readings, {} lines",
                    r.x.len(),
                    d.survey_lines().len()
                ),
                None => "no survey loaded".into(),
            },
            Step::Corrections => v
                .gravity_reduced
                .as_ref()
                .map(
                    |r| match d.project.gravity.as_ref().and_then(|g| g.given.as_ref()) {
                        Some(g) => format!(
                            "{} anomalies as delivered (column '{}')",
                            r.x.len(),
                            g.column
                        ),
                        None => format!(
                            "{} rows reduced at {} g/cm³",
                            r.x.len(),
                            d.project
                                .gravity_reduction
                                .map(|g| g.density_g_cc)
                                .unwrap_or(2.67)
                        ),
                    },
                )
                .unwrap_or_else(|| "not reduced yet".into()),
            Step::Grids => v
                .grids
                .get("gravity_grid")
                .map(|g| format!("{} × {} nodes at {} m", g.nx, g.ny, g.dx))
                .unwrap_or_else(|| "no grid yet".into()),
            Step::Regional => match &d.project.regional {
                Some(fieldstone_core::filter::regional::RegionalMethod::Trend(t)) => {
                    format!("order-{} trend", t.order)
                }
                Some(fieldstone_core::filter::regional::RegionalMethod::UpwardContinuation {
                    height_m,
                }) => format!("upward continuation {height_m} m"),
                Some(fieldstone_core::filter::regional::RegionalMethod::Plane { .. }) => {
                    "known plane".into()
                }
                None => "none set".into(),
            },
            Step::ModelSpace => v
                .model
                .as_ref()
                .map(|m| {
                    let [a, b, c] = m.mesh.shape();
                    format!("{a} × {b} × {c} cells, {} active", m.active.count())
                })
                .unwrap_or_else(|| "no mesh".into()),
            Step::Constraints => d
                .project
                .scenarios
                .get(self.scenario)
                .map(|s| {
                    format!(
                        "{}: {} layers",
                        s.name,
                        s.layers.iter().filter(|l| l.enabled).count()
                    )
                })
                .unwrap_or_default(),
            Step::Runs => v
                .runs
                .get(&self.scenario_name())
                .map(|r| {
                    format!(
                        "chi-factor {:.3}, {} iterations",
                        r.file.summary.chi_factor, r.file.summary.iterations
                    )
                })
                .unwrap_or_else(|| "not run".into()),
            Step::Results => format!(
                "{} of {} scenarios run",
                v.runs.len(),
                d.project.scenarios.len()
            ),
        }
    }
}
