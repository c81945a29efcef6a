//! Gridding by minimum curvature with tension (Briggs 1974; Smith & Wessel
//! 1990).
//!
//! The grid u solves (1 − T)∇⁴u − T∇²u = 0 away from the data, with the data
//! held at the nodes they fall nearest to (several data at one node are
//! averaged, which also thins dense along-line sampling to the cell size, so
//! lines do not grid into strings of beads). Finite differences on a square
//! cell give the node update
//!
//! u₀ = [(1 − T)(8 S₁ − 2 S₂ − S₃) + T S₁] / [20(1 − T) + 4T],
//!
//! with S₁, S₂, S₃ the sums over the 4 edge neighbours, the 4 diagonal
//! neighbours and the 4 neighbours two nodes away (Smith & Wessel 1990, eq. A1
//! on a unit grid). Boundary conditions are those of Briggs (1974): zero
//! curvature normal to an edge, zero normal gradient of the Laplacian, applied
//! through two rows of ghost nodes updated every sweep. A planar trend is
//! removed first and restored at the end. The solution is found coarse to fine:
//! each level is iterated by successive over-relaxation until the largest
//! change is below `convergence` × the data range, then interpolated to the
//! next finer level.

use super::{Grid2, GridError};
use crate::progress::Observer;
use rayon::prelude::*;
use serde::{Deserialize, Serialize};
use thiserror::Error;

#[derive(Debug, Clone, Copy, PartialEq, Serialize, Deserialize)]
pub struct MinCurvSettings {
    /// Tension T, 0 (pure minimum curvature) to 1 (harmonic). Common practice
    /// for potential-field data: about 0.25.
    pub tension: f64,
    /// Stop a level when the largest change is below this fraction of the data range.
    pub convergence: f64,
    /// Most sweeps per level.
    pub max_iterations: usize,
}

impl Default for MinCurvSettings {
    fn default() -> Self {
        MinCurvSettings {
            tension: 0.25,
            convergence: 1e-7,
            max_iterations: 20_000,
        }
    }
}

#[derive(Debug, Error, PartialEq)]
pub enum GriddingError {
    #[error(transparent)]
    Memory(#[from] crate::memory::MemoryError),
    #[error("gridding needs at least 3 data with finite coordinates and values; {0} have them")]
    TooFew(usize),
    #[error("the data lie on a line (or at one point), so no surface can be fitted to them")]
    Collinear,
    #[error("tension must be between 0 and 1, got {0}")]
    Tension(f64),
    #[error(transparent)]
    Grid(#[from] GridError),
    #[error("gridding was cancelled")]
    Cancelled,
    #[error("the biharmonic spline takes at most {max} data; {n} were given (use minimum curvature for more)")]
    TooManyForSpline { n: usize, max: usize },
}

/// Least-squares plane a + b·x + c·y through the data (coordinates relative
/// to `origin` for conditioning). Err when the data are collinear.
pub fn fit_plane(
    x: &[f64],
    y: &[f64],
    v: &[f64],
    origin: (f64, f64),
) -> Result<[f64; 3], GriddingError> {
    let mut m = [[0.0f64; 3]; 3];
    let mut r = [0.0f64; 3];
    for k in 0..x.len() {
        let b = [1.0, x[k] - origin.0, y[k] - origin.1];
        for i in 0..3 {
            r[i] += b[i] * v[k];
            for j in 0..3 {
                m[i][j] += b[i] * b[j];
            }
        }
    }
    let a = nalgebra::Matrix3::from_fn(|i, j| m[i][j]);
    let rhs = nalgebra::Vector3::new(r[0], r[1], r[2]);
    // Collinear data make the matrix singular; judge by its condition.
    let svd = a.svd(false, false);
    let (smax, smin) = (svd.singular_values.max(), svd.singular_values.min());
    if smin <= 1e-12 * smax {
        return Err(GriddingError::Collinear);
    }
    let sol = a.lu().solve(&rhs).ok_or(GriddingError::Collinear)?;
    Ok([sol[0], sol[1], sol[2]])
}

/// Grids scattered data (x, y, value) onto `template` (its origin, cell and
/// size; the cell must be square). Returns the filled grid, unblanked.
/// Bytes minimum curvature holds for `points` data and `nodes` grid nodes:
/// per point its index, coordinates, value, residual and bin entry (48
/// bytes); per node the grid levels, masks and the output (64 bytes).
pub fn memory_needed(points: usize, nodes: usize) -> u64 {
    points as u64 * 48 + nodes as u64 * 64
}

pub fn min_curvature(
    x: &[f64],
    y: &[f64],
    v: &[f64],
    template: &Grid2,
    s: &MinCurvSettings,
    obs: &dyn Observer,
) -> Result<Grid2, GriddingError> {
    if !(0.0..=1.0).contains(&s.tension) || !s.tension.is_finite() {
        return Err(GriddingError::Tension(s.tension));
    }
    crate::memory::check_now(
        &format!(
            "gridding {} points onto {} × {} nodes",
            x.len(),
            template.nx,
            template.ny
        ),
        memory_needed(x.len(), template.nx * template.ny),
        "use a coarser cell, or thin the readings along the lines first",
    )?;
    let keep: Vec<usize> = (0..x.len())
        .filter(|&k| x[k].is_finite() && y[k].is_finite() && v[k].is_finite())
        .collect();
    if keep.len() < 3 {
        return Err(GriddingError::TooFew(keep.len()));
    }
    let (xs, ys, vs): (Vec<f64>, Vec<f64>, Vec<f64>) = (
        keep.iter().map(|&k| x[k]).collect(),
        keep.iter().map(|&k| y[k]).collect(),
        keep.iter().map(|&k| v[k]).collect(),
    );
    let origin = (template.x0, template.y0);
    let plane = fit_plane(&xs, &ys, &vs, origin)?;
    let resid: Vec<f64> = (0..xs.len())
        .map(|k| vs[k] - plane[0] - plane[1] * (xs[k] - origin.0) - plane[2] * (ys[k] - origin.1))
        .collect();
    let range = vs.iter().copied().fold(f64::NEG_INFINITY, f64::max)
        - vs.iter().copied().fold(f64::INFINITY, f64::min);
    let tol = s.convergence * range.max(1e-300);
    let (nx, ny) = (template.nx, template.ny);
    // Levels: strides 2^L down to 1 while the coarse grid keeps ≥ 4 nodes a side.
    let mut strides = vec![1usize];
    while nx / (strides[strides.len() - 1] * 2) >= 4 && ny / (strides[strides.len() - 1] * 2) >= 4 {
        let last = strides[strides.len() - 1];
        strides.push(last * 2);
    }
    strides.reverse();
    let mut prev: Option<(usize, Vec<f64>, usize, usize)> = None;
    let total_levels = strides.len();
    for (level, &st) in strides.iter().enumerate() {
        if obs.cancelled() {
            return Err(GriddingError::Cancelled);
        }
        let lnx = (nx - 1) / st + 1;
        let lny = (ny - 1) / st + 1;
        let cell = template.dx * st as f64;
        // Data at nearest nodes of this level (the closest datum wins).
        let mut best = vec![f64::INFINITY; lnx * lny];
        let mut fixed: Vec<Option<f64>> = vec![None; lnx * lny];
        for k in 0..xs.len() {
            let (fi, fj) = ((xs[k] - origin.0) / cell, (ys[k] - origin.1) / cell);
            let (i, j) = (fi.round(), fj.round());
            if i < 0.0 || j < 0.0 || i as usize >= lnx || j as usize >= lny {
                continue;
            }
            let idx = i as usize + lnx * j as usize;
            let d2 = (fi - i).powi(2) + (fj - j).powi(2);
            if d2 < best[idx] {
                best[idx] = d2;
                fixed[idx] = Some(resid[k]);
            }
        }
        // Starting values: interpolated from the coarser level, else 0.
        let mut u = vec![0.0; lnx * lny];
        if let Some((pst, pu, pnx, pny)) = &prev {
            let ratio = pst / st;
            for j in 0..lny {
                for i in 0..lnx {
                    let (fi, fj) = (i as f64 / ratio as f64, j as f64 / ratio as f64);
                    let (i0, j0) = (
                        (fi.floor() as usize).min(pnx - 1),
                        (fj.floor() as usize).min(pny - 1),
                    );
                    let (i1, j1) = ((i0 + 1).min(pnx - 1), (j0 + 1).min(pny - 1));
                    let (tx, ty) = (fi - i0 as f64, fj - j0 as f64);
                    u[i + lnx * j] = (1.0 - tx) * (1.0 - ty) * pu[i0 + pnx * j0]
                        + tx * (1.0 - ty) * pu[i1 + pnx * j0]
                        + (1.0 - tx) * ty * pu[i0 + pnx * j1]
                        + tx * ty * pu[i1 + pnx * j1];
                }
            }
        }
        for (k, f) in fixed.iter().enumerate() {
            if let Some(val) = f {
                u[k] = *val;
            }
        }
        relax(&mut u, &fixed, lnx, lny, s, tol, obs)?;
        obs.progress(level + 1, total_levels);
        prev = Some((st, u, lnx, lny));
    }
    let (_, u, _, _) = prev.expect("at least one level");
    let mut g = template.clone();
    for j in 0..ny {
        for i in 0..nx {
            g.values[i + nx * j] = u[i + nx * j]
                + plane[0]
                + plane[1] * (g.x_of(i) - origin.0)
                + plane[2] * (g.y_of(j) - origin.1);
        }
    }
    Ok(g)
}

/// SOR sweeps on one level with ghost-node boundary conditions.
fn relax(
    u: &mut [f64],
    fixed: &[Option<f64>],
    nx: usize,
    ny: usize,
    s: &MinCurvSettings,
    tol: f64,
    obs: &dyn Observer,
) -> Result<(), GriddingError> {
    let t = s.tension;
    let denom = 20.0 * (1.0 - t) + 4.0 * t;
    let omega = 1.4;
    // Padded working array with two ghost rows/columns on every side.
    let (px, py) = (nx + 4, ny + 4);
    let mut w = vec![0.0; px * py];
    let at = |i: usize, j: usize| (i + 2) + px * (j + 2);
    for j in 0..ny {
        for i in 0..nx {
            w[at(i, j)] = u[i + nx * j];
        }
    }
    // Nodes are swept in nine colours, (i mod 3, j mod 3): the 13-point
    // stencil of a node never reaches another node of its colour, so all
    // nodes of one colour can be updated at once, rows in parallel.
    let fixed_mask: Vec<bool> = fixed.iter().map(|f| f.is_some()).collect();
    for iter in 0..s.max_iterations {
        if iter % 16 == 0 && obs.cancelled() {
            return Err(GriddingError::Cancelled);
        }
        update_ghosts(&mut w, nx, ny, px);
        let mut max_change: f64 = 0.0;
        for cj in 0..3 {
            for ci in 0..3 {
                let ptr = SharedRows(w.as_mut_ptr());
                let rows: Vec<usize> = (cj..ny).step_by(3).collect();
                let change = rows
                    .par_iter()
                    .map(|&j| {
                        let ptr = &ptr;
                        let mut local: f64 = 0.0;
                        for i in (ci..nx).step_by(3) {
                            if fixed_mask[i + nx * j] {
                                continue;
                            }
                            let c = (i + 2) + px * (j + 2);
                            // SAFETY: within one colour pass every thread
                            // writes only nodes of its own row of this colour
                            // and reads only nodes of other colours, which no
                            // thread writes during the pass.
                            unsafe {
                                let r = |o: isize| *ptr.0.offset(c as isize + o);
                                let (p1, p2) = (px as isize, 2 * px as isize);
                                let s1 = r(-1) + r(1) + r(-p1) + r(p1);
                                let s2 = r(-1 - p1) + r(1 - p1) + r(-1 + p1) + r(1 + p1);
                                let s3 = r(-2) + r(2) + r(-p2) + r(p2);
                                let target =
                                    ((1.0 - t) * (8.0 * s1 - 2.0 * s2 - s3) + t * s1) / denom;
                                let cell = ptr.0.add(c);
                                let d = omega * (target - *cell);
                                *cell += d;
                                local = local.max(d.abs());
                            }
                        }
                        local
                    })
                    .reduce(|| 0.0, f64::max);
                max_change = max_change.max(change);
            }
        }
        if max_change <= tol {
            break;
        }
    }
    for j in 0..ny {
        for i in 0..nx {
            u[i + nx * j] = w[at(i, j)];
        }
    }
    Ok(())
}

/// A raw pointer to the working grid, shared by the threads of one colour pass.
struct SharedRows(*mut f64);
// SAFETY: see the colour-pass invariant in `relax`.
unsafe impl Sync for SharedRows {}
unsafe impl Send for SharedRows {}

/// Ghost nodes from Briggs's edge conditions: u₋₁ = 2u₀ − u₁ (no curvature
/// across the edge) and u₋₂ from a zero normal gradient of the Laplacian.
fn update_ghosts(w: &mut [f64], nx: usize, ny: usize, px: usize) {
    let at = |i: isize, j: isize| ((i + 2) as usize) + px * ((j + 2) as usize);
    let (nxi, nyi) = (nx as isize, ny as isize);
    // First ghosts (x edges, then y edges including the x ghost columns).
    for j in 0..nyi {
        w[at(-1, j)] = 2.0 * w[at(0, j)] - w[at(1, j)];
        w[at(nxi, j)] = 2.0 * w[at(nxi - 1, j)] - w[at(nxi - 2, j)];
    }
    for i in -1..=nxi {
        w[at(i, -1)] = 2.0 * w[at(i, 0)] - w[at(i, 1)];
        w[at(i, nyi)] = 2.0 * w[at(i, nyi - 1)] - w[at(i, nyi - 2)];
    }
    // Second ghosts: ∇²u(1) = ∇²u(−1) across each edge.
    for j in 0..nyi {
        let (jm, jp) = (j - 1, j + 1);
        w[at(-2, j)] = w[at(2, j)] + w[at(1, jp)] + w[at(1, jm)]
            - 4.0 * w[at(1, j)]
            - w[at(-1, jp)]
            - w[at(-1, jm)]
            + 4.0 * w[at(-1, j)];
        let e = nxi - 1;
        w[at(e + 2, j)] = w[at(e - 2, j)] + w[at(e - 1, jp)] + w[at(e - 1, jm)]
            - 4.0 * w[at(e - 1, j)]
            - w[at(e + 1, jp)]
            - w[at(e + 1, jm)]
            + 4.0 * w[at(e + 1, j)];
    }
    for i in 0..nxi {
        let (im, ip) = (i - 1, i + 1);
        w[at(i, -2)] = w[at(i, 2)] + w[at(ip, 1)] + w[at(im, 1)]
            - 4.0 * w[at(i, 1)]
            - w[at(ip, -1)]
            - w[at(im, -1)]
            + 4.0 * w[at(i, -1)];
        let e = nyi - 1;
        w[at(i, e + 2)] = w[at(i, e - 2)] + w[at(ip, e - 1)] + w[at(im, e - 1)]
            - 4.0 * w[at(i, e - 1)]
            - w[at(ip, e + 1)]
            - w[at(im, e + 1)]
            + 4.0 * w[at(i, e + 1)];
    }
}
