//! Figures of a run, drawn the same way by the exports step, the `export`
//! command and the window: map figures with what the project knows (holes,
//! section lines, polygons), section figures with holes, logs and data.

use crate::context::ModelContext;
use crate::data::Points;
use crate::paths::{now_date, run_dir};
use crate::runfiles::{read_predicted, units_of};
use fieldstone_core::export::figure::{
    map_figure, section_figure_with, MapOptions, ProjectedHole, SectionExtras,
};
use fieldstone_core::export::section::project_onto_line;
use fieldstone_core::grid::Grid2;
use fieldstone_core::project::file::{DataKind, ProjectFile, Scenario};
use std::path::Path;

/// desurveyed trace to the total depth (or the last logged interval).
/// Every drill hole of the project: id, collar and 21 points down its
pub fn hole_traces(m: &ModelContext) -> Vec<(String, [f64; 3], Vec<[f64; 3]>)> {
    let Some(hs) = &m.inputs.holes else {
        return vec![];
    };
    hs.holes
        .iter()
        .map(|h| {
            let tr = fieldstone_core::drillhole::desurvey::Trace::of(h);
            let td = h
                .total_depth_m
                .or(h.intervals.last().map(|i| i.to_m))
                .unwrap_or(0.0);
            (
                h.id.clone(),
                h.collar,
                (0..=20).map(|k| tr.at(td * k as f64 / 20.0)).collect(),
            )
        })
        .collect()
}

/// The logged values shown beside holes on a section: which interval column
/// and the background subtracted so they sit on the model's scale.
#[derive(Debug, Clone, PartialEq)]
pub struct HoleLog {
    pub column: usize,
    pub background: f64,
    pub label: String,
}

/// The hole log matching a scenario's model: the column a layer takes its
/// reference from, else a density column for gravity or a susceptibility
/// column for magnetics (by name).
pub fn hole_log_for(m: &ModelContext, p: &ProjectFile, s: &Scenario) -> Option<HoleLog> {
    let hs = m.inputs.holes.as_ref()?;
    let (mu, _) = units_of(s.data);
    let unit = mu.split(" (").next().unwrap_or(mu);
    let from_layer = s
        .layers
        .iter()
        .filter(|l| l.enabled)
        .find_map(|l| l.assign.from_holes.as_ref())
        .and_then(|hv| {
            hs.value_names
                .iter()
                .position(|n| n.eq_ignore_ascii_case(&hv.column))
                .map(|c| (c, hv.background))
        });
    let (column, background) = from_layer.or_else(|| {
        let (key, bg) = match s.data {
            DataKind::Gravity => ("dens", p.background_density_g_cc),
            DataKind::Magnetic => ("sus", 0.0),
        };
        hs.value_names
            .iter()
            .position(|n| n.to_ascii_lowercase().contains(key))
            .map(|c| (c, bg))
    })?;
    let name = &hs.value_names[column];
    let label = if background != 0.0 {
        format!("logged {name} − {background} {unit}")
    } else {
        format!("logged {name} ({unit})")
    };
    Some(HoleLog {
        column,
        background,
        label,
    })
}

/// How a run's figures are drawn (project export settings or command options).
#[derive(Debug, Clone, Default, PartialEq)]
pub struct FigureStyle {
    /// Holes and data within this distance of a section line are projected
    /// onto it (default: one core cell).
    pub hole_distance_m: Option<f64>,
    pub colour_map: Option<fieldstone_core::export::figure::ColourMap>,
    /// Map figures: contour interval in the grid's units (None: no contours).
    pub contour_interval: Option<f64>,
    /// Map figures: shade by the grid's relief.
    pub hillshade: bool,
}

/// What a map figure of the project shows besides its grid: drill-hole
/// collars, the project's section lines, the polygons of a scenario's
/// layers and, when given, station positions.
pub fn map_options(
    p: &ProjectFile,
    m: Option<&ModelContext>,
    scenario: Option<&Scenario>,
    stations: Vec<[f64; 2]>,
    style: &FigureStyle,
    title: String,
    units: &str,
) -> MapOptions {
    let collars = m
        .map(|m| {
            hole_traces(m)
                .into_iter()
                .map(|(id, c, _)| (id, [c[0], c[1]]))
                .collect()
        })
        .unwrap_or_default();
    let polygons = scenario
        .map(|s| {
            s.layers
                .iter()
                .filter(|l| l.enabled)
                .filter_map(|l| match &l.region {
                    fieldstone_core::constraint::region::Region::Polygon { vertices, .. } => {
                        Some(vec![(l.name.clone(), vertices.clone())])
                    }
                    fieldstone_core::constraint::region::Region::Outline { parts, .. } => Some(
                        parts
                            .iter()
                            .flat_map(|q| std::iter::once(&q.outer).chain(&q.holes))
                            .map(|r| (l.name.clone(), r.clone()))
                            .collect(),
                    ),
                    _ => None,
                })
                .flatten()
                .collect()
        })
        .unwrap_or_default();
    MapOptions {
        title,
        units: units.into(),
        colour_map: style.colour_map,
        hillshade: style.hillshade,
        contour_interval: style.contour_interval,
        stations,
        polygons,
        lines: p
            .exports
            .sections
            .iter()
            .map(|l| (l.name.clone(), l.vertices.clone()))
            .collect(),
        collars,
        caption: format!(
            "{}{} — {}",
            p.name,
            scenario
                .map(|s| format!(" — scenario {}", s.name))
                .unwrap_or_default(),
            now_date()
        ),
    }
}

/// The figure of a plan slice of a scenario's model.
pub fn run_slice_figure(
    p: &ProjectFile,
    m: &ModelContext,
    s: &Scenario,
    g: &Grid2,
    title: String,
    style: &FigureStyle,
) -> fieldstone_core::export::figure::Figure {
    let (mu, _) = units_of(s.data);
    map_figure(
        g,
        &map_options(p, Some(m), Some(s), vec![], style, title, mu),
    )
}

impl FigureStyle {
    /// The style the project's export settings ask for.
    pub fn of(p: &ProjectFile) -> FigureStyle {
        FigureStyle {
            hole_distance_m: p.exports.hole_distance_m,
            colour_map: p
                .exports
                .colour_map
                .as_deref()
                .and_then(fieldstone_core::export::figure::ColourMap::named),
            contour_interval: None,
            hillshade: false,
        }
    }
}

/// Drill holes and data near a section line, for its figure: holes and data
/// within `max_off_m` of the line are projected onto it, holes with their
/// logged values when `log` names a column.
pub fn section_extras(
    m: &ModelContext,
    line: &[[f64; 2]],
    run: Option<(&Points, &[f64])>,
    max_off_m: f64,
    data_units: &str,
    caption: String,
    log: Option<&HoleLog>,
) -> SectionExtras {
    let mut e = SectionExtras {
        data_units: data_units.into(),
        caption,
        log_label: log.map(|l| l.label.clone()).unwrap_or_default(),
        ..Default::default()
    };
    let project = |p: [f64; 3]| {
        project_onto_line(line, [p[0], p[1]])
            .filter(|(_, off)| *off <= max_off_m)
            .map(|(d, _)| [d, p[2]])
    };
    let holes = m
        .inputs
        .holes
        .as_ref()
        .map(|h| h.holes.as_slice())
        .unwrap_or(&[]);
    for ((id, _, trace), hole) in hole_traces(m).into_iter().zip(holes) {
        let pts: Vec<[f64; 2]> = trace.iter().filter_map(|p| project(*p)).collect();
        if pts.len() < 2 {
            continue;
        }
        let mut logs = Vec::new();
        if let Some(l) = log {
            let tr = fieldstone_core::drillhole::desurvey::Trace::of(hole);
            for iv in &hole.intervals {
                let Some(v) = iv.values.get(l.column).filter(|v| v.is_finite()) else {
                    continue;
                };
                if let (Some(a), Some(b)) = (project(tr.at(iv.from_m)), project(tr.at(iv.to_m))) {
                    logs.push((a, b, v - l.background));
                }
            }
        }
        e.holes.push(ProjectedHole {
            id,
            trace: pts,
            logs,
        });
    }
    if let Some((obs, pred)) = run {
        let mut rows: Vec<(f64, f64, f64)> = obs
            .xyz
            .iter()
            .zip(obs.value.iter().zip(pred))
            .filter_map(|(p, (o, q))| {
                project_onto_line(line, [p[0], p[1]])
                    .filter(|(_, off)| *off <= max_off_m)
                    .map(|(d, _)| (d, *o, *q))
            })
            .collect();
        rows.sort_by(|a, b| a.0.total_cmp(&b.0));
        e.observed = rows.iter().map(|r| [r.0, r.1]).collect();
        e.predicted = rows.iter().map(|r| [r.0, r.2]).collect();
    }
    e
}

/// The figure of a section of a scenario's model: terrain, drill holes with
/// their logged values and data within the style's distance of the line
/// (default one core cell), the caption with project, run and date.
#[allow(clippy::too_many_arguments)]
pub fn run_section_figure(
    dir: &Path,
    p: &ProjectFile,
    m: &ModelContext,
    s: &Scenario,
    samples: &[fieldstone_core::export::section::SectionSample],
    line: &[[f64; 2]],
    title: &str,
    style: &FigureStyle,
) -> fieldstone_core::export::figure::Figure {
    let (mu, du) = units_of(s.data);
    let cell = m.mesh.x[m.mesh.core[0].0 + 1] - m.mesh.x[m.mesh.core[0].0];
    let run = read_predicted(&run_dir(dir, &s.name).join("predicted.csv"));
    let caption = format!("{} — scenario {} — {}", p.name, s.name, now_date());
    let log = hole_log_for(m, p, s);
    let mut extras = section_extras(
        m,
        line,
        run.as_ref().map(|(o, q)| (o, q.as_slice())),
        style.hole_distance_m.unwrap_or(cell),
        du,
        caption,
        log.as_ref(),
    );
    extras.colour_map = style.colour_map;
    section_figure_with(
        samples,
        &m.mesh.z,
        &terrain_along(m, samples),
        title,
        mu,
        &extras,
    )
}

/// Terrain elevation under each distinct sample position of a section.
pub fn terrain_along(
    m: &ModelContext,
    samples: &[fieldstone_core::export::section::SectionSample],
) -> Vec<[f64; 2]> {
    let [nx, _, _] = m.mesh.shape();
    let mut out: Vec<[f64; 2]> = Vec::new();
    for q in samples {
        if out.last().is_some_and(|l| l[0] == q.distance_m) {
            continue;
        }
        if let Some((i, j, _)) = m.mesh.locate([q.x, q.y, m.mesh.z[0]]) {
            let z = m.active.surface_m[i + nx * j];
            if z.is_finite() {
                out.push([q.distance_m, z]);
            }
        }
    }
    out.sort_by(|a, b| a[0].total_cmp(&b[0]));
    out.dedup_by(|a, b| a[0] == b[0]);
    out
}
