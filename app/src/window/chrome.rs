//! The frame around the views: the step list, the status bar, the run log.

use super::*;

impl FieldstoneApp {
    pub(super) fn step_list(&mut self, ui: &mut egui::Ui) {
        ui.add_space(6.0);
        ui.heading("Steps");
        ui.add_space(4.0);
        for step in Step::ALL {
            let (state, colour) = self.ws.state_label(step);
            let selected = self.ws.step == step;
            let summary = self.ws.summary(step);
            let r = ui.selectable_label(selected, RichText::new(step.label()).size(15.0).strong());
            if r.clicked() {
                self.ws.step = step;
            }
            ui.horizontal(|ui| {
                ui.add_space(10.0);
                ui.label(RichText::new(state).color(colour).small());
                ui.label(RichText::new(summary).small().weak());
            });
            ui.add_space(4.0);
        }
        ui.separator();
        if let Some(d) = &self.ws.doc {
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

    pub(super) fn status_bar(&mut self, ui: &mut egui::Ui) {
        ui.horizontal(|ui| {
            match (
                self.ws.hover,
                self.ws.doc.as_ref().and_then(|d| d.project.epsg),
            ) {
                (Some((p, v)), epsg) => {
                    ui.label(format!(
                        "E {:.1} m  N {:.1} m{}",
                        p[0],
                        p[1],
                        epsg.map(|e| format!(" (EPSG:{e})")).unwrap_or_default()
                    ));
                    if let Some(v) = v {
                        ui.separator();
                        ui.label(format!("value {v:.4} {}", self.ws.units));
                    }
                }
                _ => {
                    ui.label("move over the map for coordinates");
                }
            }
            ui.separator();
            match &self.ws.job {
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
            if let Some(d) = &self.ws.doc {
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

    pub(super) fn log_panel(&mut self, ui: &mut egui::Ui) {
        ui.horizontal(|ui| {
            ui.strong("Run log");
            if let Some(j) = &self.ws.job {
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
            .ws
            .log
            .iter()
            .chain(self.ws.job.iter().flat_map(|j| j.lines.iter()))
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
