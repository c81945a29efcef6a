//! Regions of a constraint layer and which cells they hold.

use super::wireframe::{inside_by_crossings, Wireframe};
use super::ConstraintError;
use crate::drillhole::desurvey::Trace;
use crate::drillhole::HoleSet;
use crate::grid::Grid2;
use crate::mesh::TensorMesh;
use serde::{Deserialize, Serialize};
use std::collections::HashMap;

/// A level: a fixed elevation, or a named surface grid with an offset.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
#[serde(tag = "kind", rename_all = "snake_case")]
pub enum Level {
    Elevation { z_m: f64 },
    Surface { name: String, offset_m: f64 },
}

/// Where a layer applies.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
#[serde(tag = "kind", rename_all = "snake_case")]
pub enum Region {
    Whole,
    AboveSurface {
        surface: String,
    },
    BelowSurface {
        surface: String,
    },
    BetweenSurfaces {
        upper: String,
        lower: String,
    },
    /// Within `half_thickness_m` above or below a surface.
    SurfaceBand {
        surface: String,
        half_thickness_m: f64,
    },
    /// A map polygon (x, y vertices) extruded between two levels.
    Polygon {
        vertices: Vec<[f64; 2]>,
        top: Level,
        bottom: Level,
    },
    /// Map outlines read from a GeoJSON or shapefile (polygons with holes,
    /// several parts), in the project's reference, extruded between two
    /// levels; `source` says which file and feature they came from.
    Outline {
        source: String,
        parts: Vec<crate::outline::MapPolygon>,
        top: Level,
        bottom: Level,
    },
    Box {
        x: [f64; 2],
        y: [f64; 2],
        z: [f64; 2],
    },
    /// A tabular body: centre, strike (degrees from north), dip (degrees below
    /// horizontal, to the right of strike), length along strike, extent down
    /// dip and true thickness, metres.
    Tabular {
        centre: [f64; 3],
        strike_deg: f64,
        dip_deg: f64,
        length_m: f64,
        depth_extent_m: f64,
        thickness_m: f64,
    },
    /// Inside a named closed wireframe.
    Wireframe {
        name: String,
    },
    /// Cylinders of influence of radius `radius_m` around every logged
    /// interval; with `decay` the weight falls linearly to 0 at the radius.
    DrillHoles {
        radius_m: f64,
        decay: bool,
    },
}

/// Named inputs that regions refer to.
#[derive(Debug, Default, Clone)]
pub struct Inputs {
    pub surfaces: HashMap<String, Grid2>,
    pub wireframes: HashMap<String, Wireframe>,
    pub holes: Option<HoleSet>,
}

impl Inputs {
    fn surface(&self, name: &str) -> Result<&Grid2, ConstraintError> {
        self.surfaces
            .get(name)
            .ok_or_else(|| ConstraintError::UnknownInput {
                kind: "surface",
                name: name.to_string(),
                known: self.surfaces.keys().cloned().collect::<Vec<_>>().join(", "),
            })
    }
}

/// A surface sampled at every column centre. Beyond the surface grid's
/// extent the nearest edge value is used.
pub fn surface_at_columns(mesh: &TensorMesh, g: &Grid2) -> Result<Vec<f64>, ConstraintError> {
    let [nx, ny, _] = mesh.shape();
    let (x0, x1, y0, y1) = g.extent();
    let mut out = vec![0.0; nx * ny];
    for j in 0..ny {
        for i in 0..nx {
            let c = mesh.centre(i, j, 0);
            out[i + nx * j] = g
                .sample(c[0].clamp(x0, x1), c[1].clamp(y0, y1))
                .map_err(|_| ConstraintError::SurfaceGap {
                    name: g.note.clone(),
                    x: c[0],
                    y: c[1],
                })?;
        }
    }
    Ok(out)
}

fn level_at_columns(
    mesh: &TensorMesh,
    l: &Level,
    inputs: &Inputs,
) -> Result<Vec<f64>, ConstraintError> {
    let [nx, ny, _] = mesh.shape();
    match l {
        Level::Elevation { z_m } => Ok(vec![*z_m; nx * ny]),
        Level::Surface { name, offset_m } => Ok(surface_at_columns(mesh, inputs.surface(name)?)?
            .into_iter()
            .map(|v| v + offset_m)
            .collect()),
    }
}

/// Marks the cells whose column centre `inside` holds, between the levels
/// `top` and `bottom` (a map shape extruded in depth).
fn extruded(
    w: &mut [f32],
    mesh: &TensorMesh,
    top: &Level,
    bottom: &Level,
    inputs: &Inputs,
    inside: &dyn Fn(f64, f64) -> bool,
) -> Result<(), ConstraintError> {
    let [nx, ny, nz] = mesh.shape();
    let (t, b) = (
        level_at_columns(mesh, top, inputs)?,
        level_at_columns(mesh, bottom, inputs)?,
    );
    let columns: Vec<bool> = (0..nx * ny)
        .map(|c| {
            let p = mesh.centre(c % nx, c / nx, 0);
            inside(p[0], p[1])
        })
        .collect();
    for k in 0..nz {
        let zc = 0.5 * (mesh.z[k] + mesh.z[k + 1]);
        for c in (0..nx * ny).filter(|&c| columns[c]) {
            if zc < t[c] && zc > b[c] {
                w[c + nx * ny * k] = 1.0;
            }
        }
    }
    Ok(())
}

/// Per-cell weight (0 outside, 1 inside, in between for decaying regions),
/// and for drill holes the weighted interval values per value column.
pub fn membership(
    region: &Region,
    mesh: &TensorMesh,
    inputs: &Inputs,
) -> Result<Vec<f32>, ConstraintError> {
    let [nx, ny, nz] = mesh.shape();
    let n = mesh.n_cells();
    let mut w = vec![0f32; n];
    let by_columns = |w: &mut Vec<f32>, inside: &dyn Fn(usize, usize, f64) -> bool| {
        for k in 0..nz {
            let zc = 0.5 * (mesh.z[k] + mesh.z[k + 1]);
            for j in 0..ny {
                for i in 0..nx {
                    if inside(i, j, zc) {
                        w[i + nx * (j + ny * k)] = 1.0;
                    }
                }
            }
        }
    };
    match region {
        Region::Whole => w.iter_mut().for_each(|v| *v = 1.0),
        Region::AboveSurface { surface } | Region::BelowSurface { surface } => {
            let s = surface_at_columns(mesh, inputs.surface(surface)?)?;
            let above = matches!(region, Region::AboveSurface { .. });
            by_columns(&mut w, &|i, j, z| (z > s[i + nx * j]) == above);
        }
        Region::BetweenSurfaces { upper, lower } => {
            let (u, l) = (
                surface_at_columns(mesh, inputs.surface(upper)?)?,
                surface_at_columns(mesh, inputs.surface(lower)?)?,
            );
            by_columns(&mut w, &|i, j, z| z < u[i + nx * j] && z > l[i + nx * j]);
        }
        Region::SurfaceBand {
            surface,
            half_thickness_m,
        } => {
            let s = surface_at_columns(mesh, inputs.surface(surface)?)?;
            by_columns(&mut w, &|i, j, z| {
                (z - s[i + nx * j]).abs() <= *half_thickness_m
            });
        }
        Region::Polygon {
            vertices,
            top,
            bottom,
        } => {
            let poly: Vec<(f64, f64)> = vertices.iter().map(|v| (v[0], v[1])).collect();
            if poly.len() < 3 {
                return Err(ConstraintError::Geometry(
                    "a polygon needs at least three vertices".into(),
                ));
            }
            let inside = |x, y| crate::grid::blank::inside_polygon(&poly, x, y);
            extruded(&mut w, mesh, top, bottom, inputs, &inside)?;
        }
        Region::Outline {
            parts, top, bottom, ..
        } => {
            if parts.is_empty() {
                return Err(ConstraintError::Geometry(
                    "an outline region has no polygons; read them with \"Add outlines from a file…\" in Constraints".into(),
                ));
            }
            let inside = |x, y| parts.iter().any(|q| q.contains(x, y));
            extruded(&mut w, mesh, top, bottom, inputs, &inside)?;
        }
        Region::Box { x, y, z } => {
            by_columns(&mut w, &|i, j, zc| {
                let c = mesh.centre(i, j, 0);
                c[0] > x[0] && c[0] < x[1] && c[1] > y[0] && c[1] < y[1] && zc > z[0] && zc < z[1]
            });
        }
        Region::Tabular {
            centre,
            strike_deg,
            dip_deg,
            length_m,
            depth_extent_m,
            thickness_m,
        } => {
            let st = strike_deg.to_radians();
            let s = [st.sin(), st.cos(), 0.0];
            let dd = (strike_deg + 90.0).to_radians();
            let dip = dip_deg.to_radians();
            let u = [dip.cos() * dd.sin(), dip.cos() * dd.cos(), -dip.sin()];
            let nrm = [
                s[1] * u[2] - s[2] * u[1],
                s[2] * u[0] - s[0] * u[2],
                s[0] * u[1] - s[1] * u[0],
            ];
            let dot = |a: [f64; 3], b: [f64; 3]| a[0] * b[0] + a[1] * b[1] + a[2] * b[2];
            for k in 0..nz {
                for j in 0..ny {
                    for i in 0..nx {
                        let c = mesh.centre(i, j, k);
                        let d = [c[0] - centre[0], c[1] - centre[1], c[2] - centre[2]];
                        if dot(d, s).abs() <= length_m / 2.0
                            && dot(d, u).abs() <= depth_extent_m / 2.0
                            && dot(d, nrm).abs() <= thickness_m / 2.0
                        {
                            w[mesh.index(i, j, k)] = 1.0;
                        }
                    }
                }
            }
        }
        Region::Wireframe { name } => {
            let wf = inputs
                .wireframes
                .get(name)
                .ok_or_else(|| ConstraintError::UnknownInput {
                    kind: "wireframe",
                    name: name.clone(),
                    known: inputs
                        .wireframes
                        .keys()
                        .cloned()
                        .collect::<Vec<_>>()
                        .join(", "),
                })?;
            let c = wf.closedness();
            if !c.is_closed() {
                return Err(ConstraintError::Geometry(format!(
                    "wireframe '{name}' is not closed: {}; close it in the modelling package first",
                    c.report()
                )));
            }
            let xc: Vec<f64> = (0..nx).map(|i| 0.5 * (mesh.x[i] + mesh.x[i + 1])).collect();
            let yc: Vec<f64> = (0..ny).map(|j| 0.5 * (mesh.y[j] + mesh.y[j + 1])).collect();
            let cross = wf.column_crossings(&xc, &yc);
            by_columns(&mut w, &|i, j, z| {
                let c = &cross[i + nx * j];
                !c.is_empty() && inside_by_crossings(c, z)
            });
        }
        Region::DrillHoles { radius_m, decay } => {
            let holes = inputs
                .holes
                .as_ref()
                .ok_or_else(|| ConstraintError::UnknownInput {
                    kind: "drill holes",
                    name: "(none loaded)".into(),
                    known: String::new(),
                })?;
            let hits = hole_cells(mesh, holes, *radius_m, *decay);
            for (cell, (wt, _)) in hits {
                w[cell] = w[cell].max(wt as f32);
            }
        }
    }
    Ok(w)
}

/// How a cell is reached by drill-hole cylinders: the largest weight, and
/// every (hole, interval, weight) that reaches it.
pub type HoleHit = (f64, Vec<(usize, usize, f64)>);

/// Cells within `radius_m` of each logged interval (a cylinder around the
/// trace, no end caps): cell → (largest weight, per-interval (hole, interval,
/// weight) list). Weight 1, or 1 − d/R with `decay`.
pub fn hole_cells(
    mesh: &TensorMesh,
    holes: &HoleSet,
    radius_m: f64,
    decay: bool,
) -> HashMap<usize, HoleHit> {
    let mut out: HashMap<usize, HoleHit> = HashMap::new();
    let min_cell = mesh
        .x
        .windows(2)
        .chain(mesh.y.windows(2))
        .chain(mesh.z.windows(2))
        .map(|w| w[1] - w[0])
        .fold(f64::INFINITY, f64::min);
    let step = (min_cell / 2.0).max(0.1);
    for (h, hole) in holes.holes.iter().enumerate() {
        let tr = Trace::of(hole);
        for (iv, interval) in hole.intervals.iter().enumerate() {
            let n = ((interval.to_m - interval.from_m) / step).ceil().max(1.0) as usize;
            let pts: Vec<[f64; 3]> = (0..=n)
                .map(|s| {
                    tr.at(interval.from_m + (interval.to_m - interval.from_m) * s as f64 / n as f64)
                })
                .collect();
            let (mut lo, mut hi) = ([f64::INFINITY; 3], [f64::NEG_INFINITY; 3]);
            for p in &pts {
                for a in 0..3 {
                    lo[a] = lo[a].min(p[a] - radius_m);
                    hi[a] = hi[a].max(p[a] + radius_m);
                }
            }
            let range = |nodes: &[f64], a: f64, b: f64| {
                (
                    nodes.partition_point(|&v| v <= a).saturating_sub(1),
                    nodes.partition_point(|&v| v < b).min(nodes.len() - 1),
                )
            };
            let (i0, i1) = range(&mesh.x, lo[0], hi[0]);
            let (j0, j1) = range(&mesh.y, lo[1], hi[1]);
            let (k0, k1) = range(&mesh.z, lo[2], hi[2]);
            for k in k0..k1 {
                for j in j0..j1 {
                    for i in i0..i1 {
                        let c = mesh.centre(i, j, k);
                        // Distance to the polyline; a cell whose nearest point is
                        // beyond either end of the interval is outside the cylinder.
                        let mut best = f64::INFINITY;
                        let mut beyond = false;
                        let last = pts.len() - 2;
                        for (s, seg) in pts.windows(2).enumerate() {
                            let d = [
                                seg[1][0] - seg[0][0],
                                seg[1][1] - seg[0][1],
                                seg[1][2] - seg[0][2],
                            ];
                            let l2 = d[0] * d[0] + d[1] * d[1] + d[2] * d[2];
                            let t_raw = if l2 > 0.0 {
                                ((c[0] - seg[0][0]) * d[0]
                                    + (c[1] - seg[0][1]) * d[1]
                                    + (c[2] - seg[0][2]) * d[2])
                                    / l2
                            } else {
                                0.0
                            };
                            let t = t_raw.clamp(0.0, 1.0);
                            let q = [
                                seg[0][0] + t * d[0],
                                seg[0][1] + t * d[1],
                                seg[0][2] + t * d[2],
                            ];
                            let dist = ((c[0] - q[0]).powi(2)
                                + (c[1] - q[1]).powi(2)
                                + (c[2] - q[2]).powi(2))
                            .sqrt();
                            if dist < best {
                                best = dist;
                                beyond = (s == 0 && t_raw < 0.0) || (s == last && t_raw > 1.0);
                            }
                        }
                        if beyond {
                            continue;
                        }
                        if best <= radius_m {
                            let wt = if decay { 1.0 - best / radius_m } else { 1.0 };
                            let e = out.entry(mesh.index(i, j, k)).or_insert((0.0, Vec::new()));
                            e.0 = e.0.max(wt);
                            e.1.push((h, iv, wt));
                        }
                    }
                }
            }
        }
    }
    out
}
