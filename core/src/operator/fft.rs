//! FFT (block-Toeplitz) operator for gridded data at one elevation over a
//! mesh with uniform horizontal cells and data at cell-centre positions
//! (Hogue, Renaut & Vatankhah 2020).
//!
//! For such data the sensitivity of station (p, q) to cell (i, j, k) depends
//! only on (i − p, j − q) and k, so every layer of G is a 2-D convolution. One
//! kernel row — g_z at the centre station of a mesh twice as wide — gives all
//! offsets of every layer at once. Products are per-layer FFT convolutions,
//! O(n log n) each, with no stored matrix; Gᵀ is the correlation with the same
//! kernels; stations without data are masked.

use super::Operator;
use crate::mesh::TensorMesh;
use crate::physics::tensor::{gz_row, induced_tmi_scale, tmi_row, MeshNodes, RowScratch};
use rayon::prelude::*;
use rustfft::num_complex::Complex64;
use rustfft::FftPlanner;
use std::sync::Arc;

use super::dense::{OperatorError, Survey};
use crate::filter::spectral::fast_size;

pub struct FftOperator {
    nx: usize,
    ny: usize,
    nz: usize,
    px: usize,
    py: usize,
    /// Kernel spectra per layer (px·py each).
    spectra: Vec<Vec<Complex64>>,
    /// Station mask (nx·ny): true where there is a datum.
    mask: Vec<bool>,
    /// Data index of each masked station, row-major.
    data_index: Vec<usize>,
    /// Active cells (mesh indices) = operator columns, and the reverse map.
    active: Vec<usize>,
    fwd: Arc<dyn rustfft::Fft<f64>>,
    inv: Arc<dyn rustfft::Fft<f64>>,
    fwd_y: Arc<dyn rustfft::Fft<f64>>,
    inv_y: Arc<dyn rustfft::Fft<f64>>,
}

impl FftOperator {
    /// `mesh` must have uniform horizontal cells (no expanding padding); data
    /// are at the centres of its columns at elevation `z_m`, present where
    /// `mask` is true (row-major over the nx × ny columns).
    pub fn build(
        mesh: &TensorMesh,
        active: &[usize],
        z_m: f64,
        mask: &[bool],
        survey: Survey,
    ) -> Result<FftOperator, OperatorError> {
        Self::build_within(
            mesh,
            active,
            z_m,
            mask,
            survey,
            crate::memory::available_or_assumed(),
        )
    }

    /// Bytes the operator holds for a mesh of `shape`: the kernel spectra
    /// (one padded complex grid per layer) and the kernel row it is made
    /// from.
    pub fn bytes_needed(shape: [usize; 3]) -> u64 {
        let [nx, ny, nz] = shape;
        let (px, py) = (fast_size(2 * nx) as u64, fast_size(2 * ny) as u64);
        let (kx, ky) = (
            (2 * nx).saturating_sub(1) as u64,
            (2 * ny).saturating_sub(1) as u64,
        );
        nz as u64 * (px * py * 16 + kx * ky * 8)
    }

    /// [`FftOperator::build`], refusing when the kernel spectra would not fit
    /// in `available` bytes.
    pub fn build_within(
        mesh: &TensorMesh,
        active: &[usize],
        z_m: f64,
        mask: &[bool],
        survey: Survey,
        available: u64,
    ) -> Result<FftOperator, OperatorError> {
        let [nx, ny, nz] = mesh.shape();
        if !mesh.uniform_horizontal() || mask.len() != nx * ny || active.is_empty() {
            return Err(OperatorError::Empty);
        }
        crate::memory::check(
            &format!("the FFT operator's kernel spectra for {nx} × {ny} × {nz} cells"),
            Self::bytes_needed([nx, ny, nz]),
            available,
            "use coarser horizontal cells or a smaller core",
        )?;
        let (dx, dy) = (mesh.x[1] - mesh.x[0], mesh.y[1] - mesh.y[0]);
        // Kernel mesh: (2nx − 1) × (2ny − 1) columns centred on one station.
        let (kx, ky) = (2 * nx - 1, 2 * ny - 1);
        let xs: Vec<f64> = (0..=kx)
            .map(|i| (i as f64 - (nx as f64 - 0.5)) * dx)
            .collect();
        let ys: Vec<f64> = (0..=ky)
            .map(|j| (j as f64 - (ny as f64 - 0.5)) * dy)
            .collect();
        let nodes = MeshNodes::new(xs, ys, mesh.z.clone())?;
        let mut row = vec![0.0; kx * ky * nz];
        let mut scratch = RowScratch::default();
        let st = [0.0, 0.0, z_m];
        match survey {
            Survey::Gravity => gz_row(&nodes, st, &mut row, &mut scratch)?,
            Survey::Magnetic(f) => {
                let u = f.unit();
                tmi_row(
                    &nodes,
                    st,
                    u,
                    u,
                    induced_tmi_scale(f.intensity_nt),
                    &mut row,
                    &mut scratch,
                )?
            }
        }
        let (px, py) = (fast_size(2 * nx), fast_size(2 * ny));
        let mut planner = FftPlanner::new();
        let (fwd, inv, fwd_y, inv_y) = (
            planner.plan_fft_forward(px),
            planner.plan_fft_inverse(px),
            planner.plan_fft_forward(py),
            planner.plan_fft_inverse(py),
        );
        // Kernel K_k(a, b) = sensitivity of a station to the cell offset by
        // (a, b) columns; stored with wrap-around indexing for circular
        // convolution: out(p) = Σ_i K(i − p) m(i).
        let spectra: Vec<Vec<Complex64>> = (0..nz)
            .into_par_iter()
            .map(|k| {
                let mut buf = vec![Complex64::new(0.0, 0.0); px * py];
                for b in 0..ky {
                    for a in 0..kx {
                        // Offset (a − (nx−1), b − (ny−1)) of cell minus station;
                        // convolution uses K(−offset) at index offset mod P.
                        let (oa, ob) = (a as i64 - (nx as i64 - 1), b as i64 - (ny as i64 - 1));
                        let (ia, ib) = (
                            (-oa).rem_euclid(px as i64) as usize,
                            (-ob).rem_euclid(py as i64) as usize,
                        );
                        buf[ia + px * ib] = Complex64::new(row[a + kx * (b + ky * k)], 0.0);
                    }
                }
                fft2(&mut buf, px, py, &*fwd, &*fwd_y);
                buf
            })
            .collect();
        let mut data_index = vec![usize::MAX; nx * ny];
        let mut n = 0;
        for (c, m) in mask.iter().enumerate() {
            if *m {
                data_index[c] = n;
                n += 1;
            }
        }
        Ok(FftOperator {
            nx,
            ny,
            nz,
            px,
            py,
            spectra,
            mask: mask.to_vec(),
            data_index,
            active: active.to_vec(),
            fwd,
            inv,
            fwd_y,
            inv_y,
        })
    }

    fn layer_spectrum(&self, values: &[f64], k: usize) -> Vec<Complex64> {
        let mut buf = vec![Complex64::new(0.0, 0.0); self.px * self.py];
        let plane = self.nx * self.ny;
        for j in 0..self.ny {
            for i in 0..self.nx {
                buf[i + self.px * j] = Complex64::new(values[k * plane + i + self.nx * j], 0.0);
            }
        }
        fft2(&mut buf, self.px, self.py, &*self.fwd, &*self.fwd_y);
        buf
    }
}

fn fft2(
    buf: &mut [Complex64],
    px: usize,
    py: usize,
    fx: &dyn rustfft::Fft<f64>,
    fy: &dyn rustfft::Fft<f64>,
) {
    for row in buf.chunks_mut(px) {
        fx.process(row);
    }
    let mut col = vec![Complex64::new(0.0, 0.0); py];
    for i in 0..px {
        for j in 0..py {
            col[j] = buf[i + px * j];
        }
        fy.process(&mut col);
        for j in 0..py {
            buf[i + px * j] = col[j];
        }
    }
}

impl Operator for FftOperator {
    fn n_data(&self) -> usize {
        self.mask.iter().filter(|m| **m).count()
    }
    fn n_cells(&self) -> usize {
        self.active.len()
    }
    fn apply(&self, m: &[f64], out: &mut [f64]) {
        let mut full = vec![0.0; self.nx * self.ny * self.nz];
        for (a, &c) in self.active.iter().enumerate() {
            full[c] = m[a];
        }
        let acc = (0..self.nz)
            .into_par_iter()
            .map(|k| {
                let mut s = self.layer_spectrum(&full, k);
                for (v, kk) in s.iter_mut().zip(&self.spectra[k]) {
                    *v *= kk;
                }
                s
            })
            .reduce(
                || vec![Complex64::new(0.0, 0.0); self.px * self.py],
                |mut a, b| {
                    for (x, y) in a.iter_mut().zip(b) {
                        *x += y;
                    }
                    a
                },
            );
        let mut acc = acc;
        fft2(&mut acc, self.px, self.py, &*self.inv, &*self.inv_y);
        let scale = 1.0 / (self.px * self.py) as f64;
        for j in 0..self.ny {
            for i in 0..self.nx {
                let c = i + self.nx * j;
                if self.mask[c] {
                    out[self.data_index[c]] = acc[i + self.px * j].re * scale;
                }
            }
        }
    }
    fn apply_t(&self, r: &[f64], out: &mut [f64]) {
        let mut grid = vec![0.0; self.nx * self.ny];
        for c in 0..self.nx * self.ny {
            if self.mask[c] {
                grid[c] = r[self.data_index[c]];
            }
        }
        let rs = self.layer_spectrum(&grid, 0);
        let plane = self.nx * self.ny;
        let layers: Vec<Vec<f64>> = (0..self.nz)
            .into_par_iter()
            .map(|k| {
                // Correlation: multiply by the conjugate kernel spectrum.
                let mut s: Vec<Complex64> = rs
                    .iter()
                    .zip(&self.spectra[k])
                    .map(|(a, b)| a * b.conj())
                    .collect();
                fft2(&mut s, self.px, self.py, &*self.inv, &*self.inv_y);
                let scale = 1.0 / (self.px * self.py) as f64;
                let mut v = vec![0.0; plane];
                for j in 0..self.ny {
                    for i in 0..self.nx {
                        v[i + self.nx * j] = s[i + self.px * j].re * scale;
                    }
                }
                v
            })
            .collect();
        for (a, &c) in self.active.iter().enumerate() {
            out[a] = layers[c / plane][c % plane];
        }
    }
    fn column_norms_sq(&self) -> Vec<f64> {
        // Σ over masked stations of G², by applying Gᵀ-like correlation of the
        // squared kernel with the mask.
        let plane = self.nx * self.ny;
        let mask_grid: Vec<f64> = self
            .mask
            .iter()
            .map(|m| if *m { 1.0 } else { 0.0 })
            .collect();
        let ms = self.layer_spectrum(&mask_grid, 0);
        let mut planner = FftPlanner::new();
        let (fx, fy) = (
            planner.plan_fft_forward(self.px),
            planner.plan_fft_forward(self.py),
        );
        let layers: Vec<Vec<f64>> = (0..self.nz)
            .into_par_iter()
            .map(|k| {
                // Kernel values back in space, squared, transformed again.
                let mut kk = self.spectra[k].clone();
                fft2(&mut kk, self.px, self.py, &*self.inv, &*self.inv_y);
                let scale = 1.0 / (self.px * self.py) as f64;
                let mut sq: Vec<Complex64> = kk
                    .iter()
                    .map(|v| Complex64::new((v.re * scale).powi(2), 0.0))
                    .collect();
                fft2(&mut sq, self.px, self.py, &*fx, &*fy);
                let mut s: Vec<Complex64> = ms.iter().zip(&sq).map(|(a, b)| a * b.conj()).collect();
                fft2(&mut s, self.px, self.py, &*self.inv, &*self.inv_y);
                (0..plane)
                    .map(|c| s[(c % self.nx) + self.px * (c / self.nx)].re * scale)
                    .collect()
            })
            .collect();
        self.active
            .iter()
            .map(|&c| layers[c / plane][c % plane])
            .collect()
    }
    fn kind(&self) -> &'static str {
        "fft"
    }
}
