//! FFT (block-Toeplitz) operator for gridded data over a mesh with uniform
//! horizontal cells and data at cell-centre positions (Hogue, Renaut &
//! Vatankhah 2020).
//!
//! For data at one elevation the sensitivity of station (p, q) to cell
//! (i, j, k) depends only on (i − p, j − q) and k, so every layer of G is a
//! 2-D convolution. One kernel row — g_z at the centre station of a mesh
//! twice as wide — gives all offsets of every layer at once. Products are
//! per-layer FFT convolutions, O(n log n) each, with no stored matrix; Gᵀ is
//! the correlation with the same kernels; stations without data are masked.
//!
//! **Draped data.** When the stations are at different elevations (a survey
//! flown or walked over gently undulating ground) the kernel of a station
//! is a smooth function of its height above the cells, so G is expanded in
//! observation height (Zhang & Wong 2015 use a Taylor expansion): G(z) ≈
//! Σₗ Lₗ(z) G(zₗ), with kernels at `order + 1` Chebyshev levels zₗ spanning
//! the station heights and Lₗ the Lagrange polynomials through them. This
//! is the same polynomial in z that a Taylor series of that order gives,
//! with its height derivatives taken from the levels instead of from
//! higher-order kernels. Each term is still a convolution: G m = Σₗ
//! diag(Lₗ(z)) (Kₗ ∗ m), so a product costs one forward transform per layer
//! and one inverse per level. The approximation is poor where a station is
//! closer to a cell than the spread of the levels (rough terrain under
//! ground stations); [`FftOperator::compare_rows`] measures it against exact
//! rows, and callers report that figure.
//!
//! Layout: real-to-complex transforms along x (only the `ny` rows that hold
//! data or cells are transformed; the padding rows are zero), then complex
//! transforms along y on the `px/2 + 1` columns, stored column-major
//! (`h * py + j`) so each y transform runs over contiguous memory. Every
//! product allocates its work buffers once per worker thread, not per
//! layer.

use super::Operator;
use crate::mesh::TensorMesh;
use crate::physics::tensor::{gz_row, induced_tmi_scale, tmi_row, MeshNodes, RowScratch};
use rayon::prelude::*;
use realfft::{ComplexToReal, RealFftPlanner, RealToComplex};
use rustfft::num_complex::Complex64;
use rustfft::{Fft, FftPlanner};
use std::sync::{Arc, Mutex};

use super::dense::{OperatorError, Survey};
use crate::filter::spectral::fast_size;

/// Where the data of an FFT operator are.
#[derive(Debug, Clone, PartialEq)]
pub enum Heights {
    /// Every datum at this elevation (m).
    Level(f64),
    /// Each datum at its own elevation (m; one per datum, in data order),
    /// with the kernels expanded in height to this polynomial order (0–6).
    Draped { z_m: Vec<f64>, order: usize },
}

/// Exact rows against the operator's rows at a sample of stations.
#[derive(Debug, Clone, PartialEq, serde::Serialize, serde::Deserialize)]
pub struct RowCheck {
    pub rows_checked: usize,
    /// ‖row_fft − row_exact‖ / ‖row_exact‖ over the active cells.
    pub median_relative_error: f64,
    pub max_relative_error: f64,
    /// Data index of the worst row.
    pub worst_datum: usize,
}

pub struct FftOperator {
    nx: usize,
    ny: usize,
    nz: usize,
    px: usize,
    py: usize,
    /// px / 2 + 1: complex values per transformed x row.
    hx: usize,
    /// Kernel elevations (one for level data).
    levels: Vec<f64>,
    /// Kernel spectra, [level][layer][h * py + j].
    spectra: Vec<Complex64>,
    /// Lagrange weight of each level for each datum, [datum][level].
    weights: Vec<f64>,
    /// Column (i + nx j) of each datum.
    station_column: Vec<usize>,
    /// Datum at each column, or usize::MAX.
    data_index: Vec<usize>,
    /// Active cells (mesh indices, ascending) = operator columns.
    active: Vec<usize>,
    /// Active index of each mesh cell, or u32::MAX.
    cell_to_active: Vec<u32>,
    /// First active index of each layer (nz + 1 entries).
    layer_start: Vec<usize>,
    column_norms: Vec<f64>,
    r2c: Arc<dyn RealToComplex<f64>>,
    c2r: Arc<dyn ComplexToReal<f64>>,
    col_fwd: Arc<dyn Fft<f64>>,
    col_inv: Arc<dyn Fft<f64>>,
    /// Work buffers kept between products.
    pool: Mutex<Vec<Work>>,
}

/// Layers are summed in this many groups, each in a fixed order, so a
/// product gives the same bits whatever the thread count.
const GROUPS: usize = 8;

/// Work buffers of one thread.
#[derive(Default)]
struct Work {
    row: Vec<f64>,
    rowc: Vec<Complex64>,
    spec: Vec<Complex64>,
    scratch_r: Vec<Complex64>,
    scratch_c: Vec<Complex64>,
}

/// One layer of a kernel row as a padded image with wrap-around indexing
/// for circular convolution, out(p) = Σ_i K(i − p) m(i): the value for the
/// offset o = cell − station sits at index (−o) mod P. `times` multiplies
/// it by a second row (kernel products for the column norms).
struct KernelImage<'a> {
    row: &'a [f64],
    times: Option<&'a [f64]>,
    k: usize,
    nx: usize,
    ny: usize,
    px: usize,
    py: usize,
}

impl KernelImage<'_> {
    fn value(&self, i: usize, j: usize) -> f64 {
        let (kx, ky) = (2 * self.nx - 1, 2 * self.ny - 1);
        // Index i holds the offset −i (mod px), folded to −px/2 ..= px/2.
        let wrap = |i: usize, p: usize| {
            if i <= p / 2 {
                -(i as i64)
            } else {
                (p - i) as i64
            }
        };
        let a = wrap(i, self.px) + self.nx as i64 - 1;
        let b = wrap(j, self.py) + self.ny as i64 - 1;
        if a < 0 || b < 0 || a >= kx as i64 || b >= ky as i64 {
            return 0.0;
        }
        let idx = a as usize + kx * (b as usize + ky * self.k);
        self.row[idx] * self.times.map(|t| t[idx]).unwrap_or(1.0)
    }
}

/// Chebyshev levels over [lo, hi] for a polynomial of `order`.
fn chebyshev_levels(lo: f64, hi: f64, order: usize) -> Vec<f64> {
    let l = order + 1;
    if order == 0 || hi - lo <= 1e-9 * hi.abs().max(1.0) {
        return vec![0.5 * (lo + hi)];
    }
    (0..l)
        .map(|i| {
            0.5 * (lo + hi)
                + 0.5
                    * (hi - lo)
                    * ((2 * i + 1) as f64 * std::f64::consts::PI / (2 * l) as f64).cos()
        })
        .collect()
}

/// Lagrange basis polynomials through `levels`, at z.
fn lagrange(levels: &[f64], z: f64, out: &mut [f64]) {
    for (l, o) in out.iter_mut().enumerate() {
        *o = levels
            .iter()
            .enumerate()
            .filter(|(m, _)| *m != l)
            .map(|(_, zm)| (z - zm) / (levels[l] - zm))
            .product();
    }
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
            &Heights::Level(z_m),
            mask,
            survey,
            crate::memory::available_or_assumed(),
        )
    }

    /// Bytes the operator holds for a mesh of `shape` with kernels at
    /// `levels` heights: the kernel spectra (one half-spectrum per layer and
    /// level), the kernel rows they are made from, and per-cell maps.
    pub fn bytes_needed(shape: [usize; 3], levels: usize) -> u64 {
        let [nx, ny, nz] = shape;
        let (px, py) = (fast_size(2 * nx) as u64, fast_size(2 * ny) as u64);
        let hx = px / 2 + 1;
        let (kx, ky) = (
            (2 * nx).saturating_sub(1) as u64,
            (2 * ny).saturating_sub(1) as u64,
        );
        let cells = (nx * ny * nz) as u64;
        levels.max(1) as u64 * nz as u64 * (hx * py * 16 + kx * ky * 8) + cells * 20
    }

    /// [`FftOperator::build`] for level or draped data, refusing when the
    /// kernel spectra would not fit in `available` bytes. `active` must be
    /// ascending mesh cell indices.
    pub fn build_within(
        mesh: &TensorMesh,
        active: &[usize],
        heights: &Heights,
        mask: &[bool],
        survey: Survey,
        available: u64,
    ) -> Result<FftOperator, OperatorError> {
        let [nx, ny, nz] = mesh.shape();
        if active.is_empty() {
            return Err(OperatorError::Empty);
        }
        if !mesh.uniform_horizontal() {
            return Err(OperatorError::Layout(
                "the mesh's horizontal cells are not all the same size (expanding padding); use uniform padding or the dense operator".into(),
            ));
        }
        if mask.len() != nx * ny {
            return Err(OperatorError::Layout(format!(
                "the data mask has {} entries for {nx} × {ny} mesh columns",
                mask.len()
            )));
        }
        if !active.windows(2).all(|w| w[0] < w[1]) || active[active.len() - 1] >= mesh.n_cells() {
            return Err(OperatorError::Layout(
                "the active cells must be distinct mesh cells in ascending order".into(),
            ));
        }
        let mut data_index = vec![usize::MAX; nx * ny];
        let mut station_column = Vec::new();
        for (c, m) in mask.iter().enumerate() {
            if *m {
                data_index[c] = station_column.len();
                station_column.push(c);
            }
        }
        let nd = station_column.len();
        if nd == 0 {
            return Err(OperatorError::Empty);
        }
        let levels = match heights {
            Heights::Level(z) => vec![*z],
            Heights::Draped { z_m, order } => {
                if z_m.len() != nd || z_m.iter().any(|z| !z.is_finite()) || *order > 6 {
                    return Err(OperatorError::Heights(format!(
                        "draped heights need one finite elevation per datum ({} data, {} heights) and an order from 0 to 6 (got {order})",
                        nd,
                        z_m.len()
                    )));
                }
                let lo = z_m.iter().copied().fold(f64::INFINITY, f64::min);
                let hi = z_m.iter().copied().fold(f64::NEG_INFINITY, f64::max);
                chebyshev_levels(lo, hi, *order)
            }
        };
        let nl = levels.len();
        crate::memory::check(
            &format!(
                "the FFT operator's kernel spectra for {nx} × {ny} × {nz} cells at {nl} height level(s)"
            ),
            Self::bytes_needed([nx, ny, nz], nl),
            available,
            "use coarser horizontal cells, a smaller core or a lower height order",
        )?;
        let mut weights = vec![1.0; nd * nl];
        if let Heights::Draped { z_m, .. } = heights {
            for (d, w) in weights.chunks_mut(nl).enumerate() {
                lagrange(&levels, z_m[d], w);
            }
        }
        let (px, py) = (fast_size(2 * nx), fast_size(2 * ny));
        let hx = px / 2 + 1;
        let mut rp = RealFftPlanner::<f64>::new();
        let mut cp = FftPlanner::<f64>::new();
        let mut cell_to_active = vec![u32::MAX; mesh.n_cells()];
        for (a, &c) in active.iter().enumerate() {
            cell_to_active[c] = a as u32;
        }
        let plane = nx * ny;
        let layer_start: Vec<usize> = (0..=nz)
            .map(|k| active.partition_point(|&c| c < k * plane))
            .collect();
        let mut op = FftOperator {
            nx,
            ny,
            nz,
            px,
            py,
            hx,
            levels,
            spectra: Vec::new(),
            weights,
            station_column,
            data_index,
            active: active.to_vec(),
            cell_to_active,
            layer_start,
            column_norms: Vec::new(),
            r2c: rp.plan_fft_forward(px),
            c2r: rp.plan_fft_inverse(px),
            col_fwd: cp.plan_fft_forward(py),
            col_inv: cp.plan_fft_inverse(py),
            pool: Mutex::new(Vec::new()),
        };
        // Kernel rows: g_z (or TMI) at the centre station of a mesh of
        // (2nx − 1) × (2ny − 1) columns, at each level.
        let (dx, dy) = (mesh.x[1] - mesh.x[0], mesh.y[1] - mesh.y[0]);
        let (kx, ky) = (2 * nx - 1, 2 * ny - 1);
        let xs: Vec<f64> = (0..=kx)
            .map(|i| (i as f64 - (nx as f64 - 0.5)) * dx)
            .collect();
        let ys: Vec<f64> = (0..=ky)
            .map(|j| (j as f64 - (ny as f64 - 0.5)) * dy)
            .collect();
        let nodes = MeshNodes::new(xs, ys, mesh.z.clone())?;
        let rows: Vec<Vec<f64>> = op
            .levels
            .par_iter()
            .map(|&z| -> Result<Vec<f64>, OperatorError> {
                let mut row = vec![0.0; kx * ky * nz];
                let mut scratch = RowScratch::default();
                let st = [0.0, 0.0, z];
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
                Ok(row)
            })
            .collect::<Result<_, _>>()?;
        let hp = hx * py;
        let mut spectra = vec![Complex64::new(0.0, 0.0); nl * nz * hp];
        spectra.par_chunks_mut(hp).enumerate().for_each_init(
            || op.work(),
            |w, (lk, out)| {
                let (l, k) = (lk / nz, lk % nz);
                let img = KernelImage {
                    row: &rows[l],
                    times: None,
                    k,
                    nx,
                    ny,
                    px,
                    py,
                };
                op.forward_full(w, |i, j| img.value(i, j), out);
            },
        );
        op.spectra = spectra;
        // Column norms Σ_d (Σ_l w_dl K_l)² = Σ_{l,l'} Σ_d w_dl w_dl' K_l K_l':
        // correlations of the weighted mask with the kernel products.
        let mut norms_full = vec![0.0; nz * plane];
        for l in 0..nl {
            for l2 in l..nl {
                let factor = if l == l2 { 1.0 } else { 2.0 };
                let mut ms = vec![Complex64::new(0.0, 0.0); hp];
                let mut w = op.work();
                let mut mgrid = vec![0.0; plane];
                for (d, &c) in op.station_column.iter().enumerate() {
                    mgrid[c] = op.weights[d * nl + l] * op.weights[d * nl + l2];
                }
                op.forward_rows(&mut w, |i, j| mgrid[i + nx * j], &mut ms);
                norms_full.par_chunks_mut(plane).enumerate().for_each_init(
                    || op.work(),
                    |w, (k, out)| {
                        let mut ks = std::mem::take(&mut w.spec);
                        let img = KernelImage {
                            row: &rows[l],
                            times: Some(&rows[l2]),
                            k,
                            nx,
                            ny,
                            px,
                            py,
                        };
                        op.forward_full(w, |i, j| img.value(i, j), &mut ks);
                        for (v, m) in ks.iter_mut().zip(&ms) {
                            *v = m * v.conj();
                        }
                        op.inverse_rows(w, &mut ks, |i, j, v| out[i + nx * j] += factor * v);
                        w.spec = ks;
                    },
                );
            }
        }
        op.column_norms = op.active.iter().map(|&c| norms_full[c]).collect();
        Ok(op)
    }

    /// Elevations of the kernel levels.
    pub fn levels(&self) -> &[f64] {
        &self.levels
    }

    fn take_work(&self) -> Work {
        let popped = match self.pool.lock() {
            Ok(mut p) => p.pop(),
            Err(e) => e.into_inner().pop(),
        };
        popped.unwrap_or_else(|| self.work())
    }

    fn put_work(&self, w: Work) {
        match self.pool.lock() {
            Ok(mut p) => p.push(w),
            Err(e) => e.into_inner().push(w),
        }
    }

    fn work(&self) -> Work {
        Work {
            row: vec![0.0; self.px],
            rowc: vec![Complex64::new(0.0, 0.0); self.hx],
            spec: vec![Complex64::new(0.0, 0.0); self.hx * self.py],
            scratch_r: vec![
                Complex64::new(0.0, 0.0);
                self.r2c.get_scratch_len().max(self.c2r.get_scratch_len())
            ],
            scratch_c: vec![
                Complex64::new(0.0, 0.0);
                self.col_fwd
                    .get_inplace_scratch_len()
                    .max(self.col_inv.get_inplace_scratch_len())
            ],
        }
    }

    /// Forward 2-D transform of a grid that is zero outside i < nx, j < ny.
    fn forward_rows(&self, w: &mut Work, get: impl Fn(usize, usize) -> f64, out: &mut [Complex64]) {
        let (px, py, hx) = (self.px, self.py, self.hx);
        for j in 0..self.ny {
            for i in 0..self.nx {
                w.row[i] = get(i, j);
            }
            w.row[self.nx..px].iter_mut().for_each(|v| *v = 0.0);
            // Lengths are fixed at construction; the transform cannot fail.
            let _ = self
                .r2c
                .process_with_scratch(&mut w.row, &mut w.rowc, &mut w.scratch_r);
            for h in 0..hx {
                out[h * py + j] = w.rowc[h];
            }
        }
        for h in 0..hx {
            out[h * py + self.ny..(h + 1) * py]
                .iter_mut()
                .for_each(|v| *v = Complex64::new(0.0, 0.0));
        }
        self.col_fwd.process_with_scratch(out, &mut w.scratch_c);
    }

    /// Forward 2-D transform of a full px × py grid (kernel images).
    fn forward_full(&self, w: &mut Work, get: impl Fn(usize, usize) -> f64, out: &mut [Complex64]) {
        let (px, py, hx) = (self.px, self.py, self.hx);
        for j in 0..py {
            for i in 0..px {
                w.row[i] = get(i, j);
            }
            let _ = self
                .r2c
                .process_with_scratch(&mut w.row, &mut w.rowc, &mut w.scratch_r);
            for h in 0..hx {
                out[h * py + j] = w.rowc[h];
            }
        }
        self.col_fwd.process_with_scratch(out, &mut w.scratch_c);
    }

    /// Inverse 2-D transform (destroys `spec`), handing the values of the
    /// first nx × ny nodes to `put`, normalised.
    fn inverse_rows(
        &self,
        w: &mut Work,
        spec: &mut [Complex64],
        mut put: impl FnMut(usize, usize, f64),
    ) {
        let (px, py, hx) = (self.px, self.py, self.hx);
        self.col_inv.process_with_scratch(spec, &mut w.scratch_c);
        let scale = 1.0 / (px * py) as f64;
        for j in 0..self.ny {
            for h in 0..hx {
                w.rowc[h] = spec[h * py + j];
            }
            // The result is real: the zero-frequency (and Nyquist) terms
            // have no imaginary part beyond rounding.
            w.rowc[0].im = 0.0;
            if px % 2 == 0 {
                w.rowc[hx - 1].im = 0.0;
            }
            let _ = self
                .c2r
                .process_with_scratch(&mut w.rowc, &mut w.row, &mut w.scratch_r);
            for i in 0..self.nx {
                put(i, j, w.row[i] * scale);
            }
        }
    }

    /// Row `d` of the operator over the active cells (one adjoint product).
    pub fn row(&self, d: usize) -> Vec<f64> {
        let mut e = vec![0.0; self.n_data()];
        let mut out = vec![0.0; self.n_cells()];
        if d < e.len() {
            e[d] = 1.0;
            self.apply_t(&e, &mut out);
        }
        out
    }

    /// The operator's rows against exact rows (`exact(d)` over the active
    /// cells) at the data `sample`; data without an exact row (`None`) are
    /// left out of the count.
    pub fn compare_rows(
        &self,
        sample: &[usize],
        mut exact: impl FnMut(usize) -> Option<Vec<f64>>,
    ) -> RowCheck {
        let mut errs: Vec<(f64, usize)> = sample
            .iter()
            .filter(|&&d| d < self.n_data())
            .filter_map(|&d| {
                let b = exact(d)?;
                let a = self.row(d);
                let num: f64 = a.iter().zip(&b).map(|(x, y)| (x - y).powi(2)).sum();
                let den: f64 = b.iter().map(|y| y * y).sum();
                Some(((num / den.max(1e-300)).sqrt(), d))
            })
            .collect();
        errs.sort_by(|a, b| a.0.total_cmp(&b.0));
        let worst = errs.last().copied().unwrap_or((0.0, 0));
        RowCheck {
            rows_checked: errs.len(),
            median_relative_error: errs.get(errs.len() / 2).map(|e| e.0).unwrap_or(0.0),
            max_relative_error: worst.0,
            worst_datum: worst.1,
        }
    }
}

impl Operator for FftOperator {
    fn n_data(&self) -> usize {
        self.station_column.len()
    }
    fn n_cells(&self) -> usize {
        self.active.len()
    }
    fn apply(&self, m: &[f64], out: &mut [f64]) {
        let (nx, plane, nl, hp) = (
            self.nx,
            self.nx * self.ny,
            self.levels.len(),
            self.hx * self.py,
        );
        // Each group: its layers' spectra times each level's kernel, summed
        // in layer order; then the groups summed in order.
        let layers: Vec<usize> = (0..self.nz)
            .filter(|&k| self.layer_start[k] < self.layer_start[k + 1])
            .collect();
        let groups = layers.len().min(GROUPS);
        let parts: Vec<Vec<Complex64>> = (0..groups)
            .into_par_iter()
            .map(|g| {
                let mut w = self.take_work();
                let mut acc = vec![Complex64::new(0.0, 0.0); nl * hp];
                let mut spec = std::mem::take(&mut w.spec);
                for &k in &layers[g * layers.len() / groups..(g + 1) * layers.len() / groups] {
                    let base = k * plane;
                    self.forward_rows(
                        &mut w,
                        |i, j| match self.cell_to_active[base + i + nx * j] {
                            u32::MAX => 0.0,
                            a => m[a as usize],
                        },
                        &mut spec,
                    );
                    for l in 0..nl {
                        let ks = &self.spectra[(l * self.nz + k) * hp..(l * self.nz + k + 1) * hp];
                        for ((a, s), kk) in acc[l * hp..(l + 1) * hp].iter_mut().zip(&spec).zip(ks)
                        {
                            *a += s * kk;
                        }
                    }
                }
                w.spec = spec;
                self.put_work(w);
                acc
            })
            .collect();
        let acc = parts.into_iter().reduce(|mut a, b| {
            for (x, y) in a.iter_mut().zip(b) {
                *x += y;
            }
            a
        });
        out.iter_mut().for_each(|o| *o = 0.0);
        let Some(mut acc) = acc else {
            return;
        };
        let mut w = self.take_work();
        for l in 0..nl {
            self.inverse_rows(&mut w, &mut acc[l * hp..(l + 1) * hp], |i, j, v| {
                let d = self.data_index[i + nx * j];
                if d != usize::MAX {
                    out[d] += self.weights[d * nl + l] * v;
                }
            });
        }
        self.put_work(w);
    }
    fn apply_t(&self, r: &[f64], out: &mut [f64]) {
        let (nx, nl, hp) = (self.nx, self.levels.len(), self.hx * self.py);
        // Spectrum of each level's weighted residual grid.
        let mut rs = vec![Complex64::new(0.0, 0.0); nl * hp];
        rs.par_chunks_mut(hp).enumerate().for_each_init(
            || self.work(),
            |w, (l, spec)| {
                self.forward_rows(
                    w,
                    |i, j| match self.data_index[i + nx * j] {
                        usize::MAX => 0.0,
                        d => self.weights[d * nl + l] * r[d],
                    },
                    spec,
                );
            },
        );
        // Each layer's active cells are one contiguous range of `out`.
        let mut parts: Vec<(usize, &mut [f64])> = Vec::with_capacity(self.nz);
        let mut rest = out;
        for k in 0..self.nz {
            let len = self.layer_start[k + 1] - self.layer_start[k];
            let (head, tail) = rest.split_at_mut(len);
            rest = tail;
            if len > 0 {
                parts.push((k, head));
            }
        }
        let plane = self.nx * self.ny;
        parts.into_par_iter().for_each(|(k, part)| {
            let mut w = self.take_work();
            let w = &mut w;
            let mut spec = std::mem::take(&mut w.spec);
            spec.iter_mut().for_each(|v| *v = Complex64::new(0.0, 0.0));
            for l in 0..nl {
                let ks = &self.spectra[(l * self.nz + k) * hp..(l * self.nz + k + 1) * hp];
                for ((s, a), kk) in spec.iter_mut().zip(&rs[l * hp..(l + 1) * hp]).zip(ks) {
                    // Correlation: the conjugate kernel spectrum.
                    *s += a * kk.conj();
                }
            }
            let (base, first) = (k * plane, self.layer_start[k]);
            self.inverse_rows(w, &mut spec, |i, j, v| {
                let a = self.cell_to_active[base + i + nx * j];
                if a != u32::MAX {
                    part[a as usize - first] = v;
                }
            });
            w.spec = spec;
            self.put_work(std::mem::take(w));
        });
    }
    fn column_norms_sq(&self) -> Vec<f64> {
        self.column_norms.clone()
    }
    fn kind(&self) -> &'static str {
        "fft"
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn lagrange_weights_reproduce_polynomials_to_their_order() {
        let lv = chebyshev_levels(10.0, 70.0, 3);
        assert_eq!(lv.len(), 4);
        let mut w = [0.0; 4];
        for z in [10.0, 23.5, 40.0, 69.0] {
            lagrange(&lv, z, &mut w);
            // Σ L_l = 1 and Σ L_l z_l³ = z³ (exact for degree ≤ 3).
            let s: f64 = w.iter().sum();
            let c: f64 = w.iter().zip(&lv).map(|(a, b)| a * b.powi(3)).sum();
            assert!((s - 1.0).abs() < 1e-12);
            assert!((c - z.powi(3)).abs() < 1e-9 * z.powi(3));
        }
        assert_eq!(chebyshev_levels(5.0, 5.0, 3), vec![5.0]);
    }
}
