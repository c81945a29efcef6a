//! What the maps and sections of several steps share: the survey's
//! extent, drill holes, section lines, a grid map, plan slices of mesh
//! arrays, section decorations, and the section of a run.

use super::Workspace;
use crate::window::canvas::{self, Colouring, GridLayer, MapLayers};
use crate::window::state::HoleTrace;
use egui::{Color32, Ui};
use fieldstone_core::export::section::{plan_slice, section, SectionSample, SliceLevel};

pub fn extent(ws: &Workspace) -> Option<[f64; 4]> {
    let d = ws.doc.as_ref()?;
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

pub fn holes(ws: &Workspace) -> &[HoleTrace] {
    ws.doc
        .as_ref()
        .map(|d| d.views.holes.as_slice())
        .unwrap_or(&[])
}

pub fn collars(ws: &Workspace) -> Vec<([f64; 2], String)> {
    holes(ws)
        .iter()
        .map(|(id, c, _)| ([c[0], c[1]], id.clone()))
        .collect()
}

pub fn traces(ws: &Workspace) -> Vec<(Vec<[f64; 2]>, Color32, bool)> {
    holes(ws)
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

pub fn section_lines(ws: &Workspace) -> Vec<(Vec<[f64; 2]>, Color32, bool)> {
    ws.doc
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
pub fn grid_map(
    ws: &mut Workspace,
    ui: &mut Ui,
    name: &str,
    points: &[([f64; 2], Option<f64>)],
    points_version: Option<u64>,
    extra: Vec<(Vec<[f64; 2]>, Color32, bool)>,
) -> canvas::MapResponse {
    let ext = extent(ws);
    let Some(doc) = ws.doc.as_ref() else {
        return Default::default();
    };
    let g = doc.views.grids.get(name);
    let units = g.map(|g| g.units.clone()).unwrap_or_default();
    let mut lines = traces(ws);
    lines.extend(section_lines(ws));
    lines.extend(extra);
    let layers = MapLayers {
        grid: g.map(|g| GridLayer {
            key: name.to_string(),
            grid: g,
            colouring: (*doc.derived(
                format!("grid colouring|{name}|{}", ws.display.equalise),
                || Colouring::for_values(&g.values, ws.display.equalise),
            ))
            .clone(),
            hillshade: ws.display.hillshade,
            contours: ws.display.contours,
        }),
        points: std::borrow::Cow::Borrowed(points),
        point_colouring: None,
        points_version,
        highlight: vec![],
        lines,
        collars: collars(ws),
        units: units.clone(),
    };
    let r = canvas::map(ui, &mut ws.map, &mut ws.textures, &layers, ext);
    ws.hover = r
        .hover
        .map(|p| (p, g.and_then(|g| g.sample(p[0], p[1]).ok())));
    ws.units = units;
    r
}

pub fn default_slice_z(ws: &mut Workspace) -> Option<(f64, f64, f64)> {
    let m = ws.doc.as_ref()?.views.model.as_ref()?;
    let (zmin, zmax) = (m.mesh.z[m.mesh.core[2].0], m.mesh.z[m.mesh.z.len() - 1]);
    if !ws.display.slice_z.is_finite() || ws.display.slice_z < zmin || ws.display.slice_z > zmax {
        ws.display.slice_z = zmax - 0.3 * (zmax - zmin);
    }
    Some((zmin, zmax, ws.display.slice_z))
}

/// A plan-slice map of a full-mesh array.
pub fn slice_map(
    ws: &mut Workspace,
    ui: &mut Ui,
    key: &str,
    values: &[f64],
    units: &str,
    extra: Vec<(Vec<[f64; 2]>, Color32, bool)>,
) -> canvas::MapResponse {
    let Some((zmin, zmax, _)) = default_slice_z(ws) else {
        return Default::default();
    };
    ui.horizontal(|ui| {
        ui.label("elevation of the slice");
        ui.add(egui::Slider::new(&mut ws.display.slice_z, zmin..=zmax).suffix(" m"));
        super::widgets::contour_control(ui, &mut ws.display.contours);
    });
    let ext = extent(ws);
    let Some(doc) = ws.doc.as_ref() else {
        return Default::default();
    };
    let Some(m) = doc.views.model.as_ref() else {
        return Default::default();
    };
    // The slice is cut once per change of the project, array or elevation.
    let z = ws.display.slice_z;
    let made = doc.derived(format!("plan slice|{key}|{z}"), || {
        plan_slice(&m.mesh, values, SliceLevel::Elevation(z), None).map_err(|e| e.to_string())
    });
    let g = match made.as_ref() {
        Ok(g) => g,
        Err(e) => {
            ui.label(e.clone());
            return Default::default();
        }
    };
    let mut lines = traces(ws);
    lines.extend(section_lines(ws));
    lines.extend(extra);
    let layers = MapLayers {
        grid: Some(GridLayer {
            key: format!("{key}@{:.1}", ws.display.slice_z),
            grid: g,
            colouring: ws
                .textures
                .colouring(&format!("{key}|{}", ws.display.equalise), || {
                    Colouring::for_values(values, ws.display.equalise)
                }),
            hillshade: false,
            contours: ws.display.contours,
        }),
        points: Default::default(),
        point_colouring: None,
        points_version: None,
        highlight: ws.display.section_at.into_iter().collect(),
        lines,
        collars: collars(ws),
        units: units.into(),
    };
    let r = canvas::map(ui, &mut ws.map, &mut ws.textures, &layers, ext);
    ws.hover = r.hover.map(|p| (p, g.sample(p[0], p[1]).ok()));
    ws.units = units.into();
    r
}

/// Cell edges, the core's extent and projected drill holes for a section
/// along `line` of the selected scenario.
pub fn section_decor(
    ws: &Workspace,
    line: &[[f64; 2]],
    cell_edges: bool,
    holes: bool,
) -> canvas::SectionDecor {
    let mut decor = canvas::SectionDecor {
        cell_edges,
        ..Default::default()
    };
    let Some(d) = ws.doc.as_ref() else {
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
        let sc = d.project.scenarios.get(ws.scenario);
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

/// Section samples, terrain line, layer tops, title and the line itself.
pub type SectionView = (
    Vec<SectionSample>,
    Vec<[f64; 2]>,
    Vec<f64>,
    String,
    Vec<[f64; 2]>,
);

/// The section of the selected run: east-west or north-south through the
/// chosen point (the core centre until one is clicked).
pub fn current_section(ws: &Workspace, ns: bool) -> Option<SectionView> {
    let d = ws.doc.as_ref()?;
    let m = d.views.model.as_ref()?;
    let run = d.views.runs.get(&ws.scenario_name())?;
    let [(i0, i1), (j0, j1), _] = m.mesh.core;
    let (x, y) = (&m.mesh.x, &m.mesh.y);
    let at = ws
        .display
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
        ws.scenario_name(),
        if ns { "north-south" } else { "east-west" },
        if ns { at[0] } else { at[1] },
        if ns { "E" } else { "N" }
    );
    Some((s, terrain, m.mesh.z.clone(), title, line.to_vec()))
}
