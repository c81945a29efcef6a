//! Two-dimensional grids: the type, sampling, and grid files.
//!
//! * [`Grid2`]: values at the nodes of a regular north-up lattice, nodata as
//!   NaN, with coordinate reference, units and a provenance note.
//! * [`geotiff`]: GeoTIFF read (Float32/64, Int16/32 and more, north-up
//!   georeferencing by tie point and scale or by transformation matrix, GDAL
//!   nodata tag) and write (Float32).
//! * [`xyz`]: gridded XYZ text.

pub mod ascii;
pub mod biharmonic;
pub mod blank;
pub mod contour;
pub mod geotiff;
pub mod mincurv;
pub mod read;
pub mod shade;
pub mod xyz;

use serde::{Deserialize, Serialize};
use thiserror::Error;

/// Largest grid accepted, in nodes (50 million nodes = 400 MB in f64).
pub const MAX_NODES: usize = 50_000_000;

/// A regular north-up grid. Node (i, j) lies at x = x0 + i·dx, y = y0 + j·dy,
/// j = 0 the southernmost row; values are stored at index i + nx·j (x fastest,
/// as mesh cells are). Nodata is NaN.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct Grid2 {
    pub x0: f64,
    pub y0: f64,
    pub dx: f64,
    pub dy: f64,
    pub nx: usize,
    pub ny: usize,
    pub values: Vec<f64>,
    /// EPSG code of the coordinates, when known.
    pub epsg: Option<u32>,
    /// Units of the values, e.g. "m", "mGal", "nT".
    pub units: String,
    /// Where the grid came from and what was done to it.
    pub note: String,
}

/// Sampling and construction errors.
#[derive(Debug, Error, PartialEq)]
pub enum GridError {
    #[error(transparent)]
    Memory(#[from] crate::memory::MemoryError),
    #[error("point ({x:.2}, {y:.2}) is outside the grid, which covers x {xmin:.2} to {xmax:.2} and y {ymin:.2} to {ymax:.2}")]
    Outside {
        x: f64,
        y: f64,
        xmin: f64,
        xmax: f64,
        ymin: f64,
        ymax: f64,
    },
    #[error("point ({x:.2}, {y:.2}) falls where the grid has no data")]
    NoData { x: f64, y: f64 },
    #[error("a grid of {nx} × {ny} nodes ({nodes} nodes, {mb:.0} MB) is larger than the {max} nodes Fieldstone accepts; use a coarser cell")]
    TooBig {
        nx: usize,
        ny: usize,
        nodes: usize,
        mb: f64,
        max: usize,
    },
    #[error("grid spacing must be positive and finite, got dx = {dx}, dy = {dy}")]
    BadSpacing { dx: f64, dy: f64 },
    #[error("the grids are in different coordinate references (EPSG:{a} and EPSG:{b}); regrid one first")]
    Reference { a: u32, b: u32 },
    #[error(
        "the grids do not share origin, cell size and dimensions; regrid one onto the other first"
    )]
    Lattice,
}

impl Grid2 {
    /// A grid filled with NaN, after checking its size.
    pub fn new_empty(
        x0: f64,
        y0: f64,
        dx: f64,
        dy: f64,
        nx: usize,
        ny: usize,
    ) -> Result<Grid2, GridError> {
        if !(dx > 0.0 && dy > 0.0 && dx.is_finite() && dy.is_finite()) {
            return Err(GridError::BadSpacing { dx, dy });
        }
        let nodes = nx.saturating_mul(ny);
        if nodes > MAX_NODES {
            return Err(GridError::TooBig {
                nx,
                ny,
                nodes,
                mb: nodes as f64 * 8.0 / 1e6,
                max: MAX_NODES,
            });
        }
        // Grids below a million nodes (8 MB) are not worth asking about.
        if nodes > 1 << 20 {
            crate::memory::check_now(
                &format!("a grid of {nx} × {ny} nodes"),
                nodes as u64 * 8,
                "use a coarser cell or a smaller area",
            )?;
        }
        Ok(Grid2 {
            x0,
            y0,
            dx,
            dy,
            nx,
            ny,
            values: vec![f64::NAN; nodes],
            epsg: None,
            units: String::new(),
            note: String::new(),
        })
    }

    pub fn get(&self, i: usize, j: usize) -> f64 {
        self.values[i + self.nx * j]
    }

    pub fn x_of(&self, i: usize) -> f64 {
        self.x0 + self.dx * i as f64
    }

    pub fn y_of(&self, j: usize) -> f64 {
        self.y0 + self.dy * j as f64
    }

    /// Outer extent of the grid's cells: (xmin, xmax, ymin, ymax), half a cell
    /// beyond the outer nodes.
    pub fn extent(&self) -> (f64, f64, f64, f64) {
        (
            self.x0 - 0.5 * self.dx,
            self.x0 + (self.nx as f64 - 0.5) * self.dx,
            self.y0 - 0.5 * self.dy,
            self.y0 + (self.ny as f64 - 0.5) * self.dy,
        )
    }

    /// Bilinear interpolation at (x, y). Inside the cell footprint but beyond
    /// the outer nodes the edge value is held; nodata neighbours are left out
    /// and the remaining weights renormalised.
    pub fn sample(&self, x: f64, y: f64) -> Result<f64, GridError> {
        let (xmin, xmax, ymin, ymax) = self.extent();
        if !(x >= xmin && x <= xmax && y >= ymin && y <= ymax) {
            return Err(GridError::Outside {
                x,
                y,
                xmin,
                xmax,
                ymin,
                ymax,
            });
        }
        let fx = ((x - self.x0) / self.dx).clamp(0.0, (self.nx - 1) as f64);
        let fy = ((y - self.y0) / self.dy).clamp(0.0, (self.ny - 1) as f64);
        let i = (fx.floor() as usize).min(self.nx.saturating_sub(2));
        let j = (fy.floor() as usize).min(self.ny.saturating_sub(2));
        let (tx, ty) = (fx - i as f64, fy - j as f64);
        let (i1, j1) = ((i + 1).min(self.nx - 1), (j + 1).min(self.ny - 1));
        let corners = [
            (i, j, (1.0 - tx) * (1.0 - ty)),
            (i1, j, tx * (1.0 - ty)),
            (i, j1, (1.0 - tx) * ty),
            (i1, j1, tx * ty),
        ];
        let (mut s, mut w) = (0.0, 0.0);
        for (a, b, wt) in corners {
            let v = self.get(a, b);
            if v.is_finite() && wt > 0.0 {
                s += v * wt;
                w += wt;
            }
        }
        if w > 0.0 {
            Ok(s / w)
        } else {
            Err(GridError::NoData { x, y })
        }
    }

    /// True when `other` has the same lattice (origin, cell, size) and reference.
    pub fn same_lattice(&self, other: &Grid2) -> bool {
        let close = |a: f64, b: f64| (a - b).abs() <= 1e-9 * a.abs().max(b.abs()).max(1.0);
        self.nx == other.nx
            && self.ny == other.ny
            && close(self.x0, other.x0)
            && close(self.y0, other.y0)
            && close(self.dx, other.dx)
            && close(self.dy, other.dy)
    }

    /// `self − other` node by node, after checking that both grids share a
    /// lattice and a coordinate reference.
    pub fn minus(&self, other: &Grid2) -> Result<Grid2, GridError> {
        if let (Some(a), Some(b)) = (self.epsg, other.epsg) {
            if a != b {
                return Err(GridError::Reference { a, b });
            }
        }
        if !self.same_lattice(other) {
            return Err(GridError::Lattice);
        }
        let mut out = self.clone();
        for (o, v) in out.values.iter_mut().zip(&other.values) {
            *o -= v;
        }
        out.note = format!("{} minus {}", self.note, other.note);
        Ok(out)
    }

    /// Number of nodes with data.
    pub fn n_valid(&self) -> usize {
        self.values.iter().filter(|v| v.is_finite()).count()
    }

    /// Smallest and largest value with data; (∞, −∞) when there is none.
    pub fn value_range(&self) -> (f64, f64) {
        self.values
            .iter()
            .filter(|v| v.is_finite())
            .fold((f64::INFINITY, f64::NEG_INFINITY), |(a, b), v| {
                (a.min(*v), b.max(*v))
            })
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    fn plane() -> Grid2 {
        let mut g = Grid2::new_empty(100.0, 200.0, 10.0, 20.0, 5, 4).unwrap();
        for j in 0..4 {
            for i in 0..5 {
                g.values[i + 5 * j] = 2.0 * g.x_of(i) - 0.5 * g.y_of(j) + 7.0;
            }
        }
        g
    }

    #[test]
    fn bilinear_reproduces_a_plane_and_refuses_outside_points() {
        let g = plane();
        for (x, y) in [
            (100.0, 200.0),
            (123.4, 245.6),
            (140.0, 260.0),
            (101.0, 259.0),
        ] {
            assert!((g.sample(x, y).unwrap() - (2.0 * x - 0.5 * y + 7.0)).abs() < 1e-9);
        }
        // Half a cell beyond the last node the edge is held.
        assert!(g.sample(144.0, 200.0).is_ok());
        let e = g.sample(146.0, 200.0).unwrap_err();
        assert!(matches!(e, GridError::Outside { .. }), "{e}");
        assert!(e.to_string().contains("outside"));
    }

    #[test]
    fn nodata_is_skipped_or_reported() {
        let mut g = plane();
        g.values[1 + 5] = f64::NAN;
        // Next to the hole: still a value from the other neighbours.
        assert!(g.sample(105.0, 210.0).unwrap().is_finite());
        // Exactly on the hole: no data.
        assert!(matches!(
            g.sample(110.0, 220.0),
            Err(GridError::NoData { .. })
        ));
    }

    #[test]
    fn too_big_grids_are_refused_with_their_size() {
        let e = Grid2::new_empty(0.0, 0.0, 1.0, 1.0, 10_000, 10_000).unwrap_err();
        assert!(e.to_string().contains("800 MB"), "{e}");
    }
}
