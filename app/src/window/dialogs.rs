//! Modal dialogs: errors, confirmations, the autosave offer.

use super::*;

impl FieldstoneApp {
    pub(super) fn dialogs(&mut self, ctx: &egui::Context) {
        let Some(d) = self.ws.dialog.clone() else {
            return;
        };
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
                            if let Some(j) = self.ws.job.as_mut() {
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
                            if let (Some(doc), Ok(text)) = (self.ws.doc.as_mut(), std::fs::read_to_string(path)) {
                                match serde_json::from_str(&text) {
                                    Ok(p) => {
                                        doc.before_edit();
                                        doc.project = p;
                                        doc.changed();
                                        self.ws.log.push("recovered the autosaved changes (not saved yet)".into());
                                    }
                                    Err(e) => self.ws.log.push(format!("the autosave could not be read: {e}")),
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
            self.ws.dialog = None;
        }
    }
}
