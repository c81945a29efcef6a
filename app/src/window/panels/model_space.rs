//! The Model space step: the mesh recipe with its size and memory
//! estimate, and the active cells as a plan slice and a section.

use super::maps::{section_decor, slice_map};
use super::widgets::{num, warn};
use super::Workspace;
use crate::window::canvas::{self, Colouring};
use egui::{Color32, RichText, Ui};
use fieldstone_core::export::section::{section, SectionSample};
use fieldstone_core::mesh::recipe::Padding;
use fieldstone_core::mesh::size::estimate;
use fieldstone_core::project::file::ProjectFile;

/// The Model space step keeps its views' values while the mesh recipe and
/// the terrain stay the same.
#[derive(Default)]
pub struct ModelSpacePanel {
    cache: Option<ModelSpaceCache>,
}

impl ModelSpacePanel {
    pub fn form(&mut self, ws: &mut Workspace, ui: &mut Ui, p: &mut ProjectFile) {
        let Some(r) = p.mesh.as_mut() else {
            ui.label("No mesh recipe yet.");
            if ui.button("Make one from the survey").clicked() {
                if let Some(raw) = ws.doc.as_ref().and_then(|d| d.views.gravity_raw.clone()) {
                    let (x0, x1) = raw
                        .x
                        .iter()
                        .fold((f64::INFINITY, f64::NEG_INFINITY), |a, v| {
                            (a.0.min(*v), a.1.max(*v))
                        });
                    let (y0, y1) = raw
                        .y
                        .iter()
                        .fold((f64::INFINITY, f64::NEG_INFINITY), |a, v| {
                            (a.0.min(*v), a.1.max(*v))
                        });
                    let top = raw
                        .column("height_m")
                        .map(|h| h.iter().cloned().fold(f64::NEG_INFINITY, f64::max))
                        .unwrap_or(0.0);
                    p.mesh = Some(
                        fieldstone_core::mesh::recipe::default_recipe(
                            [x0, x1],
                            [y0, y1],
                            25.0,
                            top,
                        )
                        .0,
                    );
                }
            }
            return;
        };
        num(ui, "Core cell east-west", &mut r.cell_xy_m[0], 0.5, "m");
        num(ui, "Core cell north-south", &mut r.cell_xy_m[1], 0.5, "m");
        num(ui, "Top layer thickness", &mut r.cell_z_m, 0.5, "m");
        num(ui, "Layer growth factor", &mut r.z_growth, 0.01, "");
        num(ui, "Depth of the core", &mut r.depth_m, 10.0, "m");
        num(ui, "Top of the mesh", &mut r.top_m, 1.0, "m");
        let mut uniform = matches!(r.padding, Padding::Uniform { .. });
        ui.checkbox(
            &mut uniform,
            "Uniform padding (keeps the FFT operator available)",
        );
        r.padding = match (uniform, r.padding) {
            (true, Padding::Uniform { cells }) => Padding::Uniform { cells },
            (true, Padding::Expanding { cells, .. }) => Padding::Uniform { cells },
            (false, Padding::Expanding { cells, factor }) => Padding::Expanding { cells, factor },
            (false, Padding::Uniform { cells }) => Padding::Expanding { cells, factor: 1.4 },
        };
        match &mut r.padding {
            Padding::Expanding { cells, factor } => {
                ui.add(egui::Slider::new(cells, 0..=20).text("padding cells"));
                num(ui, "padding growth", factor, 0.01, "");
            }
            Padding::Uniform { cells } => {
                ui.add(egui::Slider::new(cells, 0..=40).text("padding cells"));
            }
        }
        match r.shape() {
            Ok([a, b, c]) => {
                let n_data = ws
                    .doc
                    .as_ref()
                    .and_then(|d| d.views.data_counts.get("gravity").copied())
                    .unwrap_or(0);
                let active_guess = ws
                    .doc
                    .as_ref()
                    .and_then(|d| d.views.model.as_ref())
                    .map(|m| m.active.count() as f64 / m.mesh.n_cells().max(1) as f64)
                    .unwrap_or(1.0);
                let n = a * b * c;
                let e = estimate(
                    n,
                    (n as f64 * active_guess) as usize,
                    n_data,
                    Some(fieldstone_core::memory::available_or_assumed()),
                );
                ui.label(format!(
                    "{a} × {b} × {c} = {n} cells (about {} active)",
                    e.active_cells
                ));
                ui.label(format!(
                    "dense sensitivity for {} data: {:.0} MB{}",
                    n_data,
                    e.dense_bytes as f64 / 1e6,
                    e.available_bytes
                        .map(|b| format!(" of {:.1} GB available", b as f64 / 1e9))
                        .unwrap_or_default()
                ));
                ui.label(
                    RichText::new(format!(
                        "time per CG iteration about {:.0} ms (two products at about 10 GB/s)",
                        2.0 * e.dense_bytes as f64 / 1e7
                    ))
                    .small()
                    .weak(),
                );
                if !e.fits {
                    warn(
                        ui,
                        format!("does not fit in memory: {}", e.advice.join("; ")),
                    );
                }
            }
            Err(err) => warn(ui, err.to_string()),
        }
    }
}

/// The active-cell values, colouring, section and terrain of the views,
/// for one mesh recipe and terrain (recomputing them every frame took most
/// of the frame's build time).
struct ModelSpaceCache {
    key: String,
    act: Vec<f64>,
    colouring: Colouring,
    section: Vec<SectionSample>,
    terrain: Vec<[f64; 2]>,
}

impl ModelSpacePanel {
    pub fn view(&mut self, ws: &mut Workspace, ui: &mut Ui) {
        let Some(m) = ws.doc.as_ref().and_then(|d| d.views.model.as_ref()) else {
            ui.label("No mesh: set a recipe in the form.");
            return;
        };
        let key = ws.doc.as_ref().map_or(String::new(), |d| {
            fieldstone_core::project::provenance::hash_json(&(&d.project.mesh, &d.project.dem))
        });
        if self.cache.as_ref().is_none_or(|c| c.key != key) {
            let act = m.active.as_values();
            let (x, y) = (&m.mesh.x, &m.mesh.y);
            let [(i0, _), (j0, j1), _] = m.mesh.core;
            let yc = 0.5 * (y[j0] + y[j1]);
            let line = [[x[0], yc], [x[x.len() - 1], yc]];
            let step = (x[i0 + 1] - x[i0]).max(1.0);
            let section = section(&m.mesh, &act, &line, step).unwrap_or_default();
            let terrain = crate::pipeline::terrain_along(m, &section);
            self.cache = Some(ModelSpaceCache {
                key,
                colouring: Colouring::for_values(&act, false),
                act,
                section,
                terrain,
            });
        }
        let Some(cache) = self.cache.as_ref() else {
            return;
        };
        let act = &cache.act;
        let mesh = m.mesh.clone();
        let (x, y) = (&mesh.x, &mesh.y);
        let [(i0, i1), (j0, j1), _] = mesh.core;
        let outline =
            |a: f64, b: f64, c: f64, d: f64, col| (vec![[a, c], [b, c], [b, d], [a, d]], col, true);
        let extra = vec![
            outline(x[i0], x[i1], y[j0], y[j1], Color32::from_rgb(20, 20, 160)),
            outline(
                x[0],
                x[x.len() - 1],
                y[0],
                y[y.len() - 1],
                Color32::from_rgb(120, 120, 120),
            ),
        ];
        let h = ui.available_height();
        ui.label(
            RichText::new("active cells (1) and air (0) at the slice; blue: core, grey: padding")
                .weak(),
        );
        ui.allocate_ui(egui::vec2(ui.available_width(), h * 0.55), |ui| {
            slice_map(
                ws,
                ui,
                &format!("active-{}", cache.key),
                act,
                "active",
                extra,
            );
        });
        let yc = 0.5 * (y[j0] + y[j1]);
        let line = [[x[0], yc], [x[x.len() - 1], yc]];
        if let Some(m) = ws.doc.as_ref().and_then(|d| d.views.model.as_ref()) {
            let (s, terrain) = (&cache.section, &cache.terrain);
            ui.label(
                RichText::new(
                    "east-west section through the middle of the core, including padding",
                )
                .weak(),
            );
            let decor = section_decor(ws, &line, true, false);
            canvas::section(
                ui,
                s,
                &m.mesh.z,
                terrain,
                &cache.colouring,
                "active",
                1.0,
                &decor,
            );
        }
    }
}
