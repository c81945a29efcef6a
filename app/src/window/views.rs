//! The views in the centre: maps, profiles, model slices and sections,
//! data fit, and the run log plot.

use super::canvas::{self, Colouring, GridLayer, MapLayers};
use super::{FieldstoneApp, Step};
use egui::{Color32, RichText, Ui};
use egui_plot::{Bar, BarChart, HLine, Legend, Line, Plot, Points};
use fieldstone_core::export::figure::BASE_DPI;
use fieldstone_core::export::section::{plan_slice, section, SectionSample, SliceLevel};
use fieldstone_core::grid::Grid2;
use fieldstone_core::invert::IterationRecord;

pub struct ViewState {
    pub grid: String,
    pub hillshade: bool,
    pub equalise: bool,
    /// Contours on maps and slices: None off, NaN automatic, else the interval.
    pub contours: Option<f64>,
    /// Cell edges, padding and air on sections.
    pub cell_edges: bool,
    /// Drill holes with their logged values on sections.
    pub hole_logs: bool,
    pub line: Option<String>,
    pub colour_by: String,
    pub constraint_array: String,
    pub result_view: usize,
    pub compare_with: String,
    pub slice_z: f64,
    pub section_at: Option<[f64; 2]>,
    pub last_iterations: Vec<IterationRecord>,
    pub units: String,
    /// The Model space views' active-cell values, colouring, section and
    /// terrain, kept while the mesh recipe and DEM stay the same (recomputing
    /// them every frame took most of the frame's build time).
    pub model_space: Option<ModelSpaceCache>,
}

/// See [`ViewState::model_space`].
pub struct ModelSpaceCache {
    key: String,
    act: Vec<f64>,
    colouring: Colouring,
    section: Vec<SectionSample>,
    terrain: Vec<[f64; 2]>,
}

impl Default for ViewState {
    fn default() -> Self {
        ViewState {
            grid: "gravity_grid".into(),
            hillshade: false,
            equalise: false,
            contours: None,
            cell_edges: false,
            hole_logs: true,
            line: None,
            colour_by: "gravity_mgal".into(),
            constraint_array: "upper_bound".into(),
            result_view: 0,
            compare_with: String::new(),
            slice_z: f64::NAN,
            section_at: None,
            last_iterations: vec![],
            units: String::new(),
            model_space: None,
        }
    }
}

fn extent(app: &FieldstoneApp) -> Option<[f64; 4]> {
    let d = app.doc.as_ref()?;
    if let Some(r) = &d.views.gravity_raw {
        // Made once per change of the project (a survey may hold millions
        // of readings).
        let e = *d.derived("survey extent".into(), || {
            let (x0, x1) = r.x.iter().fold((f64::INFINITY, f64::NEG_INFINITY), |a, v| {
                (a.0.min(*v), a.1.max(*v))
            });
            let (y0, y1) = r.y.iter().fold((f64::INFINITY, f64::NEG_INFINITY), |a, v| {
                (a.0.min(*v), a.1.max(*v))
            });
            [x0, x1, y0, y1]
        });
        if e[1] > e[0] {
            return Some(e);
        }
    }
    let m = d.views.model.as_ref()?;
    let [(i0, i1), (j0, j1), _] = m.mesh.core;
    Some([m.mesh.x[i0], m.mesh.x[i1], m.mesh.y[j0], m.mesh.y[j1]])
}

fn holes(app: &FieldstoneApp) -> &[super::state::HoleTrace] {
    app.doc
        .as_ref()
        .map(|d| d.views.holes.as_slice())
        .unwrap_or(&[])
}

fn collars(app: &FieldstoneApp) -> Vec<([f64; 2], String)> {
    holes(app)
        .iter()
        .map(|(id, c, _)| ([c[0], c[1]], id.clone()))
        .collect()
}

fn traces(app: &FieldstoneApp) -> Vec<(Vec<[f64; 2]>, Color32, bool)> {
    holes(app)
        .iter()
        .map(|(_, _, t)| {
            (
                t.iter().map(|p| [p[0], p[1]]).collect(),
                Color32::BLACK,
                false,
            )
        })
        .collect()
}

fn section_lines(app: &FieldstoneApp) -> Vec<(Vec<[f64; 2]>, Color32, bool)> {
    app.doc
        .as_ref()
        .map(|d| {
            d.project
                .exports
                .sections
                .iter()
                .map(|s| (s.vertices.clone(), Color32::from_rgb(90, 40, 140), false))
                .collect()
        })
        .unwrap_or_default()
}

/// The map with a grid (by name) and optional points.
fn grid_map(
    app: &mut FieldstoneApp,
    ui: &mut Ui,
    name: &str,
    points: Vec<([f64; 2], Option<f64>)>,
    extra: Vec<(Vec<[f64; 2]>, Color32, bool)>,
) -> canvas::MapResponse {
    let ext = extent(app);
    let Some(doc) = app.doc.as_ref() else {
        return Default::default();
    };
    let g = doc.views.grids.get(name);
    let units = g.map(|g| g.units.clone()).unwrap_or_default();
    let mut lines = traces(app);
    lines.extend(section_lines(app));
    lines.extend(extra);
    let layers = MapLayers {
        grid: g.map(|g| GridLayer {
            key: name.to_string(),
            grid: g,
            colouring: (*doc.derived(
                format!("grid colouring|{name}|{}", app.views.equalise),
                || Colouring::for_values(&g.values, app.views.equalise),
            ))
            .clone(),
            hillshade: app.views.hillshade,
            contours: app.views.contours,
        }),
        points: points.into(),
        point_colouring: None,
        points_version: None,
        highlight: vec![],
        lines,
        collars: collars(app),
        units: units.clone(),
    };
    let r = canvas::map(ui, &mut app.map, &mut app.textures, &layers, ext);
    app.hover = r
        .hover
        .map(|p| (p, g.and_then(|g| g.sample(p[0], p[1]).ok())));
    app.views.units = units;
    r
}

pub fn show(app: &mut FieldstoneApp, ui: &mut Ui) {
    if app.doc.is_none() {
        ui.centered_and_justified(|ui| {
            ui.label("Open a project (Project → Open…) or drop a project folder onto the window.")
        });
        return;
    }
    if let Some(d) = &app.doc {
        for p in d.views.problems.iter().take(3) {
            ui.label(
                RichText::new(p)
                    .color(Color32::from_rgb(170, 60, 20))
                    .small(),
            );
        }
    }
    match app.step {
        Step::Survey | Step::Corrections => survey(app, ui),
        Step::Grids | Step::Regional => {
            let name = app.views.grid.clone();
            let pts = app
                .doc
                .as_ref()
                .and_then(|d| d.views.gravity_raw.as_ref())
                .map(|r| {
                    r.x.iter()
                        .zip(&r.y)
                        .map(|(x, y)| ([*x, *y], None))
                        .collect()
                })
                .unwrap_or_default();
            ui.label(RichText::new(format!("{name} — drag to pan, scroll to zoom")).weak());
            grid_map(app, ui, &name, pts, vec![]);
        }
        Step::ModelSpace => model_space(app, ui),
        Step::Constraints => constraints(app, ui),
        Step::Runs => run_log(app, ui),
        Step::Results => results(app, ui),
    }
}

/// Most readings of a line profile drawn with a marker each.
const PROFILE_MARKERS: usize = 600;

fn survey(app: &mut FieldstoneApp, ui: &mut Ui) {
    let corrections = app.step == Step::Corrections;
    let Some(doc) = app.doc.as_ref() else { return };
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
    if app.views.line.is_none() {
        app.views.line = r.lines.iter().find(|l| l.as_str() != "0").cloned();
    }
    let col = if corrections {
        "complete_bouguer_anomaly_mgal".to_string()
    } else {
        app.views.colour_by.clone()
    };
    // The points, their colouring and the terrain's shading range, made
    // once per change of the project, the column or the colouring option.
    let survey = doc.derived(
        format!("survey|{corrections}|{col}|{}", app.views.equalise),
        || {
            let values = r.column(&col).cloned().unwrap_or_default();
            let pts: Vec<([f64; 2], Option<f64>)> = (0..r.x.len())
                .map(|k| ([r.x[k], r.y[k]], values.get(k).copied()))
                .collect();
            let colouring = Colouring::for_values(&values, app.views.equalise);
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
        (doc.generation, corrections, &col, app.views.equalise).hash(&mut h);
        h.finish()
    };
    let index = doc.derived(format!("survey index|{corrections}"), || {
        super::index::PointIndex::new(&r.x, &r.y)
    });
    let line_key = app.views.line.clone().unwrap_or_default();
    let sel = doc.derived(format!("line|{corrections}|{line_key}"), || {
        match &app.views.line {
            Some(l) => (0..r.lines.len())
                .filter(|k| &r.lines[*k] == l)
                .collect::<Vec<usize>>(),
            None => vec![],
        }
    });
    let ext = extent(app);
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
            lines: traces(app),
            collars: collars(app),
            units: if corrections {
                "mGal".into()
            } else {
                col.clone()
            },
        };
        let resp = canvas::map(ui, &mut app.map, &mut app.textures, &layers, ext);
        if let Some(c) = resp.clicked {
            let nearest = (0..r.x.len()).min_by(|a, b| {
                ((r.x[*a] - c[0]).hypot(r.y[*a] - c[1]))
                    .total_cmp(&(r.x[*b] - c[0]).hypot(r.y[*b] - c[1]))
            });
            if let Some(k) = nearest {
                app.views.line = r.lines.get(k).cloned();
            }
        }
        let scale = app.map.scale;
        app.hover = resp.hover.map(|p| {
            let near = index.nearest_within(&r.x, &r.y, p, 6.0 * scale);
            (p, near.and_then(|k| values.get(k).copied()))
        });
        app.views.units = if corrections {
            "mGal".into()
        } else {
            col.clone()
        };
        map_h = ui.min_rect().height();
    });
    let _ = map_h;
    // Profile of the selected line; click a reading to reject it (or restore it).
    let rejected: Vec<usize> = app
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
                format!("line {}", app.views.line.clone().unwrap_or_default()),
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
            toggle_rejected(app, order[i]);
        }
    }
}

/// Rejects a reading (row of the gravity table) or restores it; undoable.
pub fn toggle_rejected(app: &mut FieldstoneApp, row: usize) {
    let Some(d) = app.doc.as_mut() else { return };
    if d.read_only.is_some() {
        return;
    }
    d.before_edit();
    if let Some(g) = d.project.gravity.as_mut() {
        match g.rejected_rows.iter().position(|r| *r == row) {
            Some(i) => {
                g.rejected_rows.remove(i);
                app.log.push(format!("reading on row {} restored", row + 1));
            }
            None => {
                g.rejected_rows.push(row);
                g.rejected_rows.sort_unstable();
                app.log.push(format!("reading on row {} rejected (left out of gridding and inversion; the file is unchanged)", row + 1));
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

fn default_slice_z(app: &mut FieldstoneApp) -> Option<(f64, f64, f64)> {
    let m = app.doc.as_ref()?.views.model.as_ref()?;
    let (zmin, zmax) = (m.mesh.z[m.mesh.core[2].0], m.mesh.z[m.mesh.z.len() - 1]);
    if !app.views.slice_z.is_finite() || app.views.slice_z < zmin || app.views.slice_z > zmax {
        app.views.slice_z = zmax - 0.3 * (zmax - zmin);
    }
    Some((zmin, zmax, app.views.slice_z))
}

/// A plan-slice map of a full-mesh array.
fn slice_map(
    app: &mut FieldstoneApp,
    ui: &mut Ui,
    key: &str,
    values: &[f64],
    units: &str,
    extra: Vec<(Vec<[f64; 2]>, Color32, bool)>,
) -> canvas::MapResponse {
    let Some((zmin, zmax, _)) = default_slice_z(app) else {
        return Default::default();
    };
    ui.horizontal(|ui| {
        ui.label("elevation of the slice");
        ui.add(egui::Slider::new(&mut app.views.slice_z, zmin..=zmax).suffix(" m"));
        super::forms::contour_control(ui, &mut app.views.contours);
    });
    let ext = extent(app);
    let Some(m) = app.doc.as_ref().and_then(|d| d.views.model.as_ref()) else {
        return Default::default();
    };
    let g = match plan_slice(
        &m.mesh,
        values,
        SliceLevel::Elevation(app.views.slice_z),
        None,
    ) {
        Ok(g) => g,
        Err(e) => {
            ui.label(e.to_string());
            return Default::default();
        }
    };
    let mut lines = traces(app);
    lines.extend(section_lines(app));
    lines.extend(extra);
    let layers = MapLayers {
        grid: Some(GridLayer {
            key: format!("{key}@{:.1}", app.views.slice_z),
            grid: &g,
            colouring: app
                .textures
                .colouring(&format!("{key}|{}", app.views.equalise), || {
                    Colouring::for_values(values, app.views.equalise)
                }),
            hillshade: false,
            contours: app.views.contours,
        }),
        points: Default::default(),
        point_colouring: None,
        points_version: None,
        highlight: app.views.section_at.into_iter().collect(),
        lines,
        collars: collars(app),
        units: units.into(),
    };
    let r = canvas::map(ui, &mut app.map, &mut app.textures, &layers, ext);
    app.hover = r.hover.map(|p| (p, g.sample(p[0], p[1]).ok()));
    app.views.units = units.into();
    r
}

fn model_space(app: &mut FieldstoneApp, ui: &mut Ui) {
    let Some(m) = app.doc.as_ref().and_then(|d| d.views.model.as_ref()) else {
        ui.label("No mesh: set a recipe in the form.");
        return;
    };
    let key = app.doc.as_ref().map_or(String::new(), |d| {
        fieldstone_core::project::provenance::hash_json(&(&d.project.mesh, &d.project.dem))
    });
    if app.views.model_space.as_ref().is_none_or(|c| c.key != key) {
        let act = m.active.as_values();
        let (x, y) = (&m.mesh.x, &m.mesh.y);
        let [(i0, _), (j0, j1), _] = m.mesh.core;
        let yc = 0.5 * (y[j0] + y[j1]);
        let line = [[x[0], yc], [x[x.len() - 1], yc]];
        let step = (x[i0 + 1] - x[i0]).max(1.0);
        let section = section(&m.mesh, &act, &line, step).unwrap_or_default();
        let terrain = crate::pipeline::terrain_along(m, &section);
        app.views.model_space = Some(ModelSpaceCache {
            key,
            colouring: Colouring::for_values(&act, false),
            act,
            section,
            terrain,
        });
    }
    let Some(cache) = app.views.model_space.take() else {
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
            app,
            ui,
            &format!("active-{}", cache.key),
            act,
            "active",
            extra,
        );
    });
    let yc = 0.5 * (y[j0] + y[j1]);
    let line = [[x[0], yc], [x[x.len() - 1], yc]];
    if let Some(m) = app.doc.as_ref().and_then(|d| d.views.model.as_ref()) {
        let (s, terrain) = (&cache.section, &cache.terrain);
        ui.label(
            RichText::new("east-west section through the middle of the core, including padding")
                .weak(),
        );
        let decor = section_decor(app, &line, true, false);
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
    app.views.model_space = Some(cache);
}

/// Cell edges, the core's extent and projected drill holes for a section
/// along `line` of the selected scenario.
fn section_decor(
    app: &FieldstoneApp,
    line: &[[f64; 2]],
    cell_edges: bool,
    holes: bool,
) -> canvas::SectionDecor {
    let mut decor = canvas::SectionDecor {
        cell_edges,
        ..Default::default()
    };
    let Some(d) = app.doc.as_ref() else {
        return decor;
    };
    let Some(m) = d.views.model.as_ref() else {
        return decor;
    };
    decor.columns = Some((m.mesh.x.clone(), m.mesh.y.clone()));
    let mesh = &m.mesh;
    let [(i0, i1), (j0, j1), (k0, _)] = mesh.core;
    // The core along the line: where the line runs inside the core's box.
    let inside: Vec<f64> = (0..=200)
        .filter_map(|k| {
            let t = k as f64 / 200.0;
            let p = [
                line[0][0] + t * (line[line.len() - 1][0] - line[0][0]),
                line[0][1] + t * (line[line.len() - 1][1] - line[0][1]),
            ];
            let ok = p[0] >= mesh.x[i0] - 1e-6
                && p[0] <= mesh.x[i1] + 1e-6
                && p[1] >= mesh.y[j0] - 1e-6
                && p[1] <= mesh.y[j1] + 1e-6;
            ok.then(|| fieldstone_core::export::section::project_onto_line(line, p).map(|(d, _)| d))
                .flatten()
        })
        .collect();
    if let (Some(a), Some(b)) = (inside.first(), inside.last()) {
        decor.core = Some(([*a, *b], mesh.z[k0]));
    }
    if holes {
        let sc = d.project.scenarios.get(app.scenario);
        let log = sc.and_then(|s| crate::pipeline::hole_log_for(m, &d.project, s));
        let cell = mesh.x[i0 + 1] - mesh.x[i0];
        let dist = d.project.exports.hole_distance_m.unwrap_or(cell);
        let e =
            crate::pipeline::section_extras(m, line, None, dist, "", String::new(), log.as_ref());
        decor.holes = e.holes;
        decor.log_label = e.log_label;
    }
    decor
}

fn constraints(app: &mut FieldstoneApp, ui: &mut Ui) {
    let Some(doc) = app.doc.as_ref() else { return };
    let Some(sc) = doc.project.scenarios.get(app.scenario).cloned() else {
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
    use fieldstone_core::constraint::build::faces_on_cells;
    let sh = arrays.shape;
    let mean = |a: f64, b: f64| 0.5 * (a + b);
    let v: Vec<f64> = match app.views.constraint_array.as_str() {
        "lower_bound" => arrays.lower.clone(),
        "reference" => arrays.reference.clone(),
        "reference_weight" => arrays.reference_weight.clone(),
        "starting" => arrays.starting.clone(),
        "fixed" => arrays
            .fixed
            .iter()
            .map(|f| if *f { 1.0 } else { 0.0 })
            .collect(),
        "smoothness_x" => faces_on_cells(sh, 0, &arrays.smooth_x, f64::min),
        "smoothness_y" => faces_on_cells(sh, 1, &arrays.smooth_y, f64::min),
        "smoothness_z" => faces_on_cells(sh, 2, &arrays.smooth_z, f64::min),
        "reference_gradient_x" => faces_on_cells(sh, 0, &arrays.ref_grad_x, mean),
        "reference_gradient_y" => faces_on_cells(sh, 1, &arrays.ref_grad_y, mean),
        "reference_gradient_z" => faces_on_cells(sh, 2, &arrays.ref_grad_z, mean),
        _ => arrays.upper.clone(),
    };
    let v: Vec<f64> = v
        .iter()
        .zip(&arrays.active)
        .map(|(x, a)| if *a && x.is_finite() { *x } else { f64::NAN })
        .collect();
    let mut extra: Vec<(Vec<[f64; 2]>, Color32, bool)> = sc
        .layers
        .iter()
        .filter_map(|l| match &l.region {
            fieldstone_core::constraint::region::Region::Polygon { vertices, .. } => {
                Some((vertices.clone(), Color32::from_rgb(200, 30, 30), true))
            }
            _ => None,
        })
        .collect();
    if let Some(d) = &app.forms.drawing {
        extra.push((d.clone(), Color32::from_rgb(230, 120, 0), false));
    }
    ui.label(
        RichText::new(format!(
            "{} of scenario '{}' before any run (blank: unbounded or air{})",
            app.views.constraint_array,
            sc.name,
            if app.views.constraint_array.starts_with("smoothness")
                || app.views.constraint_array.starts_with("reference_gradient")
            {
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
        app.views.constraint_array,
        fieldstone_core::project::provenance::hash_json(&sc.layers)
    );
    let r = slice_map(app, ui, &key, &v, "", extra);
    if let Some(d) = app.forms.drawing.as_mut() {
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

fn iterations_of(app: &FieldstoneApp) -> Vec<IterationRecord> {
    if let Some(j) = &app.job {
        if !j.iterations.is_empty() {
            return j.iterations.clone();
        }
    }
    let name = app.scenario_name();
    app.doc
        .as_ref()
        .and_then(|d| d.views.runs.get(&name))
        .map(|r| r.log.clone())
        .filter(|l| !l.is_empty())
        .unwrap_or_else(|| app.views.last_iterations.clone())
}

fn run_log(app: &mut FieldstoneApp, ui: &mut Ui) {
    let its = iterations_of(app);
    let target = app
        .doc
        .as_ref()
        .and_then(|d| d.views.runs.get(&app.scenario_name()))
        .map(|r| r.file.summary.target_phi_d);
    ui.label(
        RichText::new(format!(
            "run log of '{}': φ_d and φ_m by iteration",
            app.scenario_name()
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

/// Section samples, terrain line, layer tops, title and the line itself.
type SectionView = (
    Vec<SectionSample>,
    Vec<[f64; 2]>,
    Vec<f64>,
    String,
    Vec<[f64; 2]>,
);

/// The section of the selected run: east-west or north-south through the
/// chosen point (the core centre until one is clicked).
fn current_section(app: &FieldstoneApp, ns: bool) -> Option<SectionView> {
    let d = app.doc.as_ref()?;
    let m = d.views.model.as_ref()?;
    let run = d.views.runs.get(&app.scenario_name())?;
    let [(i0, i1), (j0, j1), _] = m.mesh.core;
    let (x, y) = (&m.mesh.x, &m.mesh.y);
    let at = app
        .views
        .section_at
        .unwrap_or([0.5 * (x[i0] + x[i1]), 0.5 * (y[j0] + y[j1])]);
    let line = if ns {
        [[at[0], y[j0]], [at[0], y[j1]]]
    } else {
        [[x[i0], at[1]], [x[i1], at[1]]]
    };
    let step = (x[i0 + 1] - x[i0]).max(1.0);
    let s = section(&m.mesh, &run.model, &line, step).ok()?;
    let terrain = crate::pipeline::terrain_along(m, &s);
    let title = format!(
        "{} — {} section through {:.0} m {}",
        app.scenario_name(),
        if ns { "north-south" } else { "east-west" },
        if ns { at[0] } else { at[1] },
        if ns { "E" } else { "N" }
    );
    Some((s, terrain, m.mesh.z.clone(), title, line.to_vec()))
}

fn results(app: &mut FieldstoneApp, ui: &mut Ui) {
    let name = app.scenario_name();
    let Some(doc) = app.doc.as_ref() else { return };
    let Some(run) = doc.views.runs.get(&name) else {
        ui.label(format!(
            "Scenario '{name}' has not been run: choose Runs and press Run."
        ));
        return;
    };
    let units = run.file.model_units.clone();
    ui.label(
        RichText::new(format!(
            "{} · {} · chi-factor {:.3} · {}",
            name, units, run.file.summary.chi_factor, run.file.background
        ))
        .weak(),
    );
    match app.views.result_view {
        1 | 2 => {
            let ns = app.views.result_view == 2;
            if let Some((s, terrain, z, title, line)) = current_section(app, ns) {
                ui.horizontal(|ui| {
                    ui.label(RichText::new(title).strong());
                    ui.checkbox(&mut app.views.cell_edges, "Cell edges");
                    ui.checkbox(&mut app.views.hole_logs, "Drill holes");
                });
                let c = Colouring::for_values(
                    &s.iter().map(|q| q.value).collect::<Vec<_>>(),
                    app.views.equalise,
                );
                let decor = section_decor(app, &line, app.views.cell_edges, app.views.hole_logs);
                if let Some((d, e, v)) =
                    canvas::section(ui, &s, &z, &terrain, &c, &units, 1.0, &decor)
                {
                    app.hover = Some(([d, e], Some(v)));
                }
            }
        }
        3 => data_fit(app, ui),
        5 => depth_of_investigation(app, ui),
        4 => {
            let other = app.views.compare_with.clone();
            let Some(o) = doc.views.runs.get(&other) else {
                ui.label("Choose another run to subtract in the form.");
                return;
            };
            let diff: Vec<f64> = run.model.iter().zip(&o.model).map(|(a, b)| a - b).collect();
            ui.label(RichText::new(format!("'{name}' minus '{other}'")).strong());
            slice_map(
                app,
                ui,
                &format!("diff-{name}-{other}"),
                &diff,
                &units,
                vec![],
            );
        }
        _ => {
            let model = run.model.clone();
            ui.label(RichText::new("click the map to place the sections").weak());
            let r = slice_map(
                app,
                ui,
                &format!("model-{name}-{}", run.file.summary.elapsed_s),
                &model,
                &units,
                vec![],
            );
            if let Some(c) = r.clicked {
                app.views.section_at = Some(c);
            }
        }
    }
}

/// The depth-of-investigation index of the current scenario as a plan
/// slice, with the median of each layer against depth.
fn depth_of_investigation(app: &mut FieldstoneApp, ui: &mut Ui) {
    let name = app.scenario_name();
    let Some(run) = app.doc.as_ref().and_then(|d| d.views.runs.get(&name)) else {
        return;
    };
    let (Some(doi), Some(summary)) = (
        run.doi.clone(),
        run.appraisal.as_ref().and_then(|a| a.doi.clone()),
    ) else {
        ui.label("This scenario has no depth-of-investigation index: set a reference shift under Runs → Appraisal, then run it.");
        return;
    };
    let cut = summary.profile.cutoff;
    ui.label(
        RichText::new(match summary.profile.depth_m {
            Some(z) if Some(z) == summary.profile.layers.first().map(|l| l.0) => format!("The layer medians of the index are above {cut} from the top down: the data do not decide the value of single layers here (potential-field data see sums down each column). Compare scenarios rather than reading depths off one model."),
            Some(z) => format!("Below about {z:.0} m the layer medians of the index stay above {cut}: there the model follows its reference more than the data. Read deeper structure with care."),
            None => format!("The layer medians stay below {cut}: the data, not the reference, decided the model at every depth of the mesh."),
        })
        .strong(),
    );
    ui.label(
        RichText::new(format!(
            "0 where the data decided a cell's value, 1 where it followed the reference (second run: reference shifted by {}{}, chi-factor {:.3}; {} of {} free cells above {cut}).",
            summary.reference_shift,
            summary
                .block_m
                .map(|b| format!(" up and down in blocks of {b:.0} m"))
                .unwrap_or_default(),
            summary.chi_factor_shifted,
            summary.cells_above_cutoff,
            summary.free_cells
        ))
        .weak(),
    );
    ui.label(
        RichText::new("Shown clipped to 0–1: below 0 the second run moved a cell against the shift to keep the data fitted (the data decided it); cells carry the imprint of the shift's blocks, so read depth from the layer profile below.")
            .small()
            .weak(),
    );
    let key = format!("doi-{name}-{}", run.file.summary.elapsed_s);
    let clipped: Vec<f64> = doi
        .iter()
        .map(|v| if v.is_finite() { v.clamp(0.0, 1.0) } else { *v })
        .collect();
    let map_h = (ui.available_height() - 170.0).max(200.0);
    let w = ui.available_width();
    let r = ui
        .allocate_ui(egui::vec2(w, map_h), |ui| {
            slice_map(
                app,
                ui,
                &key,
                &clipped,
                "index (0 data, 1 reference)",
                vec![],
            )
        })
        .inner;
    if let Some(c) = r.clicked {
        app.views.section_at = Some(c);
    }
    let pts: Vec<[f64; 2]> = summary
        .profile
        .layers
        .iter()
        .map(|(depth, median, _)| [*median, -depth])
        .collect();
    Plot::new("doi profile")
        .height(150.0)
        .legend(Legend::default())
        .x_axis_label("median of the index in the layer")
        .y_axis_label("elevation below the highest station, m")
        .show(ui, |p| {
            p.line(Line::new("layer median", pts.clone()));
            p.points(Points::new("layers", pts).radius(2.5));
            p.vline(egui_plot::VLine::new("cut-off", cut));
        });
}

fn data_fit(app: &mut FieldstoneApp, ui: &mut Ui) {
    let name = app.scenario_name();
    let Some(run) = app.doc.as_ref().and_then(|d| d.views.runs.get(&name)) else {
        return;
    };
    let obs = &run.observed;
    let pred = &run.predicted;
    let res: Vec<f64> = obs.value.iter().zip(pred).map(|(o, p)| o - p).collect();
    let norm: Vec<f64> = res
        .iter()
        .zip(&obs.uncertainty)
        .map(|(r, u)| r / u)
        .collect();
    let pts = |v: &[f64]| -> Vec<([f64; 2], Option<f64>)> {
        obs.xyz
            .iter()
            .zip(v)
            .map(|(p, v)| ([p[0], p[1]], Some(*v)))
            .collect()
    };
    let both = Colouring::for_values(&obs.value, false);
    let sets = [
        ("observed", pts(&obs.value), both.clone()),
        ("predicted", pts(pred), both),
        ("residual", pts(&res), Colouring::for_values(&res, false)),
    ];
    let ext = extent(app);
    let w = ui.available_width() / 3.0 - 6.0;
    let h = ui.available_height() * 0.6;
    let units = run.file.data_units.clone();
    let mut hover = None;
    ui.horizontal(|ui| {
        for (k, (label, p, c)) in sets.into_iter().enumerate() {
            ui.allocate_ui(egui::vec2(w, h), |ui| {
                ui.vertical(|ui| {
                    ui.label(RichText::new(label).strong());
                    let layers = MapLayers {
                        grid: None,
                        points: p.into(),
                        point_colouring: Some(std::borrow::Cow::Owned(c)),
                        points_version: None,
                        highlight: vec![],
                        lines: vec![],
                        collars: vec![],
                        units: units.clone(),
                    };
                    // Each small map fits its own panel.
                    let mut frame = canvas::MapFrame::default();
                    let r = canvas::map(ui, &mut frame, &mut app.textures, &layers, ext);
                    let _ = k;
                    if r.hover.is_some() {
                        hover = r.hover;
                    }
                });
            });
        }
    });
    app.hover = hover.map(|p| (p, None));
    // Histogram of normalised residuals with the unit normal for comparison.
    let bins = 24;
    let (lo, hi) = (-4.0, 4.0);
    let mut counts = vec![0usize; bins];
    for v in &norm {
        let b = (((v - lo) / (hi - lo)) * bins as f64).floor();
        if (0.0..bins as f64).contains(&b) {
            counts[b as usize] += 1;
        }
    }
    let bw = (hi - lo) / bins as f64;
    let bars: Vec<Bar> = counts
        .iter()
        .enumerate()
        .map(|(i, c)| Bar::new(lo + (i as f64 + 0.5) * bw, *c as f64).width(bw * 0.95))
        .collect();
    let n = norm.len() as f64;
    let normal: Vec<[f64; 2]> = (0..=80)
        .map(|k| {
            let x = lo + (hi - lo) * k as f64 / 80.0;
            [
                x,
                n * bw * (-0.5 * x * x).exp() / (2.0 * std::f64::consts::PI).sqrt(),
            ]
        })
        .collect();
    Plot::new("residual histogram")
        .legend(Legend::default())
        .x_axis_label("normalised residual (residual / uncertainty)")
        .y_axis_label("data")
        .show(ui, |p| {
            p.bar_chart(BarChart::new("normalised residuals", bars));
            p.line(Line::new("unit normal", normal));
        });
}

/// Writes the current section of the selected run as PNG or SVG into its run folder.
pub fn export_section(app: &FieldstoneApp, ext: &str) -> String {
    let ns = app.views.result_view == 2;
    let Some((s, _terrain, _z, title, line)) = current_section(app, ns) else {
        return "run the scenario first".into();
    };
    let Some(d) = app.doc.as_ref() else {
        return String::new();
    };
    let (Some(m), Some(sc)) = (
        d.views.model.as_ref(),
        d.project.scenarios.get(app.scenario),
    ) else {
        return "run the scenario first".into();
    };
    let style = crate::pipeline::FigureStyle::of(&d.project);
    let fig =
        crate::pipeline::run_section_figure(&d.dir, &d.project, m, sc, &s, &line, &title, &style);
    let path = crate::pipeline::run_dir(&d.dir, &app.scenario_name()).join(format!(
        "window_section_{}.{ext}",
        if ns { "ns" } else { "ew" }
    ));
    let bytes = if ext == "png" {
        fig.png_at_dpi(d.project.exports.figure_dpi.unwrap_or(BASE_DPI))
    } else {
        fig.svg().into_bytes()
    };
    match fieldstone_core::io::atomic::write_bytes_atomically(&path, &bytes) {
        Ok(()) => format!("wrote {}", path.display()),
        Err(e) => e.to_string(),
    }
}

/// Writes the plan slice of the selected run as a GeoTIFF and a PNG.
pub fn export_slice(app: &FieldstoneApp) -> String {
    let Some(d) = app.doc.as_ref() else {
        return String::new();
    };
    let name = app.scenario_name();
    let (Some(m), Some(run)) = (d.views.model.as_ref(), d.views.runs.get(&name)) else {
        return "run the scenario first".into();
    };
    let z = app.views.slice_z;
    let g: Grid2 = match plan_slice(&m.mesh, &run.model, SliceLevel::Elevation(z), None) {
        Ok(g) => g,
        Err(e) => return e.to_string(),
    };
    let base = crate::pipeline::run_dir(&d.dir, &name).join(format!("window_slice_{z:.0}m"));
    let tif = base.with_extension("tif");
    if let Err(e) = fieldstone_core::grid::geotiff::write_geotiff(&tif, &g) {
        return e.to_string();
    }
    let Some(sc) = d.project.scenarios.iter().find(|s| s.name == name) else {
        return "no such scenario".into();
    };
    let fig = crate::pipeline::run_slice_figure(
        &d.project,
        m,
        sc,
        &g,
        format!("{name} — plan slice at {z:.0} m elevation"),
        &crate::pipeline::FigureStyle::of(&d.project),
    );
    let dpi = d.project.exports.figure_dpi.unwrap_or(BASE_DPI);
    match fieldstone_core::io::atomic::write_bytes_atomically(
        &base.with_extension("png"),
        &fig.png_at_dpi(dpi),
    ) {
        Ok(()) => format!("wrote {} and .png", tif.display()),
        Err(e) => e.to_string(),
    }
}
