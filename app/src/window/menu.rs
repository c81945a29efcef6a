//! The menu bar, saving, undo and redo, keyboard shortcuts.

use super::*;

impl FieldstoneApp {
    pub(super) fn menu(&mut self, ui: &mut egui::Ui) {
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
                        Err(e) => self.ws.dialog = Some(Dialog::Error(e)),
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
                            Err(e) => self.ws.dialog = Some(Dialog::Error(e.to_string())),
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
                    self.ws.step = Step::Results;
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
                    self.ws.map.fitted = false;
                }
            });
            ui.menu_button("Help", |ui| {
                if ui.button("About").clicked() {
                    self.ws.dialog = Some(Dialog::About);
                }
                if ui.button("Keyboard shortcuts").clicked() {
                    self.ws.dialog = Some(Dialog::Shortcuts);
                }
                if ui.button("Cautions").clicked() {
                    self.ws.dialog = Some(Dialog::Cautions);
                }
            });
        });
    }

    pub fn save(&mut self) {
        if let Some(d) = self.ws.doc.as_mut() {
            match d.save() {
                Ok(()) => self
                    .ws
                    .log
                    .push(format!("saved {}", d.dir.join("project.json").display())),
                Err(e) => self.ws.dialog = Some(Dialog::Error(e)),
            }
        }
    }

    pub(super) fn save_as(&mut self, to: &Path) {
        let Some(d) = self.ws.doc.as_ref() else {
            return;
        };
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
                self.ws.dialog = Some(Dialog::Error(format!(
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
            Err(e) => self.ws.dialog = Some(Dialog::Error(e.to_string())),
        }
    }

    pub(super) fn undo(&mut self, redo: bool) {
        if let Some(d) = self.ws.doc.as_mut() {
            let done = if redo { d.redo() } else { d.undo() };
            if done {
                d.changed();
            }
        }
    }

    pub(super) fn shortcuts(&mut self, ctx: &egui::Context) {
        let (s, z, y, f5) = ctx.input(|i| {
            (
                i.modifiers.command && i.key_pressed(egui::Key::S),
                i.modifiers.command && i.key_pressed(egui::Key::Z),
                i.modifiers.command && i.key_pressed(egui::Key::Y),
                i.key_pressed(egui::Key::F5),
            )
        });
        if f5 && !self.ws.job.as_ref().is_some_and(|j| j.running()) {
            let name = self.ws.scenario_name();
            if !name.is_empty() {
                self.ws
                    .start_pipeline(Selection::Named(name), false, Some(ctx.clone()));
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
                self.ws.step = Step::Survey;
                self.panels.survey.import.add(p.display().to_string());
            } else {
                self.ws.log.push(format!(
                    "{} is not a project folder or a table; drop a project folder or a CSV file",
                    p.display()
                ));
            }
        }
    }
}
