//! The Runs step: a scenario's inversion settings and appraisal, the run
//! buttons, and the run log (misfit and model objective by iteration).

use super::widgets::{num, scenario_picker, warn};
use super::Workspace;
use crate::pipeline::Selection;
use egui::{RichText, Ui};
use egui_plot::{HLine, Legend, Line, Plot};
use fieldstone_core::invert::{IterationRecord, Weighting};
use fieldstone_core::project::file::{DataKind, ProjectFile};

/// The Runs step's own state: the name field of the scenario chooser.
#[derive(Default)]
pub struct RunsPanel {
    pub new_scenario_name: String,
}

impl RunsPanel {
    pub fn form(
        &mut self,
        ws: &mut Workspace,
        ui: &mut Ui,
        p: &mut ProjectFile,
        run: &mut Option<(Selection, bool)>,
    ) {
        scenario_picker(ws, ui, p, &mut self.new_scenario_name);
        let Some(s) = p.scenarios.get_mut(ws.scenario) else {
            return;
        };
        // The run buttons first: the settings below can be long.
        let name = s.name.clone();
        let running = ws.job.as_ref().is_some_and(|j| j.running());
        ui.horizontal(|ui| {
            if ui.add_enabled(!running, egui::Button::new("Run")).clicked() {
                *run = Some((Selection::Named(name.clone()), false));
            }
            if ui
                .add_enabled(!running, egui::Button::new("Rerun from scratch"))
                .clicked()
            {
                *run = Some((Selection::Named(name.clone()), true));
            }
            if ui
                .add_enabled(running, egui::Button::new("Cancel"))
                .clicked()
            {
                if let Some(j) = &ws.job {
                    j.cancel();
                }
            }
        });
        ui.separator();
        ui.horizontal(|ui| {
            ui.radio_value(&mut s.data, DataKind::Gravity, "gravity → density");
            ui.radio_value(
                &mut s.data,
                DataKind::Magnetic,
                "magnetics → susceptibility",
            );
        });
        let st = &mut s.settings;
        ui.label(
            format!(
                "operator: {:?} (dense when it fits in memory, otherwise FFT on uniform meshes)",
                s.operator
            )
            .to_lowercase(),
        );
        num(ui, "Target chi-factor", &mut st.chi_factor, 0.01, "");
        num(ui, "Smallness α_s", &mut st.alpha_s, 1e-5, "");
        num(ui, "Smoothness α_x", &mut st.alpha_x, 0.05, "");
        num(ui, "Smoothness α_y", &mut st.alpha_y, 0.05, "");
        num(ui, "Smoothness α_z", &mut st.alpha_z, 0.05, "");
        let mut w = match st.weighting {
            Weighting::Depth { .. } => 0,
            Weighting::Sensitivity => 1,
            Weighting::None => 2,
        };
        ui.horizontal(|ui| {
            ui.radio_value(&mut w, 0, "depth weighting");
            ui.radio_value(&mut w, 1, "sensitivity weighting");
            ui.radio_value(&mut w, 2, "none");
        });
        st.weighting = match (w, st.weighting) {
            (0, Weighting::Depth { exponent_q }) => Weighting::Depth { exponent_q },
            (0, _) => Weighting::Depth {
                exponent_q: if s.data == DataKind::Magnetic {
                    3.0
                } else {
                    2.0
                },
            },
            (1, _) => Weighting::Sensitivity,
            _ => Weighting::None,
        };
        ui.label("Focusing norms p (0 compact … 2 smooth): smallness, x, y, z");
        ui.horizontal(|ui| {
            for v in st.norms.iter_mut() {
                ui.add(egui::DragValue::new(v).speed(0.05).range(0.0..=2.0));
            }
        });
        ui.add(egui::Slider::new(&mut st.max_beta_iterations, 1..=60).text("β iterations at most"));
        ui.add(egui::Slider::new(&mut st.max_cg, 5..=400).text("CG iterations per step"));
        if st.chi_factor <= 0.0 || st.alpha_s < 0.0 {
            warn(ui, "the target and weights must be positive");
        }
        // The middle third of the core, top half of its depth: the first box of
        // a new feature test.
        let default_box = ws
            .doc
            .as_ref()
            .and_then(|d| d.views.model.as_ref())
            .map(|m| {
                let mesh = &m.mesh;
                let third = |nodes: &[f64], (a, b): (usize, usize)| {
                    let (lo, hi) = (nodes[a], nodes[b]);
                    [lo + (hi - lo) / 3.0, lo + 2.0 * (hi - lo) / 3.0]
                };
                let (za, zb) = mesh.core[2];
                let (zlo, ztop) = (mesh.z[za], mesh.z[zb]);
                [
                    third(&mesh.x, mesh.core[0]),
                    third(&mesh.y, mesh.core[1]),
                    [ztop - 0.5 * (ztop - zlo), ztop],
                ]
            });
        super::appraise_form::show(ui, s, default_box);
    }
}

fn iterations_of(ws: &Workspace) -> Vec<IterationRecord> {
    if let Some(j) = &ws.job {
        if !j.iterations.is_empty() {
            return j.iterations.clone();
        }
    }
    let name = ws.scenario_name();
    ws.doc
        .as_ref()
        .and_then(|d| d.views.runs.get(&name))
        .map(|r| r.log.clone())
        .filter(|l| !l.is_empty())
        .unwrap_or_else(|| ws.last_iterations.clone())
}

pub fn run_log(ws: &mut Workspace, ui: &mut Ui) {
    let its = iterations_of(ws);
    let target = ws
        .doc
        .as_ref()
        .and_then(|d| d.views.runs.get(&ws.scenario_name()))
        .map(|r| r.file.summary.target_phi_d);
    ui.label(
        RichText::new(format!(
            "run log of '{}': φ_d and φ_m by iteration",
            ws.scenario_name()
        ))
        .weak(),
    );
    let h = ui.available_height();
    Plot::new("phi")
        .legend(Legend::default())
        .height(h * 0.45)
        .x_axis_label("iteration")
        .y_axis_label("log10 of φ")
        .show(ui, |p| {
            let l = |f: &dyn Fn(&IterationRecord) -> f64| {
                its.iter()
                    .map(|r| [r.iteration as f64, f(r).max(1e-300).log10()])
                    .collect::<Vec<_>>()
            };
            p.line(Line::new("φ_d (data misfit)", l(&|r| r.phi_d)));
            p.line(Line::new("φ_m (model objective)", l(&|r| r.phi_m)));
            if let Some(t) = target {
                p.hline(HLine::new("target φ_d", t.log10()));
            }
        });
    egui::ScrollArea::vertical()
        .auto_shrink([false, false])
        .show(ui, |ui| {
            egui::Grid::new("iterations").striped(true).show(ui, |ui| {
                for h in [
                    "iteration",
                    "β",
                    "φ_d",
                    "φ_m",
                    "chi-factor",
                    "CG",
                    "at lower",
                    "at upper",
                    "elapsed s",
                ] {
                    ui.strong(h);
                }
                ui.end_row();
                for r in &its {
                    ui.label(r.iteration.to_string());
                    ui.label(format!("{:.3e}", r.beta));
                    ui.label(format!("{:.4e}", r.phi_d));
                    ui.label(format!("{:.4e}", r.phi_m));
                    ui.label(format!("{:.3}", r.chi_factor));
                    ui.label(r.cg_iterations.to_string());
                    ui.label(r.at_lower.to_string());
                    ui.label(r.at_upper.to_string());
                    ui.label(format!("{:.1}", r.elapsed_s));
                    ui.end_row();
                }
            });
        });
}
