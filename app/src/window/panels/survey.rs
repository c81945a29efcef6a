//! The Survey step: importing a survey table, the coordinate reference,
//! and quality control on a map of the stations and the profile of one
//! line, where a reading can be rejected or restored. The Corrections step
//! shows the same map and profile with the reduced anomalies.

use super::maps::{collars, extent, traces};
use super::widgets::warn;
use super::Workspace;
use crate::window::canvas::{self, Colouring, GridLayer, MapLayers};
use crate::window::index::PointIndex;
use egui::{Color32, RichText, Ui};
use egui_plot::{Legend, Line, Plot, Points};
use fieldstone_core::project::file::{GravityInput, MagneticInput, ProjectFile};
use fieldstone_core::table::passthrough::read_passthrough;

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
    pub import_path: String,
    pub import_preview: Option<Preview>,
    pub import_message: Option<String>,
    pub line: Option<String>,
    pub colour_by: String,
}

impl Default for SurveyPanel {
    fn default() -> Self {
        SurveyPanel {
            import_path: String::new(),
            import_preview: None,
            import_message: None,
            line: None,
            colour_by: "gravity_mgal".into(),
        }
    }
}

/// Roles a column can take in the import form.
pub const ROLES: [&str; 10] = [
    "ignore",
    "x",
    "y",
    "height_m",
    "gravity_mgal",
    "mag_nt",
    "time",
    "station",
    "line",
    "other",
];

/// The first rows of a file and the role chosen for each column.
#[derive(Debug, Clone, PartialEq)]
pub struct Preview {
    pub names: Vec<String>,
    pub rows: Vec<Vec<String>>,
    pub roles: Vec<usize>,
    pub n_rows: usize,
}

fn guess_role(name: &str) -> usize {
    let n = name.to_ascii_lowercase();
    let pick = |r: &str| ROLES.iter().position(|x| *x == r).unwrap_or(0);
    match n.as_str() {
        "x" | "east" | "easting" | "e" => pick("x"),
        "y" | "north" | "northing" | "n" => pick("y"),
        "z" | "height" | "height_m" | "elev" | "elevation" => pick("height_m"),
        "gravity" | "gravity_mgal" | "reading" | "grav" | "g" => pick("gravity_mgal"),
        "mag" | "mag_nt" | "tmi" | "total_field" => pick("mag_nt"),
        "time" | "datetime" | "date_time" => pick("time"),
        "station" | "stn" | "id" => pick("station"),
        "line" | "line_id" => pick("line"),
        _ => pick("other"),
    }
}

/// Reads the preview of a file for the import form.
pub fn preview(path: &str) -> Result<Preview, String> {
    let t = read_passthrough(std::path::Path::new(path), &[]).map_err(|e| e.to_string())?;
    let rows = (0..t.n_rows().min(8))
        .map(|r| (0..t.names.len()).map(|c| t.text(r, c)).collect())
        .collect();
    Ok(Preview {
        roles: t.names.iter().map(|n| guess_role(n)).collect(),
        names: t.names.clone(),
        rows,
        n_rows: t.n_rows(),
    })
}

/// Copies the file into the project's inputs with the columns renamed to
/// their roles, and makes it the gravity or magnetic survey.
pub fn import_into(
    project_dir: &std::path::Path,
    p: &mut ProjectFile,
    path: &str,
    pv: &Preview,
    gravity: bool,
) -> Result<String, String> {
    let role = |r: &str| pv.roles.iter().position(|x| ROLES[*x] == r);
    let need: &[&str] = if gravity {
        &["x", "y", "height_m", "gravity_mgal"]
    } else {
        &["x", "y", "height_m", "mag_nt"]
    };
    for n in need {
        if role(n).is_none() {
            return Err(format!(
                "give a column the role {n} (needed for a {} survey)",
                if gravity { "gravity" } else { "magnetic" }
            ));
        }
    }
    let t = read_passthrough(std::path::Path::new(path), &[]).map_err(|e| e.to_string())?;
    let cols: Vec<(usize, &str)> = pv
        .roles
        .iter()
        .enumerate()
        .filter(|(_, r)| ROLES[**r] != "ignore" && ROLES[**r] != "other")
        .map(|(c, r)| (c, ROLES[*r]))
        .collect();
    let mut seen = std::collections::BTreeSet::new();
    for (_, r) in &cols {
        if !seen.insert(*r) {
            return Err(format!(
                "two columns have the role {r}; give each role to one column"
            ));
        }
    }
    let mut text = format!(
        "# imported from {path}\n{}\n",
        cols.iter().map(|c| c.1).collect::<Vec<_>>().join(",")
    );
    for r in 0..t.n_rows() {
        let v: Vec<String> = cols
            .iter()
            .map(|(c, _)| t.text(r, *c).replace(',', ";"))
            .collect();
        text.push_str(&v.join(","));
        text.push('\n');
    }
    let stem = std::path::Path::new(path)
        .file_stem()
        .map(|s| s.to_string_lossy().to_string())
        .unwrap_or_else(|| "survey".into());
    let rel = format!("inputs/{}_imported.csv", crate::pipeline::safe_name(&stem));
    let dest = project_dir.join(&rel);
    if let Some(d) = dest.parent() {
        std::fs::create_dir_all(d).map_err(|e| format!("{}: {e}", d.display()))?;
    }
    crate::pipeline::write_text(&dest, &text)?;
    if gravity {
        let old = p.gravity.clone();
        p.gravity = Some(GravityInput {
            file: rel.clone(),
            base_station: old
                .as_ref()
                .and_then(|g| g.base_station.clone())
                .filter(|_| role("station").is_some()),
            base_value_mgal: old
                .as_ref()
                .and_then(|g| g.base_value_mgal)
                .filter(|_| role("station").is_some()),
            max_drift_mgal_per_h: 0.05,
            tide: role("time").is_some(),
            gravimetric_factor: 1.16,
            terrain_outer_m: old.as_ref().and_then(|g| g.terrain_outer_m),
            uncertainty_floor_mgal: 0.02,
            uncertainty_percent: 0.0,
            rejected_rows: vec![],
        });
    } else {
        p.magnetic = Some(MagneticInput {
            file: rel.clone(),
            base_file: p.magnetic.as_ref().and_then(|m| m.base_file.clone()),
            date: p
                .magnetic
                .as_ref()
                .map(|m| m.date.clone())
                .unwrap_or_else(|| "2026-01-01".into()),
            thin_to_m: 25.0,
            uncertainty_floor_nt: 1.0,
            uncertainty_percent: 2.0,
        });
    }
    Ok(format!("{} rows imported into {rel}", t.n_rows()))
}

impl SurveyPanel {
    pub fn form(&mut self, ws: &mut Workspace, ui: &mut Ui, p: &mut ProjectFile) {
        ui.label("Import a survey table");
        ui.horizontal(|ui| {
            ui.label("File");
            ui.add(
                egui::TextEdit::singleline(&mut self.import_path)
                    .desired_width(190.0)
                    .hint_text("path to a CSV file"),
            );
            if ui.button("Browse…").clicked() {
                if let Some(f) = rfd::FileDialog::new()
                    .add_filter("tables", &["csv", "txt", "xyz"])
                    .pick_file()
                {
                    self.import_path = f.display().to_string();
                    self.import_preview = None;
                }
            }
        });
        if ui.button("Preview").clicked() {
            match preview(&self.import_path) {
                Ok(pv) => {
                    self.import_preview = Some(pv);
                    self.import_message = None;
                }
                Err(e) => self.import_message = Some(e),
            }
        }
        if let Some(pv) = self.import_preview.as_mut() {
            ui.label(format!(
                "{} rows; choose the role of each column:",
                pv.n_rows
            ));
            egui::Grid::new("roles").striped(true).show(ui, |ui| {
                for (c, name) in pv.names.iter().enumerate() {
                    ui.label(name);
                    egui::ComboBox::from_id_salt(("role", c))
                        .selected_text(ROLES[pv.roles[c]])
                        .show_ui(ui, |ui| {
                            for (k, r) in ROLES.iter().enumerate() {
                                ui.selectable_value(&mut pv.roles[c], k, *r);
                            }
                        });
                    ui.label(
                        RichText::new(
                            pv.rows
                                .iter()
                                .take(3)
                                .map(|r| r.get(c).cloned().unwrap_or_default())
                                .collect::<Vec<_>>()
                                .join("  "),
                        )
                        .small()
                        .weak(),
                    );
                    ui.end_row();
                }
            });
            let pv = pv.clone();
            let dir = ws.doc.as_ref().map(|d| d.dir.clone()).unwrap_or_default();
            ui.horizontal(|ui| {
                for (label, grav) in [
                    ("Import as gravity survey", true),
                    ("Import as magnetic survey", false),
                ] {
                    if ui.button(label).clicked() {
                        self.import_message =
                            Some(match import_into(&dir, p, &self.import_path, &pv, grav) {
                                Ok(m) => m,
                                Err(e) => format!("not imported: {e}"),
                            });
                    }
                }
            });
        }
        if let Some(m) = &self.import_message {
            warn(ui, m.clone());
        }
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
            ui.label(RichText::new(format!("gravity survey: {}", g.file)).small());
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
        let col = if corrections {
            "complete_bouguer_anomaly_mgal".to_string()
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
