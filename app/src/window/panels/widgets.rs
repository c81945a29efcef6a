//! Small pieces the forms share: warnings beside a field, numbers with
//! units, the contour switch, the map controls, the scenario chooser.

use super::grids::GridName;
use super::Workspace;
use egui::{Color32, RichText, Ui};
use fieldstone_core::invert::InversionSettings;
use fieldstone_core::project::file::{DataKind, ProjectFile, Scenario};

pub fn warn(ui: &mut Ui, m: impl Into<String>) {
    ui.label(
        RichText::new(m.into())
            .color(Color32::from_rgb(180, 60, 20))
            .small(),
    );
}

pub fn num(ui: &mut Ui, label: &str, v: &mut f64, speed: f64, unit: &str) {
    ui.horizontal(|ui| {
        ui.label(label);
        ui.add(
            egui::DragValue::new(v)
                .speed(speed)
                .suffix(format!(" {unit}")),
        );
    });
}

pub fn opt_num(ui: &mut Ui, label: &str, v: &mut Option<f64>, default: f64, unit: &str) {
    ui.horizontal(|ui| {
        let mut on = v.is_some();
        if ui.checkbox(&mut on, label).changed() {
            *v = if on { Some(default) } else { None };
        }
        if let Some(x) = v.as_mut() {
            ui.add(
                egui::DragValue::new(x)
                    .speed(0.01)
                    .suffix(format!(" {unit}")),
            );
        }
    });
}

/// Contours on or off, with an interval (blank: automatic).
pub fn contour_control(ui: &mut Ui, c: &mut Option<f64>) {
    ui.horizontal(|ui| {
        let mut on = c.is_some();
        if ui.checkbox(&mut on, "Contours").changed() {
            *c = on.then_some(f64::NAN);
        }
        if let Some(v) = c.as_mut() {
            let mut t = if v.is_finite() {
                format!("{v}")
            } else {
                String::new()
            };
            let r = ui.add(
                egui::TextEdit::singleline(&mut t)
                    .hint_text("auto")
                    .desired_width(60.0),
            );
            if r.changed() {
                *v = match t.trim().parse::<f64>() {
                    Ok(x) if x.is_finite() && x > 0.0 => x,
                    _ => f64::NAN,
                };
            }
            ui.label("interval");
        }
    });
}

/// The grid a map shows (of `choices`, those the project has), hillshade,
/// colour stretch and contours.
pub fn map_controls(ws: &mut Workspace, ui: &mut Ui, grid: &mut GridName, choices: &[GridName]) {
    ui.separator();
    ui.label("Map");
    let avail: Vec<GridName> = ws
        .doc
        .as_ref()
        .map(|d| {
            choices
                .iter()
                .filter(|c| d.views.grids.contains_key(c.key()))
                .cloned()
                .collect()
        })
        .unwrap_or_default();
    if !avail.contains(grid) {
        if let Some(f) = avail.first() {
            *grid = f.clone();
        }
    }
    egui::ComboBox::from_label("grid shown")
        .selected_text(grid.key())
        .show_ui(ui, |ui| {
            for c in avail {
                let label = c.key().to_string();
                ui.selectable_value(grid, c, label);
            }
        });
    ui.checkbox(&mut ws.display.hillshade, "Hillshade");
    ui.checkbox(&mut ws.display.equalise, "Histogram equalisation");
    contour_control(ui, &mut ws.display.contours);
}

/// The scenario chooser, with a name field to make, copy or rename one.
pub fn scenario_picker(
    ws: &mut Workspace,
    ui: &mut Ui,
    p: &mut ProjectFile,
    new_name: &mut String,
) {
    ui.horizontal(|ui| {
        egui::ComboBox::from_label("scenario")
            .selected_text(
                p.scenarios
                    .get(ws.scenario)
                    .map(|s| s.name.clone())
                    .unwrap_or_else(|| "none".into()),
            )
            .show_ui(ui, |ui| {
                for (i, s) in p.scenarios.iter().enumerate() {
                    ui.selectable_value(&mut ws.scenario, i, &s.name);
                }
            });
    });
    ui.horizontal(|ui| {
        ui.add(
            egui::TextEdit::singleline(new_name)
                .desired_width(120.0)
                .hint_text("name"),
        );
        let name = new_name.trim().to_string();
        let taken = p.scenarios.iter().any(|s| s.name == name);
        ui.add_enabled_ui(!name.is_empty() && !taken, |ui| {
            if ui.button("New").clicked() {
                p.scenarios.push(Scenario {
                    name: name.clone(),
                    data: DataKind::Gravity,
                    operator: Default::default(),
                    layers: vec![],
                    settings: InversionSettings::default(),
                    fft_heights: Default::default(),
                    appraisal: None,
                });
                ws.scenario = p.scenarios.len() - 1;
            }
            if ui.button("Copy").clicked() {
                if let Some(s) = p.scenarios.get(ws.scenario).cloned() {
                    p.scenarios.push(Scenario {
                        name: name.clone(),
                        ..s
                    });
                    ws.scenario = p.scenarios.len() - 1;
                }
            }
            if ui.button("Rename").clicked() {
                if let Some(s) = p.scenarios.get_mut(ws.scenario) {
                    s.name = name.clone();
                }
            }
        });
        if taken {
            warn(ui, "that name is taken");
        }
    });
}
