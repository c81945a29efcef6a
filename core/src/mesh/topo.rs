//! Active cells below topography.
//!
//! A cell is active (earth) when its centre lies below the terrain at the
//! centre of its column, and air otherwise (inactive: value 0, not inverted).
//! Optionally the fraction of each cell below the terrain is kept for the
//! cells the surface cuts (common practice for partial cells).

use super::TensorMesh;
use crate::grid::Grid2;
use rayon::prelude::*;
use thiserror::Error;

#[derive(Debug, Clone, PartialEq)]
pub struct ActiveCells {
    pub active: Vec<bool>,
    /// Fraction of each cell below the terrain (0 to 1), when asked for.
    pub fraction: Option<Vec<f32>>,
    /// Terrain elevation at each column centre (nx·ny), metres.
    pub surface_m: Vec<f64>,
}

impl ActiveCells {
    /// 1 for active cells, 0 for air (for views and exports).
    pub fn as_values(&self) -> Vec<f64> {
        self.active
            .iter()
            .map(|a| if *a { 1.0 } else { 0.0 })
            .collect()
    }

    pub fn count(&self) -> usize {
        self.active.iter().filter(|a| **a).count()
    }
}

#[derive(Debug, Error, PartialEq)]
pub enum TopoError {
    #[error("the terrain model does not cover column ({i}, {j}) at ({x:.1}, {y:.1}); extend the DEM over the padding or shrink the mesh")]
    Uncovered { i: usize, j: usize, x: f64, y: f64 },
}

/// Active cells of `mesh` below `dem` (every cell is active without a DEM).
/// Columns beyond the DEM take the value of the nearest DEM edge when
/// `extend_edges`; otherwise they are an error.
pub fn active_cells(
    mesh: &TensorMesh,
    dem: Option<&Grid2>,
    fractions: bool,
    extend_edges: bool,
) -> Result<ActiveCells, TopoError> {
    let [nx, ny, nz] = mesh.shape();
    let mut surface = vec![f64::INFINITY; nx * ny];
    if let Some(d) = dem {
        let (x0, x1, y0, y1) = d.extent();
        for j in 0..ny {
            for i in 0..nx {
                let c = mesh.centre(i, j, 0);
                let (mut x, mut y) = (c[0], c[1]);
                if extend_edges {
                    x = x.clamp(x0, x1);
                    y = y.clamp(y0, y1);
                }
                surface[i + nx * j] = d.sample(x, y).map_err(|_| TopoError::Uncovered {
                    i,
                    j,
                    x: c[0],
                    y: c[1],
                })?;
            }
        }
    }
    let plane = nx * ny;
    let mut active = vec![false; mesh.n_cells()];
    let mut frac = if fractions {
        Some(vec![0f32; mesh.n_cells()])
    } else {
        None
    };
    active
        .par_chunks_mut(plane)
        .enumerate()
        .for_each(|(k, layer)| {
            let zc = 0.5 * (mesh.z[k] + mesh.z[k + 1]);
            for (a, s) in layer.iter_mut().zip(&surface) {
                *a = zc < *s;
            }
        });
    if let Some(f) = frac.as_mut() {
        f.par_chunks_mut(plane).enumerate().for_each(|(k, layer)| {
            let (lo, hi) = (mesh.z[k], mesh.z[k + 1]);
            for (v, s) in layer.iter_mut().zip(&surface) {
                *v = ((s.min(hi) - lo) / (hi - lo)).clamp(0.0, 1.0) as f32;
            }
        });
    }
    let _ = nz;
    Ok(ActiveCells {
        active,
        fraction: frac,
        surface_m: surface,
    })
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::mesh::recipe::MeshRecipe;

    #[test]
    fn a_tilted_plane_gives_the_analytic_volume_within_one_cell_per_column() {
        let r = MeshRecipe::uniform(20.0, 5.0, [0.0, 400.0], [0.0, 300.0], 200.0, 150.0);
        let m = r.build().unwrap();
        let h = |x: f64, y: f64| 120.0 + 0.1 * x - 0.05 * y;
        let mut dem = Grid2::new_empty(-10.0, -10.0, 5.0, 5.0, 90, 70).unwrap();
        for j in 0..70 {
            for i in 0..90 {
                dem.values[i + 90 * j] = h(dem.x_of(i), dem.y_of(j));
            }
        }
        let a = active_cells(&m, Some(&dem), true, false).unwrap();
        let [nx, ny, nz] = m.shape();
        let bottom = m.z[0];
        for j in 0..ny {
            for i in 0..nx {
                let c = m.centre(i, j, 0);
                let analytic = (h(c[0], c[1]) - bottom) / 5.0;
                let count = (0..nz).filter(|&k| a.active[m.index(i, j, k)]).count() as f64;
                assert!(
                    (count - analytic).abs() <= 1.0,
                    "column ({i},{j}): {count} vs {analytic}"
                );
                let filled: f64 = (0..nz)
                    .map(|k| a.fraction.as_ref().unwrap()[m.index(i, j, k)] as f64)
                    .sum();
                assert!(
                    (filled - analytic).abs() < 1e-4,
                    "fractions: {filled} vs {analytic}"
                );
            }
        }
        let none = active_cells(&m, None, false, false).unwrap();
        assert_eq!(none.count(), m.n_cells());
        let small = Grid2::new_empty(100.0, 100.0, 5.0, 5.0, 4, 4).unwrap();
        assert!(matches!(
            active_cells(&m, Some(&small), false, false),
            Err(TopoError::Uncovered { .. })
        ));
    }
}
