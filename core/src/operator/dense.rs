//! Dense sensitivity matrix in f32, row-major (one row per datum over the
//! active cells), built and applied in parallel.

use super::Operator;
use crate::mesh::TensorMesh;
use crate::physics::magnetic::InducingField;
use crate::physics::tensor::{gz_row, induced_tmi_scale, tmi_row, RowScratch, TensorError};
use crate::progress::Observer;
use rayon::prelude::*;
use std::sync::atomic::{AtomicUsize, Ordering};
use thiserror::Error;

#[derive(Debug, Error, PartialEq)]
pub enum OperatorError {
    #[error("a dense sensitivity of {data} data × {cells} active cells needs {gb:.2} GB, more than the {limit_gb:.2} GB available; use coarser cells, fewer data, or gridded data with the FFT operator")]
    TooBig {
        data: usize,
        cells: usize,
        gb: f64,
        limit_gb: f64,
    },
    #[error(transparent)]
    Kernel(#[from] TensorError),
    #[error("building the sensitivity was cancelled")]
    Cancelled,
    #[error("there are no data or no active cells")]
    Empty,
    #[error("the FFT operator cannot be used here: {0}")]
    Layout(String),
    #[error("{0}")]
    Heights(String),
    #[error(transparent)]
    Memory(#[from] crate::memory::MemoryError),
}

/// What the data measure.
#[derive(Debug, Clone, Copy, PartialEq)]
pub enum Survey {
    /// g_z in mGal per g/cm³.
    Gravity,
    /// TMI in nT per SI susceptibility under an inducing field.
    Magnetic(InducingField),
}

pub struct DenseOperator {
    rows: usize,
    cols: usize,
    g: Vec<f32>,
}

impl DenseOperator {
    /// Builds G for `stations` (x, y, z) over the cells of `mesh` listed in
    /// `active` (mesh cell indices), refusing when it would exceed
    /// `memory_limit_bytes`.
    pub fn build(
        mesh: &TensorMesh,
        active: &[usize],
        stations: &[[f64; 3]],
        survey: Survey,
        memory_limit_bytes: u64,
        obs: &dyn Observer,
    ) -> Result<DenseOperator, OperatorError> {
        let (rows, cols) = (stations.len(), active.len());
        if rows == 0 || cols == 0 {
            return Err(OperatorError::Empty);
        }
        let bytes = rows as u64 * cols as u64 * 4;
        if bytes > memory_limit_bytes {
            return Err(OperatorError::TooBig {
                data: rows,
                cells: cols,
                gb: bytes as f64 / 1e9,
                limit_gb: memory_limit_bytes as f64 / 1e9,
            });
        }
        let nodes = mesh.nodes()?;
        let n_cells = mesh.n_cells();
        let mut g = vec![0f32; rows * cols];
        let done = AtomicUsize::new(0);
        g.par_chunks_mut(cols)
            .zip(stations.par_iter())
            .try_for_each_init(
                || (vec![0.0f64; n_cells], RowScratch::default()),
                |(full, scratch), (row, st)| -> Result<(), OperatorError> {
                    if obs.cancelled() {
                        return Err(OperatorError::Cancelled);
                    }
                    match survey {
                        Survey::Gravity => gz_row(&nodes, *st, full, scratch)?,
                        Survey::Magnetic(f) => {
                            let u = f.unit();
                            tmi_row(
                                &nodes,
                                *st,
                                u,
                                u,
                                induced_tmi_scale(f.intensity_nt),
                                full,
                                scratch,
                            )?
                        }
                    }
                    for (r, &c) in row.iter_mut().zip(active) {
                        *r = full[c] as f32;
                    }
                    obs.progress(done.fetch_add(1, Ordering::Relaxed) + 1, rows);
                    Ok(())
                },
            )?;
        Ok(DenseOperator { rows, cols, g })
    }

    /// From an explicit matrix (tests).
    pub fn from_rows(rows: usize, cols: usize, g: Vec<f32>) -> DenseOperator {
        assert_eq!(g.len(), rows * cols);
        DenseOperator { rows, cols, g }
    }

    pub fn row(&self, i: usize) -> &[f32] {
        &self.g[i * self.cols..(i + 1) * self.cols]
    }
}

impl Operator for DenseOperator {
    fn n_data(&self) -> usize {
        self.rows
    }
    fn n_cells(&self) -> usize {
        self.cols
    }
    fn apply(&self, m: &[f64], out: &mut [f64]) {
        out.par_iter_mut()
            .zip(self.g.par_chunks(self.cols))
            .for_each(|(o, row)| {
                // Four accumulators for instruction-level parallelism.
                let mut acc = [0.0f64; 4];
                let chunks = row.chunks_exact(4);
                let rem = chunks.remainder();
                for (c, mm) in chunks.zip(m.chunks_exact(4)) {
                    acc[0] += c[0] as f64 * mm[0];
                    acc[1] += c[1] as f64 * mm[1];
                    acc[2] += c[2] as f64 * mm[2];
                    acc[3] += c[3] as f64 * mm[3];
                }
                let tail = &m[m.len() - rem.len()..];
                let mut s = acc[0] + acc[1] + acc[2] + acc[3];
                for (c, mm) in rem.iter().zip(tail) {
                    s += *c as f64 * mm;
                }
                *o = s;
            });
    }
    fn apply_t(&self, r: &[f64], out: &mut [f64]) {
        // Columns in blocks, each block swept over all rows (contiguous reads).
        const BLOCK: usize = 2048;
        out.par_chunks_mut(BLOCK).enumerate().for_each(|(b, o)| {
            o.iter_mut().for_each(|v| *v = 0.0);
            let start = b * BLOCK;
            for (i, ri) in r.iter().enumerate() {
                let row = &self.g[i * self.cols + start..i * self.cols + start + o.len()];
                for (ov, g) in o.iter_mut().zip(row) {
                    *ov += *g as f64 * ri;
                }
            }
        });
    }
    fn column_norms_sq(&self) -> Vec<f64> {
        let mut out = vec![0.0; self.cols];
        const BLOCK: usize = 2048;
        out.par_chunks_mut(BLOCK).enumerate().for_each(|(b, o)| {
            let start = b * BLOCK;
            for i in 0..self.rows {
                let row = &self.g[i * self.cols + start..i * self.cols + start + o.len()];
                for (ov, g) in o.iter_mut().zip(row) {
                    *ov += (*g as f64) * (*g as f64);
                }
            }
        });
        out
    }
    fn kind(&self) -> &'static str {
        "dense"
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::mesh::recipe::{MeshRecipe, Padding};
    use crate::physics::gravity::prism_gz_mgal;
    use crate::physics::Prism;
    use crate::progress::Silent;

    fn mesh() -> TensorMesh {
        MeshRecipe {
            cell_xy_m: [20.0, 20.0],
            cell_z_m: 10.0,
            z_growth: 1.2,
            x_range_m: [0.0, 200.0],
            y_range_m: [0.0, 160.0],
            top_m: 0.0,
            depth_m: 100.0,
            padding: Padding::Expanding {
                cells: 2,
                factor: 1.5,
            },
            bottom_padding_cells: 1,
            bottom_padding_factor: 1.5,
        }
        .build()
        .unwrap()
    }

    #[test]
    fn rows_equal_the_prism_formula_and_the_adjoint_holds() {
        let m = mesh();
        let active: Vec<usize> = (0..m.n_cells()).filter(|c| c % 3 != 0).collect();
        let st: Vec<[f64; 3]> = (0..17)
            .map(|k| [5.0 + 11.0 * k as f64, 3.0 + 9.0 * k as f64, 1.0])
            .collect();
        let op = DenseOperator::build(&m, &active, &st, Survey::Gravity, 1 << 30, &Silent).unwrap();
        let [nx, ny, _] = m.shape();
        let c = active[37];
        let (i, j, k) = (c % nx, (c / nx) % ny, c / (nx * ny));
        let p = Prism::new(
            [m.x[i], m.x[i + 1]],
            [m.y[j], m.y[j + 1]],
            [m.z[k], m.z[k + 1]],
        )
        .unwrap();
        let want = prism_gz_mgal(&p, st[5], 1.0);
        assert!((op.row(5)[37] as f64 - want).abs() <= 1e-6 * want.abs());
        // ⟨Gx, y⟩ = ⟨x, Gᵀy⟩ (f32 storage, f64 sums).
        let x: Vec<f64> = (0..op.n_cells())
            .map(|j| ((j * 7919) % 97) as f64 / 97.0 - 0.5)
            .collect();
        let y: Vec<f64> = (0..op.n_data())
            .map(|i| ((i * 104_729) % 89) as f64 / 89.0 - 0.3)
            .collect();
        let mut gx = vec![0.0; op.n_data()];
        let mut gty = vec![0.0; op.n_cells()];
        op.apply(&x, &mut gx);
        op.apply_t(&y, &mut gty);
        let a: f64 = gx.iter().zip(&y).map(|(p, q)| p * q).sum();
        let b: f64 = x.iter().zip(&gty).map(|(p, q)| p * q).sum();
        assert!((a - b).abs() <= 1e-10 * a.abs().max(b.abs()), "{a} vs {b}");
        let norms = op.column_norms_sq();
        let direct: f64 = (0..op.n_data())
            .map(|i| (op.row(i)[3] as f64).powi(2))
            .sum();
        assert!((norms[3] - direct).abs() <= 1e-12 * direct);
    }

    #[test]
    fn too_big_and_empty_are_refused() {
        let m = mesh();
        let active: Vec<usize> = (0..m.n_cells()).collect();
        let st = vec![[1.0, 1.0, 1.0]; 10];
        assert!(matches!(
            DenseOperator::build(&m, &active, &st, Survey::Gravity, 1000, &Silent),
            Err(OperatorError::TooBig { .. })
        ));
        assert_eq!(
            DenseOperator::build(&m, &[], &st, Survey::Gravity, 1 << 30, &Silent).err(),
            Some(OperatorError::Empty)
        );
    }
}
