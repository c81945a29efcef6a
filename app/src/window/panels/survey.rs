//! The Survey step: importing a survey table, the coordinate reference,
//! and quality control on a map of the stations and the profile of one
//! line, where a reading can be rejected or restored. The Corrections step
//! shows the same map and profile with the reduced anomalies.

use super::import_form::ImportForm;
use super::maps::{collars, extent, traces};
use super::widgets::warn;
use super::Workspace;
use crate::window::canvas::{self, Colouring, GridLayer, MapLayers};
use crate::window::index::PointIndex;
use egui::{Color32, RichText, Ui};
use egui_plot::{Legend, Line, Plot, Points};
use fieldstone_core::project::file::ProjectFile;
use fieldstone_pipeline::steps::reduce::GIVEN_GRAVITY_COLUMN;

/// Which table the survey views show.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum SurveyTable {
    /// The readings as imported.
    Raw,
    /// The anomalies after the corrections.
    Reduced,
}

/// The Survey step's own state: the import form, the line inspected and
/// the column the stations are coloured by (a column of the survey file,
/// so a name rather than a fixed choice).
pub struct SurveyPanel {
    pub import: ImportForm,
    pub line: Option<String>,
    pub colour_by: String,
}

impl Default for SurveyPanel {
    fn default() -> Self {
        SurveyPanel {
            import: ImportForm::default(),
            line: None,
            colour_by: "gravity_mgal".into(),
        }
    }
}

impl SurveyPanel {
    pub fn form(&mut self, ws: &mut Workspace, ui: &mut Ui, p: &mut ProjectFile) {
        self.import.ui(ws, ui, p);
        ui.separator();
        ui.label("Coordinate reference");
        let mut epsg = p.epsg.unwrap_or(0);
        ui.horizontal(|ui| {
            ui.label("EPSG code");
            ui.add(egui::DragValue::new(&mut epsg).range(0..=99_999));
        });
        p.epsg = (epsg > 0).then_some(epsg);
        if let Some(e) = p.epsg {
            match fieldstone_core::geodesy::crs::Crs::from_epsg(e) {
                Ok(c) => {
                    ui.label(RichText::new(c.name()).small().weak());
                }
                Err(err) => warn(ui, err.to_string()),
            }
        }
        if let Some(g) = &p.gravity {
            let files: Vec<&str> = g.files().map(String::as_str).collect();
            ui.label(RichText::new(format!("gravity survey: {}", files.join(", "))).small());
        }
        if let Some(m) = &p.magnetic {
            ui.label(RichText::new(format!("magnetic survey: {}", m.file)).small());
        }
        ui.separator();
        ui.label("Quality control: choose a line to see its profile");
        if let Some((r, lines)) = ws
            .doc
            .as_ref()
            .and_then(|d| Some((d.views.gravity_raw.clone()?, d.survey_lines())))
        {
            egui::ComboBox::from_label("line")
                .selected_text(self.line.clone().unwrap_or_else(|| "none".into()))
                .show_ui(ui, |ui| {
                    for l in lines.iter() {
                        let v = Some(l.clone());
                        ui.selectable_value(&mut self.line, v, l);
                    }
                });
            let names: Vec<String> = r
                .names
                .iter()
                .zip(&r.numbers)
                .filter(|(_, n)| n.is_some())
                .map(|(n, _)| n.clone())
                .collect();
            egui::ComboBox::from_label("colour stations by")
                .selected_text(self.colour_by.clone())
                .show_ui(ui, |ui| {
                    for n in names {
                        ui.selectable_value(&mut self.colour_by, n.clone(), n);
                    }
                });
        }
    }
}

/// Most readings of a line profile drawn with a marker each.
const PROFILE_MARKERS: usize = 600;

impl SurveyPanel {
    /// The map of the stations and the profile of the chosen line, of the
    /// readings or of the reduced anomalies.
    pub fn view(&mut self, ws: &mut Workspace, ui: &mut Ui, table: SurveyTable) {
        let corrections = table == SurveyTable::Reduced;
        let Some(doc) = ws.doc.as_ref() else { return };
        let table = if corrections {
            doc.views.gravity_reduced.clone()
        } else {
            doc.views.gravity_raw.clone()
        };
        let terrain = doc.views.grids.get("terrain").cloned();
        let Some(r) = table else {
            ui.label(if corrections {
                "Run the corrections to see the anomalies (Run the steps up to the model space)."
            } else {
                "No gravity survey in this project: import one with the form on the right."
            });
            return;
        };
        if self.line.is_none() {
            self.line = r.lines.iter().find(|l| l.as_str() != "0").cloned();
        }
        // A survey without the column chosen is coloured by its readings.
        if r.column(&self.colour_by).is_none() {
            if let Some(v) = &r.value_column {
                self.colour_by = v.clone();
            }
        }
        let col = if corrections {
            // Anomalies as delivered carry their own column.
            if r.column(GIVEN_GRAVITY_COLUMN).is_some() {
                GIVEN_GRAVITY_COLUMN.to_string()
            } else {
                "complete_bouguer_anomaly_mgal".to_string()
            }
        } else {
            self.colour_by.clone()
        };
        // The points, their colouring and the terrain's shading range, made
        // once per change of the project, the column or the colouring option.
        let survey = doc.derived(
            format!("survey|{corrections}|{col}|{}", ws.display.equalise),
            || {
                let values = r.column(&col).cloned().unwrap_or_default();
                let pts: Vec<([f64; 2], Option<f64>)> = (0..r.x.len())
                    .map(|k| ([r.x[k], r.y[k]], values.get(k).copied()))
                    .collect();
                let colouring = Colouring::for_values(&values, ws.display.equalise);
                let terrain_range = terrain.as_ref().map(|g| {
                    (
                        g.values.iter().cloned().fold(f64::INFINITY, f64::min) - 40.0,
                        g.values.iter().cloned().fold(f64::NEG_INFINITY, f64::max) + 40.0,
                    )
                });
                (values, pts, colouring, terrain_range)
            },
        );
        let (values, pts, colouring, terrain_range) = (&survey.0, &survey.1, &survey.2, survey.3);
        // The dots of these points stay valid while the project, the column and
        // the colouring option stay as they are.
        let points_version = {
            use std::hash::{Hash, Hasher};
            let mut h = std::collections::hash_map::DefaultHasher::new();
            (doc.generation, corrections, &col, ws.display.equalise).hash(&mut h);
            h.finish()
        };
        let index = doc.derived(format!("survey index|{corrections}"), || {
            PointIndex::new(&r.x, &r.y)
        });
        let line_key = self.line.clone().unwrap_or_default();
        let sel = doc.derived(format!("line|{corrections}|{line_key}"), || {
            match &self.line {
                Some(l) => (0..r.lines.len())
                    .filter(|k| &r.lines[*k] == l)
                    .collect::<Vec<usize>>(),
                None => vec![],
            }
        });
        let ext = extent(ws);
        let h = ui.available_height();
        ui.label(
            RichText::new(format!(
                "stations coloured by {col}; click a station to see its line"
            ))
            .weak(),
        );
        let mut map_h = 0.0;
        ui.allocate_ui(egui::vec2(ui.available_width(), h * 0.62), |ui| {
            let layers = MapLayers {
                grid: terrain.as_ref().map(|g| GridLayer {
                    key: "terrain-shade".into(),
                    grid: g,
                    colouring: Colouring {
                        map: fieldstone_core::export::figure::ColourMap::Grey,
                        lo: terrain_range.map_or(0.0, |r| r.0),
                        hi: terrain_range.map_or(1.0, |r| r.1),
                        equalised: None,
                    },
                    hillshade: true,
                    contours: None,
                }),
                points: std::borrow::Cow::Borrowed(pts.as_slice()),
                point_colouring: Some(std::borrow::Cow::Borrowed(colouring)),
                points_version: Some(points_version),
                // A ring on every fourth reading of the chosen line, at most
                // about a hundred rings.
                highlight: sel
                    .iter()
                    .step_by((sel.len() / 100).max(4))
                    .map(|k| pts[*k].0)
                    .collect(),
                lines: traces(ws),
                collars: collars(ws),
                units: if corrections {
                    "mGal".into()
                } else {
                    col.clone()
                },
            };
            let resp = canvas::map(ui, &mut ws.map, &mut ws.textures, &layers, ext);
            let scale = ws.map.scale;
            // A click selects the line of the station under it (within a few
            // pixels).
            if let Some(c) = resp.clicked {
                if let Some(k) = index.nearest_within(&r.x, &r.y, c, 12.0 * scale) {
                    self.line = r.lines.get(k).cloned();
                }
            }
            ws.hover = resp.hover.map(|p| {
                let near = index.nearest_within(&r.x, &r.y, p, 6.0 * scale);
                (p, near.and_then(|k| values.get(k).copied()))
            });
            ws.units = if corrections {
                "mGal".into()
            } else {
                col.clone()
            };
            map_h = ui.min_rect().height();
        });
        let _ = map_h;
        // Profile of the selected line; click a reading to reject it (or restore it).
        let rejected: Vec<usize> = ws
            .doc
            .as_ref()
            .and_then(|d| d.project.gravity.as_ref())
            .map(|g| g.rejected_rows.clone())
            .unwrap_or_default();
        let mut prof: Vec<[f64; 2]> = Vec::new();
        let mut rows: Vec<usize> = Vec::new();
        let mut out: Vec<[f64; 2]> = Vec::new();
        if !sel.is_empty() {
            let (x0, y0) = (r.x[sel[0]], r.y[sel[0]]);
            let mut s: Vec<usize> = sel.to_vec();
            s.sort_by(|a, b| {
                ((r.x[*a] - x0).hypot(r.y[*a] - y0)).total_cmp(&(r.x[*b] - x0).hypot(r.y[*b] - y0))
            });
            for k in s {
                if let Some(v) = values.get(k) {
                    let q = [(r.x[k] - x0).hypot(r.y[k] - y0), *v];
                    if rejected.contains(&k) {
                        out.push(q);
                    } else {
                        prof.push(q);
                    }
                    rows.push(k);
                }
            }
        }
        let spikes = flagged(&prof);
        let all: Vec<[f64; 2]> = prof.iter().chain(&out).copied().collect();
        let clicked = Plot::new("profile")
            .legend(Legend::default())
            .x_axis_label("distance along the line (m) — click a reading to reject or restore it")
            .y_axis_label(col.clone())
            .show(ui, |p| {
                p.line(Line::new(
                    format!("line {}", self.line.clone().unwrap_or_default()),
                    prof.clone(),
                ));
                // Markers for each reading while they can be told apart; a
                // line of thousands of readings shows as its curve alone.
                if prof.len() <= PROFILE_MARKERS {
                    p.points(Points::new("readings", prof.clone()).radius(2.5));
                }
                if !spikes.is_empty() {
                    p.points(
                        Points::new("flagged (fourth difference)", spikes)
                            .radius(5.0)
                            .color(Color32::RED),
                    );
                }
                if !out.is_empty() {
                    p.points(
                        Points::new("rejected", out.clone())
                            .radius(4.0)
                            .shape(egui_plot::MarkerShape::Cross)
                            .color(Color32::GRAY),
                    );
                }
                if p.response().clicked() {
                    p.pointer_coordinate()
                } else {
                    None
                }
            })
            .inner;
        if let Some(c) = clicked {
            // The reading nearest the click along the line.
            let (mut order, mut positions): (Vec<usize>, Vec<[f64; 2]>) = (Vec::new(), Vec::new());
            let (x0, y0) = sel
                .first()
                .map(|k| (r.x[*k], r.y[*k]))
                .unwrap_or((0.0, 0.0));
            for k in &rows {
                order.push(*k);
                positions.push([
                    (r.x[*k] - x0).hypot(r.y[*k] - y0),
                    values.get(*k).copied().unwrap_or(f64::NAN),
                ]);
            }
            let _ = all;
            if let Some(i) = (0..positions.len()).min_by(|a, b| {
                (positions[*a][0] - c.x)
                    .abs()
                    .total_cmp(&(positions[*b][0] - c.x).abs())
            }) {
                toggle_rejected(ws, order[i]);
            }
        }
    }
}

/// Rejects a reading (row of the gravity table) or restores it; undoable.
pub fn toggle_rejected(ws: &mut Workspace, row: usize) {
    let Some(d) = ws.doc.as_mut() else { return };
    if d.read_only.is_some() {
        return;
    }
    d.before_edit();
    if let Some(g) = d.project.gravity.as_mut() {
        match g.rejected_rows.iter().position(|r| *r == row) {
            Some(i) => {
                g.rejected_rows.remove(i);
                ws.log.push(format!("reading on row {} restored", row + 1));
            }
            None => {
                g.rejected_rows.push(row);
                g.rejected_rows.sort_unstable();
                ws.log.push(format!("reading on row {} rejected (left out of gridding and inversion; the file is unchanged)", row + 1));
            }
        }
    }
    d.changed();
}

/// Readings of a profile (in line order) that the survey spike detector
/// flags (fourth difference, `core::survey::qc::detect_spikes`).
fn flagged(prof: &[[f64; 2]]) -> Vec<[f64; 2]> {
    use fieldstone_core::survey::qc::{detect_spikes, flag, ChannelFlags, SpikeRule};
    let values: Vec<f64> = prof.iter().map(|p| p[1]).collect();
    let line = fieldstone_core::survey::lines::SurveyLine {
        name: String::new(),
        rows: (0..prof.len() as u32).collect(),
    };
    let mut flags = ChannelFlags {
        channel: String::new(),
        bits: vec![0; prof.len()],
    };
    detect_spikes(&values, &[line], &mut flags, SpikeRule::default());
    prof.iter()
        .zip(&flags.bits)
        .filter(|(_, b)| **b & flag::SPIKE != 0)
        .map(|(p, _)| *p)
        .collect()
}
