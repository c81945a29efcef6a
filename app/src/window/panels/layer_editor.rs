//! The editor of one constraint layer: its region (whole volume, above or
//! below a surface, polygon, box, wireframe, drill holes) and what it
//! assigns there.

use super::widgets::{num, opt_num, warn};
use egui::{RichText, Ui};
use fieldstone_core::constraint::build::{Assignments, Contact, ContactAlong, Layer};
use fieldstone_core::constraint::region::{Level, Region};

pub fn layer_editor(ui: &mut Ui, l: &mut Layer, surfaces: &[String], wireframes: &[String]) {
    ui.horizontal(|ui| {
        ui.label("Name");
        ui.text_edit_singleline(&mut l.name);
    });
    let kinds = [
        "whole volume",
        "above a surface",
        "below a surface",
        "polygon",
        "box",
        "wireframe",
        "drill holes",
        "outline from a file",
    ];
    let mut k = match &l.region {
        Region::Whole => 0,
        Region::AboveSurface { .. } => 1,
        Region::BelowSurface { .. } => 2,
        Region::Polygon { .. } => 3,
        Region::Box { .. } => 4,
        Region::Wireframe { .. } => 5,
        Region::DrillHoles { .. } => 6,
        Region::Outline { .. } => 7,
        _ => 0,
    };
    let before = k;
    egui::ComboBox::from_label("region")
        .selected_text(kinds[k])
        .show_ui(ui, |ui| {
            for (i, n) in kinds.iter().enumerate() {
                ui.selectable_value(&mut k, i, *n);
            }
        });
    let first = |v: &[String]| v.first().cloned().unwrap_or_default();
    if k != before {
        l.region = match k {
            0 => Region::Whole,
            1 => Region::AboveSurface {
                surface: first(surfaces),
            },
            2 => Region::BelowSurface {
                surface: first(surfaces),
            },
            3 => Region::Polygon {
                vertices: vec![],
                top: Level::Elevation { z_m: 400.0 },
                bottom: Level::Elevation { z_m: 0.0 },
            },
            4 => Region::Box {
                x: [0.0, 100.0],
                y: [0.0, 100.0],
                z: [0.0, 100.0],
            },
            5 => Region::Wireframe {
                name: first(wireframes),
            },
            6 => Region::DrillHoles {
                radius_m: 40.0,
                decay: true,
            },
            // Outlines come from "Add outlines from a file…"; an empty one
            // is refused with that advice when the constraints are built.
            _ => Region::Outline {
                source: String::new(),
                parts: Vec::new(),
                top: Level::Elevation { z_m: 400.0 },
                bottom: Level::Elevation { z_m: 0.0 },
            },
        };
    }
    match &mut l.region {
        Region::AboveSurface { surface } | Region::BelowSurface { surface } => {
            egui::ComboBox::from_label("surface")
                .selected_text(surface.clone())
                .show_ui(ui, |ui| {
                    for s in surfaces {
                        ui.selectable_value(surface, s.clone(), s);
                    }
                });
        }
        Region::Polygon {
            vertices,
            top,
            bottom,
        } => {
            ui.label(format!("{} vertices (draw on the map)", vertices.len()));
            for (lv, name) in [(top, "top"), (bottom, "bottom")] {
                if let Level::Elevation { z_m } = lv {
                    num(ui, &format!("{name} elevation"), z_m, 1.0, "m");
                }
            }
        }
        Region::Outline {
            source,
            parts,
            top,
            bottom,
        } => {
            if parts.is_empty() {
                warn(
                    ui,
                    "no outline yet: use \"Add outlines from a file…\" above",
                );
            } else {
                let holes: usize = parts.iter().map(|q| q.holes.len()).sum();
                let area: f64 = parts.iter().map(|q| q.area()).sum();
                ui.label(format!(
                    "{source}: {} polygon(s), {holes} hole(s), {:.3} km²",
                    parts.len(),
                    area / 1e6
                ));
            }
            for (lv, name) in [(top, "top"), (bottom, "bottom")] {
                if let Level::Elevation { z_m } = lv {
                    num(ui, &format!("{name} elevation"), z_m, 1.0, "m");
                }
            }
        }
        Region::Box { x, y, z } => {
            for (v, n) in [(x, "east"), (y, "north"), (z, "elevation")] {
                ui.horizontal(|ui| {
                    ui.label(n);
                    ui.add(egui::DragValue::new(&mut v[0]).speed(5.0));
                    ui.label("to");
                    ui.add(egui::DragValue::new(&mut v[1]).speed(5.0));
                });
            }
        }
        Region::Wireframe { name } => {
            egui::ComboBox::from_label("wireframe")
                .selected_text(name.clone())
                .show_ui(ui, |ui| {
                    for s in wireframes {
                        ui.selectable_value(name, s.clone(), s);
                    }
                });
        }
        Region::DrillHoles { radius_m, decay } => {
            num(ui, "radius", radius_m, 1.0, "m");
            ui.checkbox(decay, "weight falls to 0 at the radius");
        }
        _ => {}
    }
    let a: &mut Assignments = &mut l.assign;
    ui.label(RichText::new("Assignments").strong());
    opt_num(ui, "Lower bound", &mut a.lower, 0.0, "");
    opt_num(ui, "Upper bound", &mut a.upper, 0.3, "");
    if let (Some(lo), Some(hi)) = (a.lower, a.upper) {
        if lo > hi {
            warn(ui, "the lower bound is above the upper bound");
        }
    }
    opt_num(ui, "Reference value", &mut a.reference, 0.0, "");
    opt_num(ui, "Reference weight", &mut a.reference_weight, 1.0, "");
    opt_num(ui, "Starting value", &mut a.starting, 0.0, "");
    ui.checkbox(&mut a.fixed, "Fixed at the starting value");
    let mut has_s = a.smoothness.is_some();
    if ui
        .checkbox(
            &mut has_s,
            "Smoothness factors (east-west, north-south, vertical)",
        )
        .changed()
    {
        a.smoothness = has_s.then_some([1.0, 1.0, 1.0]);
    }
    if let Some(s) = a.smoothness.as_mut() {
        ui.horizontal(|ui| {
            for v in s.iter_mut() {
                ui.add(egui::DragValue::new(v).speed(0.05).range(0.0..=100.0));
            }
        });
    }
    let mut contact = a.sharp_contact.is_some();
    if ui
        .checkbox(&mut contact, "Sharp contact at the region boundary")
        .changed()
    {
        a.sharp_contact = contact.then_some(Contact {
            factor: 0.05,
            along: ContactAlong::RegionBoundary,
        });
    }
    if let Some(c) = a.sharp_contact.as_mut() {
        num(ui, "smoothness across it ×", &mut c.factor, 0.01, "");
    }
}
