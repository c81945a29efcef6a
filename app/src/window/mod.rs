//! The project window (eframe/egui, glow renderer): a step list down the
//! left, the step's form on the right, its views in the centre, the run log
//! at the bottom, a status bar with the cursor position.

mod appraise_form;
mod canvas;
mod forms;
pub mod jobs;
pub mod state;
mod views;
pub use views::ViewState;

use crate::commands::CAUTIONS;
use crate::pipeline::{self, Selection};
use canvas::{MapFrame, Textures};
use egui::{Color32, RichText};
use fieldstone_core::project::provenance::StepState;
use jobs::Job;
use state::{autosave_path, Doc};
use std::io::Write as _;
use std::path::{Path, PathBuf};
use std::time::Instant;

/// The steps of the workflow, in order.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Step {
    Survey,
    Corrections,
    Grids,
    Regional,
    ModelSpace,
    Constraints,
    Runs,
    Results,
}

impl Step {
    pub const ALL: [Step; 8] = [
        Step::Survey,
        Step::Corrections,
        Step::Grids,
        Step::Regional,
        Step::ModelSpace,
        Step::Constraints,
        Step::Runs,
        Step::Results,
    ];
    pub fn label(self) -> &'static str {
        match self {
            Step::Survey => "Survey",
            Step::Corrections => "Corrections",
            Step::Grids => "Grids",
            Step::Regional => "Regional",
            Step::ModelSpace => "Model space",
            Step::Constraints => "Constraints",
            Step::Runs => "Runs",
            Step::Results => "Results",
        }
    }
    /// The pipeline step behind it (per scenario for the last three).
    fn key(self, scenario: &str) -> String {
        match self {
            Step::Survey => "import".into(),
            Step::Corrections => "reduce".into(),
            Step::Grids => "grid".into(),
            Step::Regional => "regional".into(),
            Step::ModelSpace => "mesh".into(),
            Step::Constraints => format!("constraints/{scenario}"),
            Step::Runs => format!("inversion/{scenario}"),
            Step::Results => format!("exports/{scenario}"),
        }
    }
}

/// A modal message.
#[derive(Debug, Clone, PartialEq)]
pub enum Dialog {
    About,
    Shortcuts,
    Cautions,
    ConfirmClose,
    Recover(PathBuf),
    Error(String),
}

/// Everything the window remembers between frames.
pub struct FieldstoneApp {
    pub doc: Option<Doc>,
    pub step: Step,
    pub scenario: usize,
    pub job: Option<Job>,
    /// The log of the last job (kept when it ends), and messages.
    pub log: Vec<String>,
    pub failed_step: Option<String>,
    pub map: MapFrame,
    pub textures: Textures,
    pub hover: Option<([f64; 2], Option<f64>)>,
    pub show_log: bool,
    pub dialog: Option<Dialog>,
    pub forms: forms::FormState,
    pub views: views::ViewState,
    last_autosave: Instant,
    pub frame_ms: f32,
    /// With FIELDSTONE_FRAME_LOG set: every frame's times go to that file
    /// (seconds since start, ui time, the previous frame's whole work as
    /// eframe measures it — ui, tessellation and painting, without the wait
    /// for the buffer swap —, time since the previous frame, whether a job
    /// runs) and frames are drawn continuously with vsync off, for the
    /// frame-time benchmark.
    frame_log: Option<(std::io::BufWriter<std::fs::File>, Instant, Option<Instant>)>,
    pub show_frame_time: bool,
    allow_close: bool,
    /// Add opened projects to the recent list (off in tests).
    pub remember_recent: bool,
}

fn config_file() -> Option<PathBuf> {
    let base = std::env::var_os("APPDATA")
        .or_else(|| std::env::var_os("XDG_CONFIG_HOME"))
        .map(PathBuf::from)
        .or_else(|| std::env::var_os("HOME").map(|h| PathBuf::from(h).join(".config")))?;
    Some(base.join("fieldstone").join("recent.json"))
}

/// Recently opened project folders, newest first.
pub fn recent_projects() -> Vec<PathBuf> {
    config_file()
        .and_then(|f| std::fs::read_to_string(f).ok())
        .and_then(|t| serde_json::from_str(&t).ok())
        .unwrap_or_default()
}

fn remember(dir: &Path) {
    let Some(f) = config_file() else { return };
    let mut v = recent_projects();
    let d = dir.canonicalize().unwrap_or_else(|_| dir.to_path_buf());
    v.retain(|p| p != &d);
    v.insert(0, d);
    v.truncate(8);
    if let Some(p) = f.parent() {
        let _ = std::fs::create_dir_all(p);
    }
    let _ = crate::pipeline::write_text(&f, &serde_json::to_string_pretty(&v).unwrap_or_default());
}

/// The demo project the window opens: a working copy in the user's folder
/// (`<config>/fieldstone/harrow-fen`), so running it never rewrites the
/// bundled `demo-data/harrow-fen` (which stays as shipped). The copy is made
/// from the bundled project, found beside the working folder or the
/// program, or written afresh when neither exists.
pub fn demo_project() -> Result<PathBuf, String> {
    let d = config_file()
        .and_then(|f| f.parent().map(|p| p.join("harrow-fen")))
        .ok_or("no folder to put the demo project in (neither APPDATA, XDG_CONFIG_HOME nor HOME is set)")?;
    if d.join("project.json").exists() {
        return Ok(d);
    }
    let mut candidates = vec![PathBuf::from("demo-data/harrow-fen")];
    if let Ok(exe) = std::env::current_exe() {
        for up in exe.ancestors().skip(1).take(4) {
            candidates.push(up.join("demo-data/harrow-fen"));
        }
    }
    match candidates
        .into_iter()
        .find(|c| c.join("project.json").exists())
    {
        Some(bundled) => copy_project(&bundled, &d)?,
        None => {
            std::fs::create_dir_all(&d).map_err(|e| format!("{}: {e}", d.display()))?;
            fieldstone_core::demo::write_demo(
                &d,
                fieldstone_core::demo::DemoSize::Full,
                &fieldstone_core::progress::Silent,
            )
            .map_err(|e| e.to_string())?;
        }
    }
    Ok(d)
}

/// Copies a project folder's own files (not what running it made: `data/`,
/// `runs/`, undo snapshots, autosaves) into `to`, project.json last so a
/// copy cut short is not taken for a project.
fn copy_project(from: &Path, to: &Path) -> Result<(), String> {
    fn walk(from: &Path, to: &Path, top: bool) -> Result<(), String> {
        std::fs::create_dir_all(to).map_err(|e| format!("{}: {e}", to.display()))?;
        for e in std::fs::read_dir(from).map_err(|e| format!("{}: {e}", from.display()))? {
            let e = e.map_err(|e| format!("{}: {e}", from.display()))?;
            let name = e.file_name();
            let n = name.to_string_lossy();
            if top
                && (n == "data"
                    || n == "runs"
                    || n == "project.json"
                    || n.starts_with(".autosave")
                    || n == fieldstone_core::io::undo::STORE)
            {
                continue;
            }
            let (src, dst) = (e.path(), to.join(&name));
            if src.is_dir() {
                walk(&src, &dst, false)?;
            } else {
                std::fs::copy(&src, &dst).map_err(|e| format!("{}: {e}", src.display()))?;
            }
        }
        Ok(())
    }
    walk(from, to, true)?;
    let p = from.join("project.json");
    let text = std::fs::read(&p).map_err(|e| format!("{}: {e}", p.display()))?;
    fieldstone_core::io::atomic::write_bytes_atomically(&to.join("project.json"), &text)
        .map_err(|e| e.to_string())
}

impl FieldstoneApp {
    /// A window on `project` (or nothing open when it fails, with a message).
    pub fn new(project: Option<&Path>) -> FieldstoneApp {
        Self::with(project, true)
    }

    /// A window on `project`; `remember` adds it to the recent list.
    pub fn with(project: Option<&Path>, remember: bool) -> FieldstoneApp {
        let mut app = FieldstoneApp {
            doc: None,
            step: Step::Survey,
            scenario: 0,
            job: None,
            log: vec![],
            failed_step: None,
            map: MapFrame::default(),
            textures: Textures::default(),
            hover: None,
            show_log: true,
            dialog: None,
            forms: forms::FormState::default(),
            views: views::ViewState::default(),
            last_autosave: Instant::now(),
            frame_ms: 0.0,
            frame_log: std::env::var_os("FIELDSTONE_FRAME_LOG")
                .and_then(|p| std::fs::File::create(p).ok())
                .map(|f| {
                    let mut w = std::io::BufWriter::new(f);
                    let _ = std::io::Write::write_all(
                        &mut w,
                        b"t_s,ui_ms,previous_frame_work_ms,frame_interval_ms,job_running\n",
                    );
                    (w, Instant::now(), None)
                }),
            show_frame_time: false,
            allow_close: false,
            remember_recent: remember,
        };
        if let Some(p) = project {
            app.open(p);
        }
        app
    }

    pub fn open(&mut self, dir: &Path) {
        let dir = if dir.file_name().is_some_and(|n| n == "project.json") {
            dir.parent().unwrap_or(dir).to_path_buf()
        } else {
            dir.to_path_buf()
        };
        match Doc::open(&dir) {
            Ok(d) => {
                let auto = autosave_path(&dir);
                if auto.exists() {
                    self.dialog = Some(Dialog::Recover(auto));
                }
                if let Some(why) = &d.read_only {
                    self.log.push(format!("read-only: {why}"));
                }
                self.log.push(format!("opened {}", dir.display()));
                if d.states.iter().all(|(_, st)| *st != StepState::Done) {
                    self.log.push("nothing has been run in this project yet: check each step's form, then press 'Run every scenario' (the full demo takes about 11 minutes on two cores)".into());
                }
                if self.remember_recent {
                    remember(&dir);
                }
                self.doc = Some(d);
                self.map.fitted = false;
                self.scenario = 0;
                self.textures = Textures::default();
            }
            Err(e) => {
                self.dialog = Some(Dialog::Error(format!(
                    "could not open {}: {e}",
                    dir.display()
                )))
            }
        }
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

    /// Takes job events; reloads the project when a job ends.
    pub fn poll_job(&mut self) {
        let Some(job) = self.job.as_mut() else { return };
        job.poll();
        if let Some(r) = job.result.clone() {
            self.log.append(&mut job.lines);
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
            self.views.last_iterations = iterations;
            self.job = None;
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

    fn state_label(&self, step: Step) -> (&'static str, Color32) {
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

    fn summary(&self, step: Step) -> String {
        let Some(d) = &self.doc else {
            return String::new();
        };
        let v = &d.views;
        match step {
            Step::Survey => match &v.gravity_raw {
                Some(r) => {
                    let mut lines: Vec<&String> = r.lines.iter().collect();
                    lines.sort();
                    lines.dedup();
                    format!("{} gravity readings, {} lines", r.x.len(), lines.len())
                }
                None => "no survey loaded".into(),
            },
            Step::Corrections => v
                .gravity_reduced
                .as_ref()
                .map(|r| {
                    format!(
                        "{} rows reduced at {} g/cm³",
                        r.x.len(),
                        d.project
                            .gravity_reduction
                            .map(|g| g.density_g_cc)
                            .unwrap_or(2.67)
                    )
                })
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

    fn menu(&mut self, ui: &mut egui::Ui) {
        egui::MenuBar::new().ui(ui, |ui| {
            ui.menu_button("Project", |ui| {
                if ui.button("Open…").clicked() {
                    if let Some(d) = rfd::FileDialog::new()
                        .set_title("Open a Fieldstone project folder")
                        .pick_folder()
                    {
                        self.open(&d);
                    }
                }
                if ui.button("Open the demo project").clicked() {
                    match demo_project() {
                        Ok(d) => self.open(&d),
                        Err(e) => self.dialog = Some(Dialog::Error(e)),
                    }
                }
                ui.menu_button("Recent", |ui| {
                    for r in recent_projects() {
                        if ui.button(r.display().to_string()).clicked() {
                            self.open(&r);
                        }
                    }
                });
                if ui.button("New…").clicked() {
                    if let Some(d) = rfd::FileDialog::new()
                        .set_title("Folder for the new project")
                        .pick_folder()
                    {
                        let p = fieldstone_core::project::file::ProjectFile::new(
                            &d.file_name()
                                .map(|n| n.to_string_lossy().to_string())
                                .unwrap_or_else(|| "project".into()),
                        );
                        match p.save(&d) {
                            Ok(()) => self.open(&d),
                            Err(e) => self.dialog = Some(Dialog::Error(e.to_string())),
                        }
                    }
                }
                if ui.button("Save  (Ctrl+S)").clicked() {
                    self.save();
                }
                if ui.button("Save as…").clicked() {
                    if let Some(to) = rfd::FileDialog::new()
                        .set_title("Save the project into another folder")
                        .pick_folder()
                    {
                        self.save_as(&to);
                    }
                }
                ui.separator();
                if ui.button("Export the selected run…").clicked() {
                    self.step = Step::Results;
                }
            });
            ui.menu_button("Edit", |ui| {
                if ui.button("Undo  (Ctrl+Z)").clicked() {
                    self.undo(false);
                }
                if ui.button("Redo  (Ctrl+Y)").clicked() {
                    self.undo(true);
                }
            });
            ui.menu_button("View", |ui| {
                ui.checkbox(&mut self.show_log, "Run log");
                ui.checkbox(&mut self.show_frame_time, "Frame time");
                if ui.button("Fit the map").clicked() {
                    self.map.fitted = false;
                }
            });
            ui.menu_button("Help", |ui| {
                if ui.button("About").clicked() {
                    self.dialog = Some(Dialog::About);
                }
                if ui.button("Keyboard shortcuts").clicked() {
                    self.dialog = Some(Dialog::Shortcuts);
                }
                if ui.button("Cautions").clicked() {
                    self.dialog = Some(Dialog::Cautions);
                }
            });
        });
    }

    pub fn save(&mut self) {
        if let Some(d) = self.doc.as_mut() {
            match d.save() {
                Ok(()) => self
                    .log
                    .push(format!("saved {}", d.dir.join("project.json").display())),
                Err(e) => self.dialog = Some(Dialog::Error(e)),
            }
        }
    }

    fn save_as(&mut self, to: &Path) {
        let Some(d) = self.doc.as_ref() else { return };
        // Copy the inputs the project names, then write the project there.
        let p = &d.project;
        let files = p.input_files();
        for f in files {
            let (Ok(a), Ok(b)) = (pipeline::at(&d.dir, &f), pipeline::at(to, &f)) else {
                continue;
            };
            if let Some(parent) = b.parent() {
                let _ = std::fs::create_dir_all(parent);
            }
            if let Err(e) = std::fs::copy(&a, &b) {
                self.dialog = Some(Dialog::Error(format!(
                    "could not copy {}: {e}",
                    a.display()
                )));
                return;
            }
        }
        let mut proj = p.clone();
        proj.provenance.clear();
        match proj.save(to) {
            Ok(()) => self.open(to),
            Err(e) => self.dialog = Some(Dialog::Error(e.to_string())),
        }
    }

    fn undo(&mut self, redo: bool) {
        if let Some(d) = self.doc.as_mut() {
            let done = if redo { d.redo() } else { d.undo() };
            if done {
                d.changed();
            }
        }
    }

    fn shortcuts(&mut self, ctx: &egui::Context) {
        let (s, z, y, f5) = ctx.input(|i| {
            (
                i.modifiers.command && i.key_pressed(egui::Key::S),
                i.modifiers.command && i.key_pressed(egui::Key::Z),
                i.modifiers.command && i.key_pressed(egui::Key::Y),
                i.key_pressed(egui::Key::F5),
            )
        });
        if f5 && !self.job.as_ref().is_some_and(|j| j.running()) {
            let name = self.scenario_name();
            if !name.is_empty() {
                self.start_pipeline(Selection::Named(name), false, Some(ctx.clone()));
            }
        }
        if s {
            self.save();
        }
        if z {
            self.undo(false);
        }
        if y {
            self.undo(true);
        }
        let dropped: Vec<PathBuf> = ctx.input(|i| {
            i.raw
                .dropped_files
                .iter()
                .map(|f| f.path().to_path_buf())
                .filter(|p| !p.as_os_str().is_empty())
                .collect()
        });
        for p in dropped {
            if p.is_dir() || p.file_name().is_some_and(|n| n == "project.json") {
                self.open(&p);
            } else if p
                .extension()
                .is_some_and(|e| e.eq_ignore_ascii_case("csv") || e.eq_ignore_ascii_case("txt"))
            {
                self.step = Step::Survey;
                self.forms.import_path = p.display().to_string();
                self.forms.import_preview = None;
            } else {
                self.log.push(format!(
                    "{} is not a project folder or a table; drop a project folder or a CSV file",
                    p.display()
                ));
            }
        }
    }

    fn dialogs(&mut self, ctx: &egui::Context) {
        let Some(d) = self.dialog.clone() else { return };
        let mut open = true;
        let title = match &d {
            Dialog::About => "About Fieldstone",
            Dialog::Shortcuts => "Keyboard shortcuts",
            Dialog::Cautions => "Cautions",
            Dialog::ConfirmClose => "A run is in progress",
            Dialog::Recover(_) => "Unsaved changes found",
            Dialog::Error(_) => "Problem",
        };
        let mut close = false;
        egui::Window::new(title).collapsible(false).resizable(false).open(&mut open).show(ctx, |ui| {
            ui.set_max_width(460.0);
            match &d {
                Dialog::About => {
                    ui.label(format!("Fieldstone {} — gravity and magnetic survey data to constrained 3D density and susceptibility models.", env!("CARGO_PKG_VERSION")));
                    ui.label("Runs without a GPU and without a network. Licensed MIT or Apache-2.0.");
                }
                Dialog::Shortcuts => {
                    ui.label("Ctrl+S  save the project\nCtrl+Z  undo\nCtrl+Y  redo\nF5  run the selected scenario\nDrag the map to pan, scroll to zoom\nClick a station to select its line");
                }
                Dialog::Cautions => {
                    ui.label(CAUTIONS);
                }
                Dialog::ConfirmClose => {
                    ui.label("Closing now cancels the run. The project keeps every step that finished.");
                    ui.horizontal(|ui| {
                        if ui.button("Cancel the run and close").clicked() {
                            if let Some(j) = self.job.as_mut() {
                                j.cancel();
                                j.wait();
                            }
                            self.allow_close = true;
                            ctx.send_viewport_cmd(egui::ViewportCommand::Close);
                            close = true;
                        }
                        if ui.button("Keep running").clicked() {
                            close = true;
                        }
                    });
                }
                Dialog::Recover(path) => {
                    ui.label("Fieldstone closed with unsaved changes to this project last time. Recover them?");
                    ui.horizontal(|ui| {
                        if ui.button("Recover").clicked() {
                            if let (Some(doc), Ok(text)) = (self.doc.as_mut(), std::fs::read_to_string(path)) {
                                match serde_json::from_str(&text) {
                                    Ok(p) => {
                                        doc.before_edit();
                                        doc.project = p;
                                        doc.changed();
                                        self.log.push("recovered the autosaved changes (not saved yet)".into());
                                    }
                                    Err(e) => self.log.push(format!("the autosave could not be read: {e}")),
                                }
                            }
                            close = true;
                        }
                        if ui.button("Discard").clicked() {
                            let _ = std::fs::remove_file(path);
                            close = true;
                        }
                    });
                }
                Dialog::Error(e) => {
                    ui.label(RichText::new(e).color(Color32::from_rgb(160, 30, 30)));
                }
            }
        });
        if !open || close {
            self.dialog = None;
        }
    }

    fn step_list(&mut self, ui: &mut egui::Ui) {
        ui.add_space(6.0);
        ui.heading("Steps");
        ui.add_space(4.0);
        for step in Step::ALL {
            let (state, colour) = self.state_label(step);
            let selected = self.step == step;
            let summary = self.summary(step);
            let r = ui.selectable_label(selected, RichText::new(step.label()).size(15.0).strong());
            if r.clicked() {
                self.step = step;
                // Each step chooses its own grid to show.
                self.views.grid.clear();
            }
            ui.horizontal(|ui| {
                ui.add_space(10.0);
                ui.label(RichText::new(state).color(colour).small());
                ui.label(RichText::new(summary).small().weak());
            });
            ui.add_space(4.0);
        }
        ui.separator();
        if let Some(d) = &self.doc {
            ui.label(
                RichText::new(format!(
                    "background: density contrasts relative to {} g/cm³",
                    d.project.background_density_g_cc
                ))
                .small()
                .weak(),
            );
            if let Some(e) = d.project.epsg {
                ui.label(
                    RichText::new(format!("coordinates: EPSG:{e}"))
                        .small()
                        .weak(),
                );
            }
        }
    }

    fn status_bar(&mut self, ui: &mut egui::Ui) {
        ui.horizontal(|ui| {
            match (self.hover, self.doc.as_ref().and_then(|d| d.project.epsg)) {
                (Some((p, v)), epsg) => {
                    ui.label(format!(
                        "E {:.1} m  N {:.1} m{}",
                        p[0],
                        p[1],
                        epsg.map(|e| format!(" (EPSG:{e})")).unwrap_or_default()
                    ));
                    if let Some(v) = v {
                        ui.separator();
                        ui.label(format!("value {v:.4} {}", self.views.units));
                    }
                }
                _ => {
                    ui.label("move over the map for coordinates");
                }
            }
            ui.separator();
            match &self.job {
                Some(j) if j.running() => {
                    ui.spinner();
                    ui.label(format!(
                        "{}: {:.0} s",
                        j.title,
                        j.started.elapsed().as_secs_f64()
                    ));
                }
                _ => {
                    ui.label("idle");
                }
            }
            if let Some(d) = &self.doc {
                if d.dirty() {
                    ui.separator();
                    ui.label(
                        RichText::new("unsaved changes").color(Color32::from_rgb(200, 120, 0)),
                    );
                }
            }
            if self.show_frame_time {
                ui.separator();
                ui.label(format!("frame {:.1} ms", self.frame_ms));
            }
        });
    }

    fn log_panel(&mut self, ui: &mut egui::Ui) {
        ui.horizontal(|ui| {
            ui.strong("Run log");
            if let Some(j) = &self.job {
                if j.running() {
                    if let Some((a, b)) = j.progress {
                        let frac = a as f32 / b.max(1) as f32;
                        let el = j.started.elapsed().as_secs_f32();
                        let left = if frac > 0.02 {
                            format!(", about {:.0} s left", el / frac - el)
                        } else {
                            String::new()
                        };
                        ui.add(
                            egui::ProgressBar::new(frac)
                                .desired_width(220.0)
                                .text(format!("{a} of {b}{left}")),
                        );
                    }
                    if ui.button("Cancel").clicked() {
                        j.cancel();
                    }
                }
            }
        });
        let lines: Vec<&String> = self
            .log
            .iter()
            .chain(self.job.iter().flat_map(|j| j.lines.iter()))
            .collect();
        egui::ScrollArea::vertical()
            .stick_to_bottom(true)
            .auto_shrink([false, false])
            .show(ui, |ui| {
                for l in lines {
                    ui.label(RichText::new(l).monospace().size(12.0));
                }
            });
    }
}

impl eframe::App for FieldstoneApp {
    fn ui(&mut self, ui: &mut egui::Ui, frame: &mut eframe::Frame) {
        let t0 = Instant::now();
        let ctx = ui.ctx().clone();
        self.poll_job();
        if let Some(d) = self.doc.as_mut() {
            d.poll();
            if d.planning() {
                ctx.request_repaint_after(std::time::Duration::from_millis(50));
            }
        }
        if self.job.as_ref().is_some_and(|j| j.running()) {
            ctx.request_repaint_after(std::time::Duration::from_millis(100));
        }
        if ctx.input(|i| i.viewport().close_requested())
            && !self.allow_close
            && self.job.as_ref().is_some_and(|j| j.running())
        {
            ctx.send_viewport_cmd(egui::ViewportCommand::CancelClose);
            self.dialog = Some(Dialog::ConfirmClose);
        }
        self.shortcuts(&ctx);
        if self.last_autosave.elapsed().as_secs() >= 30 {
            self.last_autosave = Instant::now();
            if let Some(d) = &self.doc {
                if let Err(e) = d.autosave() {
                    self.log.push(format!("autosave failed: {e}"));
                }
            }
        }
        let title = format!(
            "Fieldstone — {}",
            self.doc
                .as_ref()
                .map(|d| d.project.name.clone())
                .unwrap_or_else(|| "no project".into())
        );
        ctx.send_viewport_cmd(egui::ViewportCommand::Title(title));
        egui::Panel::top("menu").show(ui, |ui| self.menu(ui));
        egui::Panel::bottom("status").show(ui, |ui| self.status_bar(ui));
        if self.show_log {
            egui::Panel::bottom("log")
                .resizable(true)
                .default_size(150.0)
                .show(ui, |ui| self.log_panel(ui));
        }
        egui::Panel::left("steps")
            .resizable(false)
            .exact_size(250.0)
            .show(ui, |ui| self.step_list(ui));
        egui::Panel::right("form")
            .resizable(true)
            .default_size(340.0)
            .show(ui, |ui| {
                egui::ScrollArea::vertical()
                    .auto_shrink([false, false])
                    .show(ui, |ui| forms::show(self, ui));
            });
        egui::CentralPanel::default().show(ui, |ui| views::show(self, ui));
        self.dialogs(&ctx);
        let ui_ms = t0.elapsed().as_secs_f64() * 1000.0;
        self.frame_ms = 0.9 * self.frame_ms + 0.1 * ui_ms as f32;
        let running = self.job.as_ref().is_some_and(|j| j.running());
        if let Some((w, start, last)) = self.frame_log.as_mut() {
            let interval = last.map(|l| t0.duration_since(l).as_secs_f64() * 1000.0);
            let _ = writeln!(
                w,
                "{:.3},{ui_ms:.3},{},{},{}",
                start.elapsed().as_secs_f64(),
                frame
                    .info()
                    .cpu_usage
                    .map(|s| format!("{:.3}", s * 1000.0))
                    .unwrap_or_default(),
                interval.map(|v| format!("{v:.3}")).unwrap_or_default(),
                running as u8
            );
            let _ = w.flush();
            *last = Some(t0);
            ctx.request_repaint();
        }
    }

    fn on_exit(&mut self, _gl: Option<&eframe::glow::Context>) {
        if let Some(j) = self.job.as_mut() {
            j.cancel();
            j.wait();
        }
        if let Some(d) = &self.doc {
            let _ = d.autosave();
        }
    }
}

/// Sets the fonts: DejaVu Sans (bundled) first, egui's defaults after.
pub fn setup_fonts(ctx: &egui::Context) {
    let mut fonts = egui::FontDefinitions::default();
    fonts.font_data.insert(
        "dejavu".into(),
        std::sync::Arc::new(egui::FontData::from_static(include_bytes!(
            "../../../assets/fonts/DejaVuSans.ttf"
        ))),
    );
    if let Some(f) = fonts.families.get_mut(&egui::FontFamily::Proportional) {
        f.insert(0, "dejavu".into());
    }
    ctx.set_fonts(fonts);
    ctx.set_visuals(egui::Visuals::light());
}

/// Opens the window on `project` (the bundled demo when none is given).
pub fn open(project: Option<&Path>) -> Result<(), String> {
    let dir = match project {
        Some(p) if p.join("project.json").exists() || p.file_name().is_some_and(|n| n == "project.json") && p.exists() => p.to_path_buf(),
        Some(p) => {
            return Err(format!(
                "{} is not a Fieldstone project folder (it has no project.json); give a project folder, or a command (see fieldstone --help)",
                p.display()
            ))
        }
        None => match recent_projects()
            .into_iter()
            .find(|p| p.join("project.json").exists())
        {
            Some(p) => p,
            None => demo_project()?,
        },
    };
    let options = eframe::NativeOptions {
        viewport: egui::ViewportBuilder::default()
            .with_title("Fieldstone")
            .with_inner_size([1400.0, 880.0])
            .with_drag_and_drop(true),
        renderer: eframe::Renderer::Glow,
        // The frame-time benchmark measures work, not the wait for vertical sync.
        glow_options: eframe::egui_glow::GlowConfiguration {
            vsync: std::env::var_os("FIELDSTONE_FRAME_LOG").is_none(),
            ..Default::default()
        },
        ..Default::default()
    };
    eframe::run_native(
        "Fieldstone",
        options,
        Box::new(move |cc| {
            setup_fonts(&cc.egui_ctx);
            Ok(Box::new(FieldstoneApp::new(Some(&dir))))
        }),
    )
    .map_err(|e| format!("the window could not open: {e} (Fieldstone needs OpenGL 2 or later; software rendering through Mesa works)"))
}
