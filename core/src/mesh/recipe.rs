//! The mesh recipe and its defaults.

use super::TensorMesh;
use serde::{Deserialize, Serialize};
use thiserror::Error;

/// How the mesh is padded outside the core.
#[derive(Debug, Clone, Copy, PartialEq, Serialize, Deserialize)]
#[serde(tag = "mode", rename_all = "snake_case")]
pub enum Padding {
    /// Cells growing outward by `factor` (fewest cells).
    Expanding { cells: usize, factor: f64 },
    /// Cells of the core size (keeps horizontal spacing uniform for the FFT operator).
    Uniform { cells: usize },
}

/// Everything that defines a mesh, as plain data.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct MeshRecipe {
    /// Horizontal core cell, metres (east-west, north-south).
    pub cell_xy_m: [f64; 2],
    /// Thickness of the top layer, metres.
    pub cell_z_m: f64,
    /// Each layer below is thicker by this factor (1 = uniform).
    pub z_growth: f64,
    /// Core extent (survey extent plus margin), metres.
    pub x_range_m: [f64; 2],
    pub y_range_m: [f64; 2],
    /// Elevation of the mesh top (at or above the highest topography), metres.
    pub top_m: f64,
    /// Depth of the core below the top, metres.
    pub depth_m: f64,
    /// Horizontal padding on every side.
    pub padding: Padding,
    /// Extra layers below the core, growing by this factor.
    pub bottom_padding_cells: usize,
    pub bottom_padding_factor: f64,
}

#[derive(Debug, Error, PartialEq)]
pub enum MeshError {
    #[error("{field} must be positive and finite, got {value}")]
    NotPositive { field: &'static str, value: f64 },
    #[error("{field} must be at least 1, got {value}")]
    Factor { field: &'static str, value: f64 },
    #[error("the core range of {axis} is empty or reversed ({lo} to {hi})")]
    Range { axis: char, lo: f64, hi: f64 },
    #[error("the mesh would have {cells} cells ({nx} × {ny} × {nz}), above the {max} Fieldstone builds; use coarser cells or a smaller core")]
    TooMany {
        cells: usize,
        nx: usize,
        ny: usize,
        nz: usize,
        max: usize,
    },
    #[error(transparent)]
    Memory(#[from] crate::memory::MemoryError),
}

/// Memory an inversion holds per mesh cell, bytes: the constraint arrays
/// (bounds, reference, weights, starting model, smoothness and reference
/// gradients per axis, about 16 values), the model and the solver's working
/// vectors (about 12 values), as f64.
pub const BYTES_PER_CELL: u64 = 28 * 8;

/// Most cells a mesh may have.
pub const MAX_CELLS: usize = 50_000_000;

impl MeshRecipe {
    /// A recipe of uniform cells without padding (tests, benchmarks and
    /// quick looks): horizontal cell `cell_xy_m`, layers of `cell_z_m`.
    pub fn uniform(
        cell_xy_m: f64,
        cell_z_m: f64,
        x_range_m: [f64; 2],
        y_range_m: [f64; 2],
        top_m: f64,
        depth_m: f64,
    ) -> MeshRecipe {
        MeshRecipe {
            cell_xy_m: [cell_xy_m, cell_xy_m],
            cell_z_m,
            z_growth: 1.0,
            x_range_m,
            y_range_m,
            top_m,
            depth_m,
            padding: Padding::Uniform { cells: 0 },
            bottom_padding_cells: 0,
            bottom_padding_factor: 1.0,
        }
    }

    fn check(&self) -> Result<(), MeshError> {
        for (field, v) in [
            ("cell_xy_m[0]", self.cell_xy_m[0]),
            ("cell_xy_m[1]", self.cell_xy_m[1]),
            ("cell_z_m", self.cell_z_m),
            ("depth_m", self.depth_m),
        ] {
            if !(v.is_finite() && v > 0.0) {
                return Err(MeshError::NotPositive { field, value: v });
            }
        }
        for (field, v) in [
            ("z_growth", self.z_growth),
            ("bottom_padding_factor", self.bottom_padding_factor),
        ] {
            if !(v.is_finite() && v >= 1.0) {
                return Err(MeshError::Factor { field, value: v });
            }
        }
        if let Padding::Expanding { factor, .. } = self.padding {
            if !(factor.is_finite() && factor >= 1.0) {
                return Err(MeshError::Factor {
                    field: "padding.factor",
                    value: factor,
                });
            }
        }
        for (axis, [lo, hi]) in [('x', self.x_range_m), ('y', self.y_range_m)] {
            if !(lo.is_finite() && hi.is_finite() && hi > lo) {
                return Err(MeshError::Range { axis, lo, hi });
            }
        }
        if !self.top_m.is_finite() {
            return Err(MeshError::NotPositive {
                field: "top_m",
                value: self.top_m,
            });
        }
        Ok(())
    }

    /// Cell counts the recipe will give, without building the node lists.
    pub fn shape(&self) -> Result<[usize; 3], MeshError> {
        self.check()?;
        let pad = match self.padding {
            Padding::Expanding { cells, .. } | Padding::Uniform { cells } => cells,
        };
        let nx =
            ((self.x_range_m[1] - self.x_range_m[0]) / self.cell_xy_m[0]).ceil() as usize + 2 * pad;
        let ny =
            ((self.y_range_m[1] - self.y_range_m[0]) / self.cell_xy_m[1]).ceil() as usize + 2 * pad;
        let nz = self.layers().len() + self.bottom_padding_cells;
        Ok([nx, ny, nz])
    }

    /// Core layer thicknesses from the top down.
    fn layers(&self) -> Vec<f64> {
        let mut out = Vec::new();
        let (mut depth, mut dz) = (0.0, self.cell_z_m);
        while depth < self.depth_m - 1e-9 {
            out.push(dz);
            depth += dz;
            dz *= self.z_growth;
        }
        out
    }

    /// Builds the mesh, refusing one whose cell arrays would not fit in the
    /// memory available now.
    pub fn build(&self) -> Result<TensorMesh, MeshError> {
        self.build_within(crate::memory::available_or_assumed())
    }

    /// Builds the mesh, refusing one whose cell arrays would not fit in
    /// `available` bytes.
    pub fn build_within(&self, available: u64) -> Result<TensorMesh, MeshError> {
        let [nx, ny, nz] = self.shape()?;
        let cells = nx.saturating_mul(ny).saturating_mul(nz);
        if cells > MAX_CELLS {
            return Err(MeshError::TooMany {
                cells,
                nx,
                ny,
                nz,
                max: MAX_CELLS,
            });
        }
        crate::memory::check(
            &format!("a mesh of {cells} cells ({nx} × {ny} × {nz}) with its inversion arrays"),
            cells as u64 * BYTES_PER_CELL,
            available,
            "use coarser cells, fewer padding cells or a smaller core",
        )?;
        let axis = |lo: f64, hi: f64, d: f64| -> (Vec<f64>, (usize, usize)) {
            let n = ((hi - lo) / d).ceil() as usize;
            // Centre the core cells on the requested range.
            let start = 0.5 * (lo + hi) - 0.5 * n as f64 * d;
            let core: Vec<f64> = (0..=n).map(|i| start + d * i as f64).collect();
            let (pad, widths): (usize, Vec<f64>) = match self.padding {
                Padding::Expanding { cells, factor } => (
                    cells,
                    (1..=cells).map(|k| d * factor.powi(k as i32)).collect(),
                ),
                Padding::Uniform { cells } => (cells, vec![d; cells]),
            };
            let mut nodes = Vec::with_capacity(n + 1 + 2 * pad);
            let mut x = core[0];
            let mut left = Vec::new();
            for w in &widths {
                x -= w;
                left.push(x);
            }
            left.reverse();
            nodes.extend(left);
            nodes.extend(core.iter().copied());
            let mut x = core[n];
            for w in &widths {
                x += w;
                nodes.push(x);
            }
            (nodes, (pad, pad + n))
        };
        let (x, cx) = axis(self.x_range_m[0], self.x_range_m[1], self.cell_xy_m[0]);
        let (y, cy) = axis(self.y_range_m[0], self.y_range_m[1], self.cell_xy_m[1]);
        // Vertical: from the top down, then reversed so k counts upward.
        let mut zs = vec![self.top_m];
        for dz in self.layers() {
            let last = zs[zs.len() - 1];
            zs.push(last - dz);
        }
        let core_layers = zs.len() - 1;
        let mut dz = self.cell_z_m * self.z_growth.powi(core_layers as i32);
        for _ in 0..self.bottom_padding_cells {
            dz *= self.bottom_padding_factor;
            let last = zs[zs.len() - 1];
            zs.push(last - dz);
        }
        zs.reverse();
        let nzc = zs.len() - 1;
        Ok(TensorMesh {
            x,
            y,
            z: zs,
            core: [cx, cy, (nzc - core_layers, nzc)],
        })
    }
}

/// A default recipe from the survey: extent, station spacing and topography
/// range, each choice with its reason (common practice).
pub fn default_recipe(
    x_range: [f64; 2],
    y_range: [f64; 2],
    station_spacing_m: f64,
    top_of_topography_m: f64,
) -> (MeshRecipe, Vec<String>) {
    let spacing = if station_spacing_m.is_finite() && station_spacing_m > 0.0 {
        station_spacing_m
    } else {
        ((x_range[1] - x_range[0]) / 50.0).max(1.0)
    };
    let cell = nice(spacing / 2.0);
    let width = (x_range[1] - x_range[0]).max(y_range[1] - y_range[0]);
    let margin = nice((0.1 * width).max(2.0 * cell));
    let depth = nice(0.5 * width);
    let top = (top_of_topography_m / cell.min(10.0)).ceil() * cell.min(10.0);
    let reasons = vec![
        format!("horizontal core cell {cell} m: about half the {spacing:.1} m station or grid spacing"),
        format!("core margin {margin} m around the survey: a tenth of its width, at least two cells"),
        format!("core depth {depth} m: about half the survey width, the depth below which the data say little"),
        format!("top at {top} m: at or above the highest topography; cells above the terrain are air"),
        "vertical cells start at half the horizontal cell and grow by 1.1 per layer: resolution falls with depth".into(),
        "padding: 6 cells expanding by 1.4 outward (use uniform padding to keep the FFT operator available)".into(),
    ];
    let r = MeshRecipe {
        cell_xy_m: [cell, cell],
        cell_z_m: cell / 2.0,
        z_growth: 1.1,
        x_range_m: [x_range[0] - margin, x_range[1] + margin],
        y_range_m: [y_range[0] - margin, y_range[1] + margin],
        top_m: top,
        depth_m: depth,
        padding: Padding::Expanding {
            cells: 6,
            factor: 1.4,
        },
        bottom_padding_cells: 4,
        bottom_padding_factor: 1.4,
    };
    (r, reasons)
}

/// Rounds to 1, 2, 2.5 or 5 times a power of ten.
fn nice(v: f64) -> f64 {
    if v.is_nan() || v <= 0.0 {
        return 1.0;
    }
    let p = 10f64.powf(v.log10().floor());
    let m = v / p;
    let n = if m < 1.5 {
        1.0
    } else if m < 2.25 {
        2.0
    } else if m < 3.5 {
        2.5
    } else if m < 7.5 {
        5.0
    } else {
        10.0
    };
    n * p
}

#[cfg(test)]
mod tests {
    use super::*;

    fn recipe(padding: Padding) -> MeshRecipe {
        MeshRecipe {
            cell_xy_m: [25.0, 25.0],
            cell_z_m: 10.0,
            z_growth: 1.2,
            x_range_m: [0.0, 1000.0],
            y_range_m: [0.0, 500.0],
            top_m: 300.0,
            depth_m: 200.0,
            padding,
            bottom_padding_cells: 3,
            bottom_padding_factor: 1.5,
        }
    }

    #[test]
    fn core_padding_and_layers_are_where_the_recipe_says() {
        let m = recipe(Padding::Expanding {
            cells: 4,
            factor: 1.5,
        })
        .build()
        .unwrap();
        let [nx, ny, nz] = m.shape();
        assert_eq!((nx, ny), (40 + 8, 20 + 8));
        assert_eq!(m.core[0], (4, 44));
        assert!((m.x[4] - 0.0).abs() < 1e-9 && (m.x[44] - 1000.0).abs() < 1e-9);
        // Expanding padding: 25·1.5, 25·1.5², ...
        assert!(
            ((m.x[4] - m.x[3]) - 37.5).abs() < 1e-9
                && ((m.x[1] - m.x[0]) - 25.0 * 1.5f64.powi(4)).abs() < 1e-9
        );
        // Vertical: top at 300, layers 10, 12, 14.4, ... down past 200 m depth.
        assert_eq!(m.z[nz], 300.0);
        assert!(
            ((m.z[nz] - m.z[nz - 1]) - 10.0).abs() < 1e-9
                && ((m.z[nz - 1] - m.z[nz - 2]) - 12.0).abs() < 1e-9
        );
        let (k0, k1) = m.core[2];
        assert_eq!(k1, nz);
        assert!(300.0 - m.z[k0] >= 200.0 && k0 == 3);
        assert_eq!(
            m.shape(),
            recipe(Padding::Expanding {
                cells: 4,
                factor: 1.5
            })
            .shape()
            .unwrap()
        );
        assert!(!m.uniform_horizontal());
        assert!(recipe(Padding::Uniform { cells: 5 })
            .build()
            .unwrap()
            .uniform_horizontal());
        let c = m.centre(4, 4, k1 - 1);
        assert_eq!(m.locate(c), Some((4, 4, k1 - 1)));
        assert_eq!(m.locate([-1e6, 0.0, 0.0]), None);
    }

    #[test]
    fn bad_recipes_are_refused_with_the_field_named() {
        let mut r = recipe(Padding::Uniform { cells: 2 });
        r.cell_z_m = 0.0;
        assert!(r.build().unwrap_err().to_string().contains("cell_z_m"));
        let mut r = recipe(Padding::Uniform { cells: 2 });
        r.x_range_m = [10.0, 0.0];
        assert!(matches!(r.build(), Err(MeshError::Range { axis: 'x', .. })));
        let mut r = recipe(Padding::Uniform { cells: 2 });
        r.cell_xy_m = [0.1, 0.1];
        assert!(matches!(r.build(), Err(MeshError::TooMany { .. })));
    }

    #[test]
    fn defaults_follow_the_data_and_say_why() {
        let (r, why) = default_recipe([0.0, 2000.0], [0.0, 1500.0], 25.0, 412.0);
        assert_eq!(r.cell_xy_m, [10.0, 10.0]);
        assert_eq!(r.depth_m, 1000.0);
        assert!(r.top_m >= 412.0);
        assert_eq!(why.len(), 6);
        assert!(why[0].contains("half"));
        assert!(r.build().is_ok());
    }
}
