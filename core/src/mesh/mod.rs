//! Model space: a tensor mesh over the survey that follows topography.
//!
//! * [`TensorMesh`]: node coordinates per axis (x east, y north, z up, k = 0
//!   the bottom layer), with the core region marked.
//! * [`recipe`]: the plain-data recipe (core cell, margin, depth, growth of
//!   vertical cells, padding) and defaults derived from the data, each with
//!   its reason.
//! * [`topo`]: active cells below a terrain model (air cells are inactive),
//!   optionally with the filled fraction of cells the surface cuts.
//! * [`size`]: what a mesh will cost before it is built: cells, active cells,
//!   the bytes of a dense sensitivity, and whether that fits in memory.

pub mod recipe;
pub mod size;
pub mod topo;

use crate::physics::tensor::MeshNodes;
use serde::{Deserialize, Serialize};

/// A rectilinear mesh of right rectangular cells.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct TensorMesh {
    /// Node coordinates, strictly increasing, metres.
    pub x: Vec<f64>,
    pub y: Vec<f64>,
    /// Bottom to top.
    pub z: Vec<f64>,
    /// Index ranges [start, end) of the core cells on each axis.
    pub core: [(usize, usize); 3],
}

impl TensorMesh {
    pub fn shape(&self) -> [usize; 3] {
        [self.x.len() - 1, self.y.len() - 1, self.z.len() - 1]
    }

    pub fn n_cells(&self) -> usize {
        let [a, b, c] = self.shape();
        a * b * c
    }

    /// Index of cell (i, j, k): i + nx·(j + ny·k).
    pub fn index(&self, i: usize, j: usize, k: usize) -> usize {
        let [nx, ny, _] = self.shape();
        i + nx * (j + ny * k)
    }

    /// Cell centre.
    pub fn centre(&self, i: usize, j: usize, k: usize) -> [f64; 3] {
        [
            0.5 * (self.x[i] + self.x[i + 1]),
            0.5 * (self.y[j] + self.y[j + 1]),
            0.5 * (self.z[k] + self.z[k + 1]),
        ]
    }

    /// The cell containing a point, if any.
    pub fn locate(&self, p: [f64; 3]) -> Option<(usize, usize, usize)> {
        let find = |nodes: &[f64], v: f64| -> Option<usize> {
            if !(v >= nodes[0] && v <= nodes[nodes.len() - 1]) {
                return None;
            }
            Some(nodes.partition_point(|&n| n <= v).clamp(1, nodes.len() - 1) - 1)
        };
        Some((
            find(&self.x, p[0])?,
            find(&self.y, p[1])?,
            find(&self.z, p[2])?,
        ))
    }

    /// The node coordinates for the sensitivity kernels.
    pub fn nodes(&self) -> Result<MeshNodes, crate::physics::tensor::TensorError> {
        MeshNodes::new(self.x.clone(), self.y.clone(), self.z.clone())
    }

    /// True when every core cell has the same horizontal size (what the FFT
    /// operator needs) — padding included when it is uniform too.
    pub fn uniform_horizontal(&self) -> bool {
        let uni = |v: &[f64]| {
            let d = v[1] - v[0];
            v.windows(2).all(|w| ((w[1] - w[0]) - d).abs() <= 1e-9 * d)
        };
        uni(&self.x) && uni(&self.y)
    }
}
