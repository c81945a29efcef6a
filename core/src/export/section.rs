//! Sections along polylines and plan slices, sampled from a cell model.

use super::voxel::ExportError;
use crate::grid::Grid2;
use crate::mesh::TensorMesh;

/// One sample of a section: distance along the line, position, the elevation
/// of the cell centre, the value (NaN in air or outside the mesh).
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct SectionSample {
    pub distance_m: f64,
    pub x: f64,
    pub y: f64,
    pub elevation_m: f64,
    pub value: f64,
}

/// Where a map point falls on a polyline: (distance along it, distance off
/// it), metres, by the nearest point of the nearest segment.
pub fn project_onto_line(line: &[[f64; 2]], p: [f64; 2]) -> Option<(f64, f64)> {
    let mut best: Option<(f64, f64)> = None;
    let mut start = 0.0;
    for w in line.windows(2) {
        let (a, b) = (w[0], w[1]);
        let (dx, dy) = (b[0] - a[0], b[1] - a[1]);
        let len2 = dx * dx + dy * dy;
        let len = len2.sqrt();
        if len2 == 0.0 {
            continue;
        }
        let t = (((p[0] - a[0]) * dx + (p[1] - a[1]) * dy) / len2).clamp(0.0, 1.0);
        let off = (p[0] - a[0] - t * dx).hypot(p[1] - a[1] - t * dy);
        if best.is_none_or(|(_, o)| off < o) {
            best = Some((start + t * len, off));
        }
        start += len;
    }
    best
}

/// The distinct sample distances of a section, sorted, and for each the span
/// (from, to) half-way to its neighbours: the column a sample stands for.
pub fn distance_spans(samples: &[SectionSample]) -> (Vec<f64>, Vec<(f64, f64)>) {
    let mut d: Vec<f64> = samples.iter().map(|s| s.distance_m).collect();
    d.sort_by(|a, b| a.total_cmp(b));
    d.dedup();
    let spans = (0..d.len())
        .map(|i| {
            let a = if i == 0 {
                d[0]
            } else {
                0.5 * (d[i - 1] + d[i])
            };
            let b = if i + 1 == d.len() {
                d[i]
            } else {
                0.5 * (d[i] + d[i + 1])
            };
            (a, b)
        })
        .collect();
    (d, spans)
}

/// Samples `values` along a polyline every `step_m`, in every layer.
pub fn section(
    mesh: &TensorMesh,
    values: &[f64],
    line: &[[f64; 2]],
    step_m: f64,
) -> Result<Vec<SectionSample>, ExportError> {
    if line.len() < 2 {
        return Err(ExportError::Request(
            "a section line needs at least two vertices".into(),
        ));
    }
    if !(step_m.is_finite() && step_m > 0.0) {
        return Err(ExportError::Request(format!(
            "section spacing must be positive, got {step_m}"
        )));
    }
    let [_, _, nz] = mesh.shape();
    let mut out = Vec::new();
    let mut dist0 = 0.0;
    for (s, seg) in line.windows(2).enumerate() {
        let (a, b) = (seg[0], seg[1]);
        let len = (b[0] - a[0]).hypot(b[1] - a[1]);
        let n = (len / step_m).floor() as usize;
        let first = if s == 0 { 0 } else { 1 };
        for q in first..=n {
            let t = if len > 0.0 {
                q as f64 * step_m / len
            } else {
                0.0
            };
            let (x, y) = (a[0] + t * (b[0] - a[0]), a[1] + t * (b[1] - a[1]));
            for k in 0..nz {
                let zc = 0.5 * (mesh.z[k] + mesh.z[k + 1]);
                let value = match mesh.locate([x, y, zc]) {
                    Some((i, j, kk)) => values[mesh.index(i, j, kk)],
                    None => f64::NAN,
                };
                out.push(SectionSample {
                    distance_m: dist0 + t * len,
                    x,
                    y,
                    elevation_m: zc,
                    value,
                });
            }
        }
        dist0 += len;
    }
    Ok(out)
}

/// A plan slice over the core at elevation `z_m`, or at `depth_m` below the
/// given surface (column values), as a grid at core cell centres.
pub fn plan_slice(
    mesh: &TensorMesh,
    values: &[f64],
    at: SliceLevel,
    surface_m: Option<&[f64]>,
) -> Result<Grid2, ExportError> {
    let [nx, _, _] = mesh.shape();
    let (i0, i1) = mesh.core[0];
    let (j0, j1) = mesh.core[1];
    let dx = mesh.x[i0 + 1] - mesh.x[i0];
    let dy = mesh.y[j0 + 1] - mesh.y[j0];
    let mut g = Grid2::new_empty(
        0.5 * (mesh.x[i0] + mesh.x[i0 + 1]),
        0.5 * (mesh.y[j0] + mesh.y[j0 + 1]),
        dx,
        dy,
        i1 - i0,
        j1 - j0,
    )
    .map_err(|e| ExportError::Request(e.to_string()))?;
    for j in j0..j1 {
        for i in i0..i1 {
            let z = match at {
                SliceLevel::Elevation(z) => z,
                SliceLevel::Depth(d) => {
                    let s = surface_m.ok_or_else(|| {
                        ExportError::Request("a slice at a depth needs the topography".into())
                    })?;
                    s[i + nx * j] - d
                }
            };
            let c = mesh.centre(i, j, 0);
            g.values[(i - i0) + (i1 - i0) * (j - j0)] = match mesh.locate([c[0], c[1], z]) {
                Some((a, b, k)) => values[mesh.index(a, b, k)],
                None => f64::NAN,
            };
        }
    }
    g.note = format!("plan slice at {at:?}");
    Ok(g)
}

/// Where a plan slice is taken.
#[derive(Debug, Clone, Copy, PartialEq)]
pub enum SliceLevel {
    Elevation(f64),
    Depth(f64),
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::mesh::recipe::{MeshRecipe, Padding};

    #[test]
    fn points_project_onto_a_bent_line() {
        let line = [[0.0, 0.0], [100.0, 0.0], [100.0, 100.0]];
        let (d, off) = project_onto_line(&line, [50.0, 10.0]).unwrap();
        assert!((d - 50.0).abs() < 1e-12 && (off - 10.0).abs() < 1e-12);
        let (d, off) = project_onto_line(&line, [110.0, 40.0]).unwrap();
        assert!((d - 140.0).abs() < 1e-12 && (off - 10.0).abs() < 1e-12);
    }

    #[test]
    fn sections_and_slices_read_a_known_function_at_cell_centres() {
        let m = MeshRecipe {
            cell_xy_m: [10.0, 10.0],
            cell_z_m: 10.0,
            z_growth: 1.0,
            x_range_m: [0.0, 200.0],
            y_range_m: [0.0, 100.0],
            top_m: 0.0,
            depth_m: 100.0,
            padding: Padding::Uniform { cells: 2 },
            bottom_padding_cells: 0,
            bottom_padding_factor: 1.0,
        }
        .build()
        .unwrap();
        let [nx, ny, _] = m.shape();
        let f = |p: [f64; 3]| 2.0 * p[0] - 3.0 * p[1] + 0.5 * p[2];
        let v: Vec<f64> = (0..m.n_cells())
            .map(|c| f(m.centre(c % nx, (c / nx) % ny, c / (nx * ny))))
            .collect();
        // A bent line through cell centres.
        let s = section(&m, &v, &[[5.0, 5.0], [105.0, 5.0], [105.0, 55.0]], 10.0).unwrap();
        for smp in &s {
            assert!(
                (smp.value - f([smp.x, smp.y, smp.elevation_m])).abs() < 1e-9,
                "{smp:?}"
            );
        }
        assert_eq!(s.last().unwrap().distance_m, 150.0);
        let g = plan_slice(&m, &v, SliceLevel::Elevation(-45.0), None).unwrap();
        assert_eq!((g.nx, g.ny), (20, 10));
        assert!((g.get(3, 4) - f([g.x_of(3), g.y_of(4), -45.0])).abs() < 1e-9);
        let surf = vec![0.0; nx * ny];
        let d = plan_slice(&m, &v, SliceLevel::Depth(45.0), Some(&surf)).unwrap();
        assert_eq!(d.values, g.values);
        assert!(section(&m, &v, &[[0.0, 0.0]], 10.0).is_err());
    }
}
