//! One panel per step of the workflow: its form on the right and its views
//! in the centre, with the state it keeps between frames. Panels share the
//! [`Workspace`] (the open project, the job, the map frame, the display
//! settings); each owns its own choices (the line inspected, the grid or
//! array shown, the layer edited, the result view).
//!
//! A form edits a copy of the project; the copy is committed once after the
//! frame (one undo step for edits within a moment of each other).

mod appraise_form;
pub mod constraints;
pub mod corrections;
pub mod grids;
pub mod import_form;
mod layer_editor;
mod maps;
pub mod model_space;
pub mod regional;
pub mod results;
pub mod runs;
pub mod survey;
mod widgets;

use super::workspace::Workspace;
use super::Step;
use crate::pipeline::Selection;
use egui::{Color32, RichText, Ui};

pub use constraints::{ConstraintArray, ConstraintsPanel};
pub use corrections::CorrectionsPanel;
pub use grids::{GridName, GridsPanel};
pub use import_form::{ImportForm, Preview, SurveyKind};
pub use model_space::ModelSpacePanel;
pub use regional::RegionalPanel;
pub use results::{ResultView, ResultsPanel};
pub use runs::RunsPanel;
pub use survey::{SurveyPanel, SurveyTable};

/// The panels of the eight steps.
#[derive(Default)]
pub struct Panels {
    pub survey: SurveyPanel,
    pub corrections: CorrectionsPanel,
    pub grids: GridsPanel,
    pub regional: RegionalPanel,
    pub model_space: ModelSpacePanel,
    pub constraints: ConstraintsPanel,
    pub runs: RunsPanel,
    pub results: ResultsPanel,
}

impl Panels {
    /// The form of the current step, then the run buttons; commits the
    /// form's edits to the project.
    pub fn form(&mut self, ws: &mut Workspace, ui: &mut Ui) {
        let Some(doc) = ws.doc.as_ref() else {
            ui.label("No project is open. Use Project → Open…, or drop a project folder here.");
            return;
        };
        if let Some(why) = &doc.read_only {
            widgets::warn(ui, format!("Read-only: {why}"));
        }
        let mut p = doc.project.clone();
        let doc_dir = doc.dir.clone();
        ui.heading(ws.step.label());
        ui.add_space(4.0);
        let running = ws.busy();
        let mut run_request: Option<(Selection, bool)> = None;
        match ws.step {
            Step::Survey => self.survey.form(ws, ui, &mut p),
            Step::Corrections => self.corrections.form(ui, &doc_dir, &mut p),
            Step::Grids => self.grids.form(ws, ui, &mut p),
            Step::Regional => self.regional.form(ws, ui, &mut p),
            Step::ModelSpace => self.model_space.form(ws, ui, &mut p),
            Step::Constraints => self.constraints.form(ws, ui, &mut p),
            Step::Runs => self.runs.form(ws, ui, &mut p, &mut run_request),
            Step::Results => self.results.form(ws, ui),
        }
        ui.separator();
        ui.add_enabled_ui(!running, |ui| {
            if matches!(
                ws.step,
                Step::Survey | Step::Corrections | Step::Grids | Step::Regional | Step::ModelSpace
            ) && ui.button("Run the steps up to the model space").clicked()
            {
                run_request = Some((Selection::None, false));
            }
            if ui.button("Run every scenario").clicked() {
                run_request = Some((Selection::All, false));
            }
        });
        ws.commit(p);
        if let Some((sel, force)) = run_request {
            let ctx = ui.ctx().clone();
            ws.start_pipeline(sel, force, Some(ctx));
        }
    }

    /// The views of the current step.
    pub fn view(&mut self, ws: &mut Workspace, ui: &mut Ui) {
        let Some(d) = &ws.doc else {
            ui.centered_and_justified(|ui| {
                ui.label(
                    "Open a project (Project → Open…) or drop a project folder onto the window.",
                )
            });
            return;
        };
        if d.loading() {
            ui.horizontal(|ui| {
                ui.spinner();
                ui.label("reading the project's tables, grids and runs…");
            });
            return;
        }
        for p in d.views.problems.iter().take(3) {
            ui.label(
                RichText::new(p)
                    .color(Color32::from_rgb(170, 60, 20))
                    .small(),
            );
        }
        match ws.step {
            Step::Survey => self.survey.view(ws, ui, SurveyTable::Raw),
            // The corrections are checked on the survey's own map and
            // profile, with the reduced anomalies.
            Step::Corrections => self.survey.view(ws, ui, SurveyTable::Reduced),
            Step::Grids => grids::grid_view(ws, ui, &self.grids.grid),
            Step::Regional => grids::grid_view(ws, ui, &self.regional.grid),
            Step::ModelSpace => self.model_space.view(ws, ui),
            Step::Constraints => self.constraints.view(ws, ui),
            Step::Runs => runs::run_log(ws, ui),
            Step::Results => self.results.view(ws, ui),
        }
    }
}
