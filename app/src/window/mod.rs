//! The project window (eframe/egui, glow renderer): a step list down the
//! left, the step's form on the right, its views in the centre, the run log
//! at the bottom, a status bar with the cursor position.

mod canvas;
mod chrome;
mod dialogs;
mod index;
pub mod jobs;
mod menu;
pub mod panels;
mod recent;
pub mod state;
pub mod workspace;

use panels::Panels;
use recent::remember;
pub use recent::{demo_project, recent_projects};
use workspace::Workspace;

use crate::commands::CAUTIONS;
use crate::pipeline::{self, Selection};
use canvas::Textures;
use egui::{Color32, RichText};
use fieldstone_core::project::provenance::StepState;
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

/// Everything the window remembers between frames: what the panels share
/// (the open project, the job, the map), the panels of the steps, and the
/// window's own settings.
pub struct FieldstoneApp {
    pub ws: Workspace,
    pub panels: Panels,
    pub show_log: bool,
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

impl FieldstoneApp {
    /// A window on `project` (or nothing open when it fails, with a message).
    pub fn new(project: Option<&Path>) -> FieldstoneApp {
        Self::with(project, true)
    }

    /// A window on `project`; `remember` adds it to the recent list.
    pub fn with(project: Option<&Path>, remember: bool) -> FieldstoneApp {
        let mut app = FieldstoneApp {
            ws: Workspace::default(),
            panels: Panels::default(),
            show_log: true,
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
                    self.ws.dialog = Some(Dialog::Recover(auto));
                }
                if let Some(why) = &d.read_only {
                    self.ws.log.push(format!("read-only: {why}"));
                }
                self.ws.log.push(format!("opened {}", dir.display()));
                if d.states.iter().all(|(_, st)| *st != StepState::Done) {
                    self.ws.log.push("nothing has been run in this project yet: check each step's form, then press 'Run every scenario' (the full demo takes about 11 minutes on two cores)".into());
                }
                if self.remember_recent {
                    remember(&dir);
                }
                self.ws.doc = Some(d);
                self.ws.map.fitted = false;
                self.ws.scenario = 0;
                self.ws.textures = Textures::default();
                // A new project starts with every panel's choices fresh.
                self.panels = Panels::default();
            }
            Err(e) => {
                self.ws.dialog = Some(Dialog::Error(format!(
                    "could not open {}: {e}",
                    dir.display()
                )))
            }
        }
    }
}

impl eframe::App for FieldstoneApp {
    fn ui(&mut self, ui: &mut egui::Ui, frame: &mut eframe::Frame) {
        let t0 = Instant::now();
        let ctx = ui.ctx().clone();
        self.ws.poll_job();
        if let Some(d) = self.ws.doc.as_mut() {
            d.poll();
            if d.planning() || d.loading() {
                ctx.request_repaint_after(std::time::Duration::from_millis(50));
            }
        }
        if self.ws.job.as_ref().is_some_and(|j| j.running()) {
            ctx.request_repaint_after(std::time::Duration::from_millis(100));
        }
        if ctx.input(|i| i.viewport().close_requested())
            && !self.allow_close
            && self.ws.job.as_ref().is_some_and(|j| j.running())
        {
            ctx.send_viewport_cmd(egui::ViewportCommand::CancelClose);
            self.ws.dialog = Some(Dialog::ConfirmClose);
        }
        self.shortcuts(&ctx);
        if self.last_autosave.elapsed().as_secs() >= 30 {
            self.last_autosave = Instant::now();
            if let Some(d) = &self.ws.doc {
                if let Err(e) = d.autosave() {
                    self.ws.log.push(format!("autosave failed: {e}"));
                }
            }
        }
        let title = format!(
            "Fieldstone — {}",
            self.ws
                .doc
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
                    .show(ui, |ui| self.panels.form(&mut self.ws, ui));
            });
        egui::CentralPanel::default().show(ui, |ui| self.panels.view(&mut self.ws, ui));
        self.dialogs(&ctx);
        let ui_ms = t0.elapsed().as_secs_f64() * 1000.0;
        self.frame_ms = 0.9 * self.frame_ms + 0.1 * ui_ms as f32;
        let running = self.ws.job.as_ref().is_some_and(|j| j.running());
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
        if let Some(j) = self.ws.job.as_mut() {
            j.cancel();
            j.wait();
        }
        if let Some(d) = &self.ws.doc {
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
