//! The Constraints step: a scenario's layers (bounds, reference, weights,
//! smoothness, fixed cells by region), polygons drawn on the map, and a
//! plan slice of any of the arrays they build.

use super::layer_editor::layer_editor;
use super::maps::slice_map;
use super::widgets::{scenario_picker, warn};
use super::Workspace;
use egui::{Color32, RichText, Ui};
use fieldstone_core::constraint::build::{Assignments, ConstraintArrays, Layer};
use fieldstone_core::constraint::region::{Level, Region};
use fieldstone_core::outline::{read_outlines, Outline};
use fieldstone_core::project::file::ProjectFile;

/// An array the constraint layers build, shown as a plan slice.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum ConstraintArray {
    LowerBound,
    UpperBound,
    Reference,
    ReferenceWeight,
    Starting,
    Fixed,
    SmoothnessX,
    SmoothnessY,
    SmoothnessZ,
    ReferenceGradientX,
    ReferenceGradientY,
    ReferenceGradientZ,
}

impl ConstraintArray {
    pub const ALL: [ConstraintArray; 12] = [
        ConstraintArray::LowerBound,
        ConstraintArray::UpperBound,
        ConstraintArray::Reference,
        ConstraintArray::ReferenceWeight,
        ConstraintArray::Starting,
        ConstraintArray::Fixed,
        ConstraintArray::SmoothnessX,
        ConstraintArray::SmoothnessY,
        ConstraintArray::SmoothnessZ,
        ConstraintArray::ReferenceGradientX,
        ConstraintArray::ReferenceGradientY,
        ConstraintArray::ReferenceGradientZ,
    ];

    /// The array's name (as the constraint arrays are written out).
    pub fn key(self) -> &'static str {
        match self {
            ConstraintArray::LowerBound => "lower_bound",
            ConstraintArray::UpperBound => "upper_bound",
            ConstraintArray::Reference => "reference",
            ConstraintArray::ReferenceWeight => "reference_weight",
            ConstraintArray::Starting => "starting",
            ConstraintArray::Fixed => "fixed",
            ConstraintArray::SmoothnessX => "smoothness_x",
            ConstraintArray::SmoothnessY => "smoothness_y",
            ConstraintArray::SmoothnessZ => "smoothness_z",
            ConstraintArray::ReferenceGradientX => "reference_gradient_x",
            ConstraintArray::ReferenceGradientY => "reference_gradient_y",
            ConstraintArray::ReferenceGradientZ => "reference_gradient_z",
        }
    }

    /// True for arrays on cell faces (shown on the cells beside each face).
    fn on_faces(self) -> bool {
        !matches!(
            self,
            ConstraintArray::LowerBound
                | ConstraintArray::UpperBound
                | ConstraintArray::Reference
                | ConstraintArray::ReferenceWeight
                | ConstraintArray::Starting
                | ConstraintArray::Fixed
        )
    }

    /// The array on the cells: NaN where unbounded or air; face arrays on
    /// the cells beside each face (smoothness as the smaller, reference
    /// gradients as the mean).
    fn on_cells(self, c: &ConstraintArrays) -> Vec<f64> {
        use fieldstone_core::constraint::build::faces_on_cells;
        let sh = c.shape;
        let mean = |a: f64, b: f64| 0.5 * (a + b);
        let v: Vec<f64> = match self {
            ConstraintArray::LowerBound => c.lower.clone(),
            ConstraintArray::UpperBound => c.upper.clone(),
            ConstraintArray::Reference => c.reference.clone(),
            ConstraintArray::ReferenceWeight => c.reference_weight.clone(),
            ConstraintArray::Starting => c.starting.clone(),
            ConstraintArray::Fixed => c.fixed.iter().map(|f| if *f { 1.0 } else { 0.0 }).collect(),
            ConstraintArray::SmoothnessX => faces_on_cells(sh, 0, &c.smooth_x, f64::min),
            ConstraintArray::SmoothnessY => faces_on_cells(sh, 1, &c.smooth_y, f64::min),
            ConstraintArray::SmoothnessZ => faces_on_cells(sh, 2, &c.smooth_z, f64::min),
            ConstraintArray::ReferenceGradientX => faces_on_cells(sh, 0, &c.ref_grad_x, mean),
            ConstraintArray::ReferenceGradientY => faces_on_cells(sh, 1, &c.ref_grad_y, mean),
            ConstraintArray::ReferenceGradientZ => faces_on_cells(sh, 2, &c.ref_grad_z, mean),
        };
        v.iter()
            .zip(&c.active)
            .map(|(x, a)| if *a && x.is_finite() { *x } else { f64::NAN })
            .collect()
    }
}

/// The Constraints step's own state: the array shown, the layer edited, a
/// polygon being drawn, the name field of the scenario chooser.
pub struct ConstraintsPanel {
    pub array: ConstraintArray,
    pub selected_layer: usize,
    /// Vertices of a polygon being drawn on the map.
    pub drawing: Option<Vec<[f64; 2]>>,
    pub new_scenario_name: String,
    /// Outlines being read from a file in the background: the file's name
    /// and, when the job has ended well, the outlines in the project's
    /// reference.
    pub outlines: Option<(String, OutlineSlot)>,
}

/// Where the background job leaves the outlines it read.
pub type OutlineSlot = std::sync::Arc<std::sync::Mutex<Option<Vec<Outline>>>>;

const OUTLINE_JOB: &str = "reading outlines";

impl Default for ConstraintsPanel {
    fn default() -> Self {
        ConstraintsPanel {
            array: ConstraintArray::UpperBound,
            selected_layer: 0,
            drawing: None,
            new_scenario_name: String::new(),
            outlines: None,
        }
    }
}

impl ConstraintsPanel {
    /// The polygon drawn, once closed (taken).
    fn closed_polygon(&mut self) -> Option<Vec<[f64; 2]>> {
        if self
            .drawing
            .as_ref()
            .is_some_and(|v| v.len() >= 3 && v.last() == v.first())
        {
            let mut v = self.drawing.take()?;
            v.pop();
            return Some(v);
        }
        None
    }

    pub fn form(&mut self, ws: &mut Workspace, ui: &mut Ui, p: &mut ProjectFile) {
        scenario_picker(ws, ui, p, &mut self.new_scenario_name);
        let epsg = p.epsg;
        let top = p_top(ws);
        let taken = self.take_outlines(ws);
        let surfaces: Vec<String> = p.surfaces.iter().map(|s| s.name.clone()).collect();
        let wireframes: Vec<String> = p.wireframes.iter().map(|s| s.name.clone()).collect();
        let Some(s) = p.scenarios.get_mut(ws.scenario) else {
            return;
        };
        // Outlines read from a file become one layer each.
        if let Some((file, outlines)) = taken {
            for o in outlines {
                s.layers.push(Layer {
                    name: o.name.clone(),
                    enabled: true,
                    region: Region::Outline {
                        source: format!("{file}: {}", o.name),
                        parts: o.parts,
                        top: Level::Elevation { z_m: top },
                        bottom: Level::Elevation { z_m: top - 300.0 },
                    },
                    assign: Assignments::default(),
                });
            }
            self.selected_layer = s.layers.len().saturating_sub(1);
        }
        ui.label(RichText::new("Layers (later layers override earlier ones)").strong());
        let mut action: Option<(usize, &str)> = None;
        for (i, l) in s.layers.iter_mut().enumerate() {
            ui.horizontal(|ui| {
                ui.checkbox(&mut l.enabled, "");
                if ui
                    .selectable_label(self.selected_layer == i, &l.name)
                    .clicked()
                {
                    self.selected_layer = i;
                }
                if ui.small_button("↑").on_hover_text("move up").clicked() {
                    action = Some((i, "up"));
                }
                if ui.small_button("↓").on_hover_text("move down").clicked() {
                    action = Some((i, "down"));
                }
                if ui.small_button("copy").on_hover_text("duplicate").clicked() {
                    action = Some((i, "dup"));
                }
                if ui.small_button("delete").on_hover_text("delete").clicked() {
                    action = Some((i, "del"));
                }
            });
        }
        if let Some((i, a)) = action {
            match a {
                "up" if i > 0 => s.layers.swap(i, i - 1),
                "down" if i + 1 < s.layers.len() => s.layers.swap(i, i + 1),
                "dup" => {
                    let mut c = s.layers[i].clone();
                    c.name.push_str(" (copy)");
                    s.layers.insert(i + 1, c);
                }
                "del" => {
                    s.layers.remove(i);
                }
                _ => {}
            }
        }
        ui.horizontal(|ui| {
            if ui.button("Add layer").clicked() {
                s.layers.push(Layer {
                    name: format!("layer {}", s.layers.len() + 1),
                    enabled: true,
                    region: Region::Whole,
                    assign: Assignments::default(),
                });
                self.selected_layer = s.layers.len() - 1;
            }
            let drawing = self.drawing.is_some();
            if ui
                .button(if drawing {
                    "Stop drawing"
                } else {
                    "Draw polygon on the map"
                })
                .clicked()
            {
                self.drawing = if drawing { None } else { Some(vec![]) };
            }
            if ui
                .add_enabled(!ws.busy(), egui::Button::new("Add outlines from a file…"))
                .on_hover_text("GeoJSON (.geojson) or ESRI shapefile (.shp with .shx, .dbf, .prj): one layer per feature, brought into the project's reference")
                .clicked()
            {
                if let Some(f) = rfd::FileDialog::new()
                    .add_filter("outlines", &["geojson", "json", "shp"])
                    .pick_file()
                {
                    self.start_reading(ws, ui.ctx(), f, epsg);
                }
            }
        });
        if let Some(v) = self.drawing.as_mut() {
            ui.label(
                RichText::new(format!(
                    "click vertices on the map, double-click to close ({} so far)",
                    v.len()
                ))
                .small(),
            );
            if v.len() >= 3 && ui.button("Close polygon").clicked() {
                let f = v[0];
                v.push(f);
            }
        }
        // A closed polygon becomes a new layer.
        if let Some(v) = self.closed_polygon() {
            s.layers.push(Layer {
                name: format!("polygon {}", s.layers.len() + 1),
                enabled: true,
                region: Region::Polygon {
                    vertices: v,
                    top: Level::Elevation { z_m: top },
                    bottom: Level::Elevation { z_m: top - 300.0 },
                },
                assign: Assignments {
                    upper: Some(0.0),
                    ..Default::default()
                },
            });
            self.selected_layer = s.layers.len() - 1;
        }
        ui.separator();
        if let Some(l) = s.layers.get_mut(self.selected_layer) {
            layer_editor(ui, l, &surfaces, &wireframes);
        }
        ui.separator();
        // The arrays of the scenario as committed (this frame's edit shows from
        // the next frame), built once per change and shared with the view.
        let committed = ws
            .doc
            .as_ref()
            .and_then(|d| Some((d, d.project.scenarios.get(ws.scenario)?)))
            .and_then(|(d, sc)| d.constraint_arrays(sc));
        if let Some(arrays) = committed {
            match arrays.as_ref() {
                Ok((c, warnings)) => {
                    let fixed = c
                        .fixed
                        .iter()
                        .zip(&c.active)
                        .filter(|(f, a)| **f && **a)
                        .count();
                    let bounded = c
                        .lower
                        .iter()
                        .zip(&c.upper)
                        .zip(&c.active)
                        .filter(|((l, u), a)| **a && (l.is_finite() || u.is_finite()))
                        .count();
                    ui.label(format!("{bounded} active cells bounded, {fixed} fixed"));
                    for w in warnings {
                        warn(ui, w.clone());
                    }
                }
                Err(e) => warn(ui, e.clone()),
            }
        }
        egui::ComboBox::from_label("preview array")
            .selected_text(self.array.key())
            .show_ui(ui, |ui| {
                for a in ConstraintArray::ALL {
                    ui.selectable_value(&mut self.array, a, a.key());
                }
            });
    }
}

fn p_top(ws: &Workspace) -> f64 {
    ws.doc
        .as_ref()
        .and_then(|d| d.project.mesh.as_ref())
        .map(|m| m.top_m)
        .unwrap_or(0.0)
}

impl ConstraintsPanel {
    /// Reads the outlines of `file` in a background job.
    pub fn start_reading(
        &mut self,
        ws: &mut Workspace,
        ctx: &egui::Context,
        file: std::path::PathBuf,
        epsg: Option<u32>,
    ) {
        let slot: OutlineSlot = Default::default();
        let name = file
            .file_name()
            .map(|n| n.to_string_lossy().to_string())
            .unwrap_or_default();
        self.outlines = Some((name, slot.clone()));
        ws.start_task(OUTLINE_JOB, ctx, move |obs| {
            let f = read_outlines(&file).map_err(|e| e.to_string())?;
            let (o, warnings) = f.to_project(epsg).map_err(|e| e.to_string())?;
            for w in warnings {
                obs.warning(&w);
            }
            let n = o.len();
            *slot
                .lock()
                .map_err(|_| "the outline job's result was lost")? = Some(o);
            Ok(format!("{n} outline(s) read from {}", file.display()))
        });
    }

    /// The outlines of a finished reading job, once.
    fn take_outlines(&mut self, ws: &mut Workspace) -> Option<(String, Vec<Outline>)> {
        if self.outlines.is_none() || ws.busy() {
            return None;
        }
        match &ws.finished {
            Some((title, _)) if title == OUTLINE_JOB => {}
            _ => return None,
        }
        ws.finished = None;
        let (file, slot) = self.outlines.take()?;
        let got = slot.lock().ok()?.take()?;
        Some((file, got))
    }

    pub fn view(&mut self, ws: &mut Workspace, ui: &mut Ui) {
        let Some(doc) = ws.doc.as_ref() else { return };
        let Some(sc) = doc.project.scenarios.get(ws.scenario).cloned() else {
            ui.label("No scenario: make one in the form.");
            return;
        };
        if doc.views.model.is_none() {
            ui.label("No mesh yet.");
            return;
        };
        let Some(built) = doc.constraint_arrays(&sc) else {
            return;
        };
        let arrays = match built.as_ref() {
            Ok((c, _)) => c,
            Err(e) => {
                ui.label(RichText::new(e.clone()).color(Color32::RED));
                return;
            }
        };
        // The slice's array, made once per change of the project.
        let array = self.array;
        let v = doc.derived(
            format!("constraint view|{}|{}", sc.name, array.key()),
            || array.on_cells(arrays),
        );
        let mut extra: Vec<(Vec<[f64; 2]>, Color32, bool)> = sc
            .layers
            .iter()
            .filter_map(|l| match &l.region {
                fieldstone_core::constraint::region::Region::Polygon { vertices, .. } => Some(
                    vec![(vertices.clone(), Color32::from_rgb(200, 30, 30), true)],
                ),
                fieldstone_core::constraint::region::Region::Outline { parts, .. } => Some(
                    parts
                        .iter()
                        .flat_map(|q| std::iter::once(&q.outer).chain(&q.holes))
                        .map(|r| (r.clone(), Color32::from_rgb(200, 30, 30), true))
                        .collect(),
                ),
                _ => None,
            })
            .flatten()
            .collect();
        if let Some(d) = &self.drawing {
            extra.push((d.clone(), Color32::from_rgb(230, 120, 0), false));
        }
        ui.label(
            RichText::new(format!(
                "{} of scenario '{}' before any run (blank: unbounded or air{})",
                array.key(),
                sc.name,
                if array.on_faces() {
                    "; face values shown on the cells beside each face, smoothness as the smaller"
                } else {
                    ""
                }
            ))
            .weak(),
        );
        let key = format!(
            "constraint-{}-{}-{}",
            sc.name,
            array.key(),
            fieldstone_core::project::provenance::hash_json(&sc.layers)
        );
        let r = slice_map(ws, ui, &key, &v, "", extra);
        if let Some(d) = self.drawing.as_mut() {
            if r.double_clicked {
                if let Some(f) = d.first().copied() {
                    if d.len() >= 3 {
                        d.push(f);
                    }
                }
            } else if let Some(c) = r.clicked {
                d.push(c);
            }
        }
    }
}
