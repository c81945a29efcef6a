//! Whole sensitivity rows over a tensor mesh, sharing corner terms.
//!
//! A tensor mesh is given by its node coordinates on each axis. Adjacent cells
//! share corners, so instead of evaluating eight corner functions per cell we
//! evaluate each corner function once per node, (nx+1)(ny+1)(nz+1) times per
//! station, and form each cell's alternating sum from its eight nodes. That
//! is close to 8× fewer logarithms and arctangents than cell-by-cell
//! evaluation. The sums are formed one horizontal node plane at a time, with
//! three plane-sized buffers reused across stations ([`RowScratch`]), so the
//! hot loop allocates nothing.
//!
//! Cells are indexed i + nx·(j + ny·k), x fastest, k counting upward from the
//! bottom layer (the project convention).
//!
//! Accuracy: the closed form keeps about 16 − 3·log₁₀(r/L) digits for a cell
//! of size L at distance r (see [`super::quadrature`]); for r/L = 200, about
//! 9 digits, which is well beyond the f32 in which sensitivities are stored.

use super::corner;
use crate::units::{
    induced_magnetization_a_m, GRAVITY_KERNEL_TO_MGAL_PER_GCC, MAG_KERNEL_TO_NT_PER_A_M,
};
use thiserror::Error;

/// Node coordinates of a tensor mesh, strictly increasing on each axis.
#[derive(Debug, Clone, PartialEq)]
pub struct MeshNodes {
    x: Vec<f64>,
    y: Vec<f64>,
    z: Vec<f64>,
}

/// Errors of the mesh-row kernels.
#[derive(Debug, Error, PartialEq)]
pub enum TensorError {
    #[error("{axis} nodes must be at least two finite, strictly increasing values (problem at node {index})")]
    BadNodes { axis: char, index: usize },
    #[error("output row has {got} entries but the mesh has {want} cells")]
    RowLength { got: usize, want: usize },
    #[error("station ({x}, {y}, {z}) lies on a cell edge, where the magnetic field is singular; move it off the mesh lines")]
    StationOnEdge { x: f64, y: f64, z: f64 },
}

impl MeshNodes {
    /// Checks and stores node coordinates (metres).
    pub fn new(x: Vec<f64>, y: Vec<f64>, z: Vec<f64>) -> Result<Self, TensorError> {
        for (axis, v) in [('x', &x), ('y', &y), ('z', &z)] {
            if v.len() < 2 {
                return Err(TensorError::BadNodes {
                    axis,
                    index: v.len(),
                });
            }
            for (i, w) in v.windows(2).enumerate() {
                if !w[0].is_finite() || !w[1].is_finite() || w[0] >= w[1] {
                    return Err(TensorError::BadNodes { axis, index: i + 1 });
                }
            }
        }
        Ok(MeshNodes { x, y, z })
    }

    /// Uniform nodes: `n` cells of width `d` from `origin` on each axis.
    pub fn uniform(origin: [f64; 3], d: [f64; 3], n: [usize; 3]) -> Result<Self, TensorError> {
        let axis = |o: f64, d: f64, n: usize| (0..=n).map(|i| o + d * i as f64).collect::<Vec<_>>();
        Self::new(
            axis(origin[0], d[0], n[0]),
            axis(origin[1], d[1], n[1]),
            axis(origin[2], d[2], n[2]),
        )
    }

    /// Cell counts (nx, ny, nz).
    pub fn shape(&self) -> [usize; 3] {
        [self.x.len() - 1, self.y.len() - 1, self.z.len() - 1]
    }

    /// Number of cells.
    pub fn n_cells(&self) -> usize {
        let [a, b, c] = self.shape();
        a * b * c
    }

    pub fn x(&self) -> &[f64] {
        &self.x
    }
    pub fn y(&self) -> &[f64] {
        &self.y
    }
    pub fn z(&self) -> &[f64] {
        &self.z
    }

    /// True when `station` lies on a line of mesh nodes inside the mesh's
    /// extent along that line (a cell edge).
    fn on_edge(&self, station: [f64; 3]) -> bool {
        let axes = [&self.x, &self.y, &self.z];
        let mut on_node = 0;
        for a in 0..3 {
            let v = station[a];
            let ax = axes[a];
            if v < ax[0] || v > ax[ax.len() - 1] {
                return false;
            }
            if ax.binary_search_by(|n| n.total_cmp(&v)).is_ok() {
                on_node += 1;
            }
        }
        on_node >= 2
    }
}

/// Reusable buffers for row evaluation (three node planes and the relative
/// coordinates). One per thread.
#[derive(Debug, Default, Clone)]
pub struct RowScratch {
    lo: Vec<f64>,
    hi: Vec<f64>,
    diff: Vec<f64>,
    dx: Vec<f64>,
    dy: Vec<f64>,
}

impl RowScratch {
    fn prepare(&mut self, nodes: &MeshNodes, station: [f64; 3]) {
        let plane = nodes.x.len() * nodes.y.len();
        for b in [&mut self.lo, &mut self.hi, &mut self.diff] {
            b.clear();
            b.resize(plane, 0.0);
        }
        self.dx.clear();
        self.dx.extend(nodes.x.iter().map(|v| v - station[0]));
        self.dy.clear();
        self.dy.extend(nodes.y.iter().map(|v| v - station[1]));
    }
}

/// Scale that turns the dimensionless TMI kernel into nT per unit SI
/// susceptibility in an inducing field of `intensity_nt`: F/(4π).
pub fn induced_tmi_scale(intensity_nt: f64) -> f64 {
    MAG_KERNEL_TO_NT_PER_A_M * induced_magnetization_a_m(1.0, intensity_nt)
}

/// Shared driver: fills `plane` with a corner function at node level `dz`,
/// then differences planes into cells.
fn row_by_planes(
    nodes: &MeshNodes,
    station: [f64; 3],
    out: &mut [f64],
    scratch: &mut RowScratch,
    scale: f64,
    corner_fn: impl Fn(f64, f64, f64) -> f64,
) -> Result<(), TensorError> {
    let want = nodes.n_cells();
    if out.len() != want {
        return Err(TensorError::RowLength {
            got: out.len(),
            want,
        });
    }
    scratch.prepare(nodes, station);
    let [nx, ny, _] = nodes.shape();
    let px = nx + 1;
    let fill = |plane: &mut [f64], dx: &[f64], dy: &[f64], dz: f64| {
        for (j, &y) in dy.iter().enumerate() {
            let row = &mut plane[j * px..(j + 1) * px];
            for (v, &x) in row.iter_mut().zip(dx) {
                *v = corner_fn(x, y, dz);
            }
        }
    };
    let RowScratch {
        lo,
        hi,
        diff,
        dx,
        dy,
    } = scratch;
    fill(lo, dx, dy, nodes.z[0] - station[2]);
    for (k, &zn) in nodes.z[1..].iter().enumerate() {
        fill(hi, dx, dy, zn - station[2]);
        for ((d, h), l) in diff.iter_mut().zip(hi.iter()).zip(lo.iter()) {
            *d = h - l;
        }
        let layer = &mut out[k * nx * ny..(k + 1) * nx * ny];
        for j in 0..ny {
            let d0 = &diff[j * px..(j + 1) * px];
            let d1 = &diff[(j + 1) * px..(j + 2) * px];
            let cells = &mut layer[j * nx..(j + 1) * nx];
            for (i, c) in cells.iter_mut().enumerate() {
                *c = scale * (d1[i + 1] - d1[i] - d0[i + 1] + d0[i]);
            }
        }
        std::mem::swap(lo, hi);
    }
    Ok(())
}

/// Vertical gravity (mGal, positive down) at `station` of each cell carrying a
/// density contrast of 1 g/cm³, written to `out` (length = cell count).
pub fn gz_row(
    nodes: &MeshNodes,
    station: [f64; 3],
    out: &mut [f64],
    scratch: &mut RowScratch,
) -> Result<(), TensorError> {
    row_by_planes(
        nodes,
        station,
        out,
        scratch,
        GRAVITY_KERNEL_TO_MGAL_PER_GCC,
        corner::gravity_phi_z,
    )
}

/// Total-field anomaly at `station` of each cell: f̂ᵀ T m̂ × `scale`, with f̂ the
/// unit vector of the inducing field (the projection direction) and m̂ the unit
/// vector of the magnetization. For induced magnetization m̂ = f̂ and
/// `scale` = [`induced_tmi_scale`] gives nT per unit SI susceptibility.
pub fn tmi_row(
    nodes: &MeshNodes,
    station: [f64; 3],
    field_unit: [f64; 3],
    mag_unit: [f64; 3],
    scale: f64,
    out: &mut [f64],
    scratch: &mut RowScratch,
) -> Result<(), TensorError> {
    if nodes.on_edge(station) {
        return Err(TensorError::StationOnEdge {
            x: station[0],
            y: station[1],
            z: station[2],
        });
    }
    let (f, m) = (field_unit, mag_unit);
    let c = [
        f[0] * m[0],
        f[1] * m[1],
        f[2] * m[2],
        f[0] * m[1] + f[1] * m[0],
        f[0] * m[2] + f[2] * m[0],
        f[1] * m[2] + f[2] * m[1],
    ];
    row_by_planes(nodes, station, out, scratch, scale, move |x, y, z| {
        // r = 0 (station on a node) is excluded by the edge check above.
        let t = corner::magnetic_terms(x, y, z).unwrap_or([0.0; 6]);
        c[0] * t[0] + c[1] * t[1] + c[2] * t[2] + c[3] * t[3] + c[4] * t[4] + c[5] * t[5]
    })
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::physics::{gravity::prism_gz_mgal, magnetic, Prism};

    fn nodes() -> MeshNodes {
        MeshNodes::new(
            vec![-30.0, -10.0, 0.0, 5.0, 25.0],
            vec![-20.0, 0.0, 10.0, 40.0],
            vec![-100.0, -60.0, -35.0, -20.0, -10.0, -4.0],
        )
        .unwrap()
    }

    fn cell(n: &MeshNodes, i: usize, j: usize, k: usize) -> Prism {
        Prism::new(
            [n.x[i], n.x[i + 1]],
            [n.y[j], n.y[j + 1]],
            [n.z[k], n.z[k + 1]],
        )
        .unwrap()
    }

    #[test]
    fn gz_row_equals_cell_by_cell_evaluation() {
        let n = nodes();
        let [nx, ny, nz] = n.shape();
        let mut row = vec![0.0; n.n_cells()];
        let mut s = RowScratch::default();
        for st in [[1.0, 2.0, 0.0], [-50.0, 33.0, 12.0], [5.0, 0.0, -4.0]] {
            gz_row(&n, st, &mut row, &mut s).unwrap();
            for k in 0..nz {
                for j in 0..ny {
                    for i in 0..nx {
                        let want = prism_gz_mgal(&cell(&n, i, j, k), st, 1.0);
                        let got = row[i + nx * (j + ny * k)];
                        assert!(
                            (got - want).abs() <= 1e-12 * want.abs().max(1e-9),
                            "{st:?} cell {i},{j},{k}: {got} vs {want}"
                        );
                    }
                }
            }
        }
    }

    #[test]
    fn tmi_row_equals_cell_by_cell_evaluation() {
        let n = nodes();
        let [nx, ny, nz] = n.shape();
        let field = magnetic::InducingField {
            intensity_nt: 52_000.0,
            inclination_deg: 63.0,
            declination_deg: -8.0,
        };
        let f = field.unit();
        let scale = induced_tmi_scale(field.intensity_nt);
        let mut row = vec![0.0; n.n_cells()];
        let mut s = RowScratch::default();
        let st = [2.5, 3.5, 1.0];
        tmi_row(&n, st, f, f, scale, &mut row, &mut s).unwrap();
        for k in 0..nz {
            for j in 0..ny {
                for i in 0..nx {
                    let b = magnetic::prism_field_nt(
                        &cell(&n, i, j, k),
                        st,
                        field.induced_magnetization(1.0),
                    )
                    .unwrap();
                    let want = magnetic::tmi_nt(b, f);
                    let got = row[i + nx * (j + ny * k)];
                    assert!(
                        (got - want).abs() <= 1e-10 * want.abs().max(1e-6),
                        "cell {i},{j},{k}: {got} vs {want}"
                    );
                }
            }
        }
    }

    #[test]
    fn bad_nodes_rows_and_edges_are_refused() {
        assert!(matches!(
            MeshNodes::new(vec![0.0, 1.0, 1.0], vec![0.0, 1.0], vec![0.0, 1.0]),
            Err(TensorError::BadNodes {
                axis: 'x',
                index: 2
            })
        ));
        let n = nodes();
        let mut s = RowScratch::default();
        let mut short = vec![0.0; 3];
        assert!(matches!(
            gz_row(&n, [0.0; 3], &mut short, &mut s),
            Err(TensorError::RowLength { .. })
        ));
        let mut row = vec![0.0; n.n_cells()];
        let f = [0.0, 0.0, -1.0];
        assert!(matches!(
            tmi_row(&n, [0.0, 0.0, -50.0], f, f, 1.0, &mut row, &mut s),
            Err(TensorError::StationOnEdge { .. })
        ));
    }
}
