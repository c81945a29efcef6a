//! The solver: bounded quadratic steps, β cooling to the target misfit, IRLS.

// Index loops over several parallel arrays read more plainly than zipped
// iterators in these numerical kernels.
#![allow(clippy::needless_range_loop)]

use super::objective::{dot, Face, ModelObjective, CHUNK};
use super::{InversionSettings, IterationRecord, RunSummary, Weighting};
use crate::constraint::build::ConstraintArrays;
use crate::mesh::TensorMesh;
use crate::operator::Operator;
use crate::progress::Observer;
use rayon::prelude::*;
use std::time::Instant;
use thiserror::Error;

#[derive(Debug, Error, PartialEq)]
pub enum InversionError {
    #[error("datum {index} has uncertainty {value}; uncertainties must be positive and finite")]
    Uncertainty { index: usize, value: f64 },
    #[error("datum {index} is not a finite number")]
    Data { index: usize },
    #[error("{0}")]
    Setup(String),
    #[error("the inversion was cancelled")]
    Cancelled,
}

/// Everything a run needs besides the operator.
pub struct Problem<'a> {
    pub mesh: &'a TensorMesh,
    pub constraints: &'a ConstraintArrays,
    /// Mesh cell index of each operator column.
    pub active: &'a [usize],
    pub data: &'a [f64],
    pub uncertainty: &'a [f64],
    /// Highest station elevation, for depth weighting.
    pub reference_elevation_m: f64,
}

/// The result of a run.
#[derive(Debug, Clone)]
pub struct RunResult {
    /// Model on the active cells.
    pub model: Vec<f64>,
    pub predicted: Vec<f64>,
    pub log: Vec<IterationRecord>,
    pub summary: RunSummary,
}

/// The default uncertainty: a floor plus a percentage of each datum's
/// magnitude (common practice).
pub fn default_uncertainty(data: &[f64], floor: f64, percent: f64) -> Vec<f64> {
    data.iter()
        .map(|d| floor + 0.01 * percent * d.abs())
        .collect()
}

struct Setup<'a, O: Operator> {
    op: &'a O,
    /// diag(Gᵀ W_d² G), for the Jacobi preconditioner.
    data_diag: Vec<f64>,
    d: Vec<f64>,
    wd2: Vec<f64>,
    lower: Vec<f64>,
    upper: Vec<f64>,
    obj: ModelObjective,
}

impl<O: Operator> Setup<'_, O> {
    fn phi_d(&self, pred: &[f64]) -> f64 {
        pred.iter()
            .zip(&self.d)
            .zip(&self.wd2)
            .map(|((p, d), w)| w * (p - d).powi(2))
            .sum()
    }

    /// H v = 2 Gᵀ W_d² G v + β H_m v on the free cells (others zero).
    fn hess(&self, v: &[f64], beta: f64, free: &[bool], tmp_d: &mut [f64], out: &mut [f64]) {
        self.op.apply(v, tmp_d);
        for (t, w) in tmp_d.iter_mut().zip(&self.wd2) {
            *t *= 2.0 * w;
        }
        self.op.apply_t(tmp_d, out);
        self.obj.add_hessian(v, beta, out);
        for (o, f) in out.iter_mut().zip(free) {
            if !f {
                *o = 0.0;
            }
        }
    }

    fn gradient(&self, m: &[f64], pred: &[f64], beta: f64, out: &mut [f64]) {
        let r: Vec<f64> = pred
            .iter()
            .zip(&self.d)
            .zip(&self.wd2)
            .map(|((p, d), w)| 2.0 * w * (p - d))
            .collect();
        self.op.apply_t(&r, out);
        self.obj.add_gradient(m, beta, out);
    }

    fn project(&self, m: &mut [f64]) {
        for ((v, l), u) in m.iter_mut().zip(&self.lower).zip(&self.upper) {
            *v = v.clamp(*l, *u);
        }
    }

    /// Minimises φ_d + β φ_m within the bounds from `m` (projected, active
    /// set + CG on the free cells). Returns CG iterations used.
    fn solve(
        &self,
        m: &mut Vec<f64>,
        beta: f64,
        s: &InversionSettings,
        obs: &dyn Observer,
    ) -> Result<usize, InversionError> {
        let n = m.len();
        let nd = self.d.len();
        let mut pred = vec![0.0; nd];
        let mut g = vec![0.0; n];
        let mut cg_total = 0;
        let mut tmp_d = vec![0.0; nd];
        for _outer in 0..4 {
            self.op.apply(m, &mut pred);
            self.gradient(m, &pred, beta, &mut g);
            let free: Vec<bool> = (0..n)
                .map(|j| {
                    let (l, u) = (self.lower[j], self.upper[j]);
                    !(l == u || (m[j] <= l && g[j] > 0.0) || (m[j] >= u && g[j] < 0.0))
                })
                .collect();
            // Jacobi-preconditioned CG on H p = −g over the free cells.
            let mut diag: Vec<f64> = self.data_diag.iter().map(|v| 2.0 * v).collect();
            self.obj.add_hessian_diagonal(beta, &mut diag);
            let inv_diag: Vec<f64> = diag
                .iter()
                .zip(&free)
                .map(|(d, f)| if *f && *d > 0.0 { 1.0 / d } else { 0.0 })
                .collect();
            let mut r: Vec<f64> = g
                .iter()
                .zip(&free)
                .map(|(gj, f)| if *f { -gj } else { 0.0 })
                .collect();
            let r0 = dot(&r, &r).sqrt();
            if r0 == 0.0 {
                break;
            }
            let mut z: Vec<f64> = r.iter().zip(&inv_diag).map(|(a, b)| a * b).collect();
            let mut p = z.clone();
            let mut x = vec![0.0; n];
            let mut hp = vec![0.0; n];
            let mut rz = dot(&r, &z);
            for _ in 0..s.max_cg {
                if obs.cancelled() {
                    return Err(InversionError::Cancelled);
                }
                self.hess(&p, beta, &free, &mut tmp_d, &mut hp);
                let php = dot(&p, &hp);
                if php <= 0.0 {
                    break;
                }
                let a = rz / php;
                x.par_iter_mut()
                    .zip(r.par_iter_mut())
                    .zip(p.par_iter().zip(hp.par_iter()))
                    .with_min_len(CHUNK)
                    .for_each(|((xj, rj), (pj, hj))| {
                        *xj += a * pj;
                        *rj -= a * hj;
                    });
                cg_total += 1;
                if dot(&r, &r).sqrt() <= s.cg_tolerance * r0 {
                    break;
                }
                z.par_iter_mut()
                    .zip(r.par_iter().zip(inv_diag.par_iter()))
                    .with_min_len(CHUNK)
                    .for_each(|(zj, (rj, dj))| *zj = rj * dj);
                let rz_new = dot(&r, &z);
                let bta = rz_new / rz;
                rz = rz_new;
                p.par_iter_mut()
                    .zip(z.par_iter())
                    .with_min_len(CHUNK)
                    .for_each(|(pj, zj)| *pj = zj + bta * *pj);
            }
            // Projected step with backtracking on the objective.
            let phi_now = self.phi_d(&pred) + beta * self.obj.value(m).total;
            let mut t = 1.0;
            let mut accepted = false;
            for _ in 0..10 {
                let mut trial: Vec<f64> = m.iter().zip(&x).map(|(a, b)| a + t * b).collect();
                self.project(&mut trial);
                self.op.apply(&trial, &mut pred);
                let phi = self.phi_d(&pred) + beta * self.obj.value(&trial).total;
                if phi <= phi_now {
                    let change: f64 = trial
                        .iter()
                        .zip(m.iter())
                        .map(|(a, b)| (a - b).abs())
                        .fold(0.0, f64::max);
                    *m = trial;
                    accepted = true;
                    let scale = m.iter().fold(0.0f64, |a, v| a.max(v.abs())).max(1e-30);
                    if change <= 1e-6 * scale {
                        return Ok(cg_total);
                    }
                    break;
                }
                t *= 0.5;
            }
            if !accepted {
                break;
            }
        }
        Ok(cg_total)
    }
}

/// Largest eigenvalue of a symmetric operator by power iteration.
fn power_iteration(n: usize, mut apply: impl FnMut(&[f64], &mut [f64])) -> f64 {
    let mut v: Vec<f64> = (0..n)
        .map(|j| 1.0 + ((j * 2_654_435_761) % 1000) as f64 / 1000.0)
        .collect();
    let norm = dot(&v, &v).sqrt();
    v.iter_mut().for_each(|x| *x /= norm);
    let mut w = vec![0.0; n];
    let mut lambda = 0.0;
    for _ in 0..30 {
        apply(&v, &mut w);
        lambda = dot(&v, &w);
        let nw = dot(&w, &w).sqrt();
        if nw == 0.0 {
            return 0.0;
        }
        for j in 0..n {
            v[j] = w[j] / nw;
        }
    }
    lambda
}

/// The model objective of a problem under `s` (least-squares form, IRLS
/// weights 1) and the lower and upper bounds per operator column (fixed
/// cells get both bounds at their starting value).
pub fn model_objective<O: Operator>(
    op: &O,
    pb: &Problem,
    s: &InversionSettings,
) -> Result<(ModelObjective, Vec<f64>, Vec<f64>), InversionError> {
    let n = op.n_cells();
    let c = pb.constraints;
    let mesh = pb.mesh;
    let [nx, ny, _] = mesh.shape();
    let centre = |cell: usize| mesh.centre(cell % nx, (cell / nx) % ny, cell / (nx * ny));
    // Fixed cells get both bounds at their starting value.
    let bound = |b: &[f64]| -> Vec<f64> {
        pb.active
            .iter()
            .map(|&k| if c.fixed[k] { c.starting[k] } else { b[k] })
            .collect()
    };
    let (lower, upper) = (bound(&c.lower), bound(&c.upper));
    if lower.iter().zip(&upper).all(|(l, u)| l == u) {
        return Err(InversionError::Setup(
            "every active cell is fixed; there is nothing to invert for".into(),
        ));
    }
    // Depth or sensitivity weights, normalised to 1 at their largest.
    let mut wdep: Vec<f64> = match s.weighting {
        Weighting::Depth { exponent_q } => {
            let dz_top = mesh.z[mesh.z.len() - 1] - mesh.z[mesh.z.len() - 2];
            pb.active
                .iter()
                .map(|&k| {
                    (pb.reference_elevation_m - centre(k)[2] + 0.5 * dz_top)
                        .max(0.5 * dz_top)
                        .powf(-exponent_q / 2.0)
                })
                .collect()
        }
        Weighting::Sensitivity => op
            .column_norms_sq()
            .into_iter()
            .map(|v| v.sqrt().sqrt())
            .collect(),
        Weighting::None => vec![1.0; n],
    };
    let wmax = wdep.iter().copied().fold(0.0, f64::max).max(1e-300);
    wdep.iter_mut().for_each(|w| *w /= wmax);
    // Cell index → active index.
    let mut pos = vec![u32::MAX; mesh.n_cells()];
    for (a, &k) in pb.active.iter().enumerate() {
        pos[k] = a as u32;
    }
    let shape = mesh.shape();
    let mut faces = Vec::new();
    for (axis, alpha, sw, gr) in [
        (0u8, s.alpha_x, &c.smooth_x, &c.ref_grad_x),
        (1, s.alpha_y, &c.smooth_y, &c.ref_grad_y),
        (2, s.alpha_z, &c.smooth_z, &c.ref_grad_z),
    ] {
        if alpha == 0.0 {
            continue;
        }
        let [fx, fy, fz] = match axis {
            0 => [shape[0] - 1, shape[1], shape[2]],
            1 => [shape[0], shape[1] - 1, shape[2]],
            _ => [shape[0], shape[1], shape[2] - 1],
        };
        for k in 0..fz {
            for j in 0..fy {
                for i in 0..fx {
                    let ca = i + nx * (j + ny * k);
                    let cb = match axis {
                        0 => ca + 1,
                        1 => ca + nx,
                        _ => ca + nx * ny,
                    };
                    let (a, b) = (pos[ca], pos[cb]);
                    if a == u32::MAX || b == u32::MAX {
                        continue;
                    }
                    let fi = i + fx * (j + fy * k);
                    let h = centre(cb)[axis as usize] - centre(ca)[axis as usize];
                    let wm = 0.5 * (wdep[a as usize] + wdep[b as usize]);
                    faces.push(Face {
                        a,
                        b,
                        axis,
                        w2: alpha * sw[fi] * wm * wm,
                        inv_h: 1.0 / h,
                        g_ref: gr[fi],
                    });
                }
            }
        }
    }
    let ws2: Vec<f64> = pb
        .active
        .iter()
        .enumerate()
        .map(|(a, &k)| s.alpha_s * c.reference_weight[k] * wdep[a] * wdep[a])
        .collect();
    let obj = ModelObjective::new(
        ws2,
        pb.active.iter().map(|&k| c.reference[k]).collect(),
        faces,
    );
    Ok((obj, lower, upper))
}

/// Runs an inversion.
pub fn invert<O: Operator>(
    op: &O,
    pb: &Problem,
    s: &InversionSettings,
    obs: &dyn Observer,
) -> Result<RunResult, InversionError> {
    let start = Instant::now();
    let n = op.n_cells();
    let nd = op.n_data();
    if pb.active.len() != n || pb.data.len() != nd || pb.uncertainty.len() != nd {
        return Err(InversionError::Setup(format!("sizes disagree: {n} operator columns, {} active cells, {nd} operator rows, {} data, {} uncertainties", pb.active.len(), pb.data.len(), pb.uncertainty.len())));
    }
    for (index, &v) in pb.uncertainty.iter().enumerate() {
        if !(v.is_finite() && v > 0.0) {
            return Err(InversionError::Uncertainty { index, value: v });
        }
    }
    if let Some(index) = pb.data.iter().position(|d| !d.is_finite()) {
        return Err(InversionError::Data { index });
    }
    if !(s.beta0_ratio > 0.0 && s.cooling > 1.0 && s.chi_factor > 0.0) {
        return Err(InversionError::Setup(format!("β settings must be positive with cooling above 1 (β₀ ratio {}, cooling {}, chi-factor {})", s.beta0_ratio, s.cooling, s.chi_factor)));
    }
    let (obj, lower, upper) = model_objective(op, pb, s)?;
    // diag(Gᵀ W_d² G) = Σᵢ wᵢ Gᵢⱼ²; exact for uniform uncertainties, the mean
    // weight otherwise (it only preconditions).
    let mean_wd2 = pb.uncertainty.iter().map(|u| 1.0 / (u * u)).sum::<f64>() / nd as f64;
    let data_diag: Vec<f64> = op
        .column_norms_sq()
        .into_iter()
        .map(|v| v * mean_wd2)
        .collect();
    let setup = Setup {
        op,
        data_diag,
        d: pb.data.to_vec(),
        wd2: pb.uncertainty.iter().map(|u| 1.0 / (u * u)).collect(),
        lower,
        upper,
        obj,
    };
    let target = s.chi_factor * nd as f64;
    // β₀ from the largest eigenvalues of the two terms.
    let mut tmp = vec![0.0; nd];
    let lam_d = power_iteration(n, |v, out| {
        op.apply(v, &mut tmp);
        for (t, w) in tmp.iter_mut().zip(&setup.wd2) {
            *t *= 2.0 * w;
        }
        op.apply_t(&tmp, out);
    });
    let lam_m = power_iteration(n, |v, out| {
        out.iter_mut().for_each(|o| *o = 0.0);
        setup.obj.add_hessian(v, 1.0, out);
    });
    let mut beta = s.beta0_ratio * lam_d / lam_m.max(1e-300);
    let mut m: Vec<f64> = pb
        .active
        .iter()
        .map(|&k| pb.constraints.starting[k])
        .collect();
    setup.project(&mut m);
    let mut log = Vec::new();
    let mut pred = vec![0.0; nd];
    let record = |log: &mut Vec<IterationRecord>,
                  m: &[f64],
                  pred: &[f64],
                  beta: f64,
                  cg: usize,
                  eps: Option<f64>,
                  setup: &Setup<O>| {
        let t = setup.obj.value(m);
        let phi_d = setup.phi_d(pred);
        let at_lower = m
            .iter()
            .zip(&setup.lower)
            .zip(&setup.upper)
            .filter(|((v, l), u)| **v <= **l && l != u)
            .count();
        let at_upper = m
            .iter()
            .zip(&setup.upper)
            .zip(&setup.lower)
            .filter(|((v, u), l)| **v >= **u && l != u)
            .count();
        log.push(IterationRecord {
            iteration: log.len() + 1,
            beta,
            phi_d,
            phi_m: t.total,
            phi_s: t.s,
            phi_x: t.x,
            phi_y: t.y,
            phi_z: t.z,
            chi_factor: phi_d / nd as f64,
            cg_iterations: cg,
            at_lower,
            at_upper,
            epsilon: eps,
            elapsed_s: start.elapsed().as_secs_f64(),
        });
        if let Some(r) = log.last() {
            obs.iteration(r);
        }
        phi_d
    };
    let mut stopped = String::from("maximum iterations reached before the target misfit");
    let mut hi_beta: Option<(f64, Vec<f64>)> = None; // last β with φ_d above target
    let mut lo_beta: Option<f64> = None; // last β with φ_d below target
    let mut reached = false;
    for it in 0..s.max_beta_iterations {
        let cg = setup.solve(&mut m, beta, s, obs)?;
        op.apply(&m, &mut pred);
        let phi_d = record(&mut log, &m, &pred, beta, cg, None, &setup);
        obs.progress(it + 1, s.max_beta_iterations);
        if (phi_d - target).abs() <= s.target_tolerance * target {
            reached = true;
            stopped = "target misfit reached".into();
            break;
        }
        if phi_d > target {
            hi_beta = Some((beta, m.clone()));
            beta = match &lo_beta {
                // Bracketed: bisect (geometric mean) towards the last β below target.
                Some(bl) => (beta * bl).sqrt(),
                None => beta / s.cooling,
            };
        } else {
            lo_beta = Some(beta);
            // Overshot: bisect β between the last β above target and this one,
            // restarting from the model of the β above.
            match &hi_beta {
                Some((bh, mh)) => {
                    let b_new = (beta * bh).sqrt();
                    if (bh / beta - 1.0).abs() <= 1e-3 {
                        reached = true;
                        stopped = format!("β bracket closed at chi-factor {:.3} (the inner solves are inexact; raise max_cg for a closer fit)", phi_d / nd as f64);
                        break;
                    }
                    m = mh.clone();
                    beta = b_new;
                }
                None => beta *= s.cooling,
            }
        }
        if it > 3 && log.len() >= 2 {
            let prev = log[log.len() - 2].phi_d;
            if phi_d > target
                && (prev - phi_d).abs() <= 1e-4 * prev
                && beta < 1e-12 * s.beta0_ratio * lam_d / lam_m.max(1e-300)
            {
                stopped = format!("stalled: φ_d stays at {phi_d:.4e} above the target {target:.4e}; the target misfit is below what the data and constraints allow (check the uncertainties and bounds)");
                break;
            }
        }
    }
    // Focusing by IRLS.
    let focusing = s.norms.iter().any(|p| *p < 2.0);
    if focusing && reached {
        let x_s: Vec<f64> = m
            .iter()
            .zip(&setup.obj.m_ref)
            .map(|(a, b)| (a - b).abs())
            .collect();
        let mut eps_s = percentile(&x_s, 0.98).max(1e-12);
        let grads: Vec<f64> = (0..setup.obj.n_faces())
            .map(|f| setup.obj.face_gradient(&m, f).abs())
            .collect();
        let mut eps_f = percentile(&grads, 0.98).max(1e-15);
        // ε stops at a hundredth of its start: smaller values make the
        // reweighted system too ill-conditioned for the inner solves to converge.
        let (eps_s_min, eps_f_min) = (eps_s * 1e-2, eps_f * 1e-2);
        let mut setup = setup;
        for _ in 0..s.max_irls_iterations {
            let before = setup.obj.value(&m).total;
            // Lawson weights R = (x² + ε²)^((p − 2)/2), scaled so that the
            // reweighted norm keeps the size of the previous one.
            let p_s = s.norms[0];
            let m_ref = setup.obj.m_ref.clone();
            let face_terms: Vec<(f64, f64)> = (0..setup.obj.n_faces())
                .map(|f| {
                    (
                        s.norms[1 + setup.obj.face_axis(f).min(2) as usize],
                        setup.obj.face_gradient(&m, f),
                    )
                })
                .collect();
            setup.obj.set_irls(|r_s, r_f| {
                for j in 0..n {
                    let x = m[j] - m_ref[j];
                    r_s[j] = (x * x + eps_s * eps_s).powf((p_s - 2.0) / 2.0);
                }
                for (r, (p, g)) in r_f.iter_mut().zip(&face_terms) {
                    *r = (g * g + eps_f * eps_f).powf((p - 2.0) / 2.0);
                }
            });
            let after = setup.obj.value(&m).total;
            if after > 0.0 && before > 0.0 {
                let k = before / after;
                setup.obj.set_irls(|r_s, r_f| {
                    r_s.iter_mut().for_each(|r| *r *= k);
                    r_f.iter_mut().for_each(|r| *r *= k);
                });
            }
            let old = m.clone();
            let cg = setup.solve(&mut m, beta, s, obs)?;
            op.apply(&m, &mut pred);
            let phi_d = record(&mut log, &m, &pred, beta, cg, Some(eps_s), &setup);
            // Keep the misfit at the target.
            beta *= (target / phi_d).clamp(0.5, 2.0);
            let change = m
                .iter()
                .zip(&old)
                .map(|(a, b)| (a - b).abs())
                .fold(0.0, f64::max)
                / m.iter().fold(1e-30f64, |a, v| a.max(v.abs()));
            eps_s = (eps_s / 2.0).max(eps_s_min);
            eps_f = (eps_f / 2.0).max(eps_f_min);
            if eps_s <= eps_s_min
                && change < 0.01
                && (phi_d - target).abs() <= s.target_tolerance * target
            {
                stopped = "focusing converged at the target misfit".into();
                break;
            }
            stopped = "focusing: maximum iterations".into();
        }
        // A last β search so the final model sits at the target. Each trial
        // continues from the one before (the inner solves are inexact, so
        // the model keeps converging on the way); until β is bracketed it
        // moves by target/φ_d, growing the step when two trials fall on the
        // same side (φ_d can respond slowly to β once cells sit at their
        // bounds); once bracketed it is bisected geometrically. The trial
        // closest to the target is the model returned.
        let tol = s.target_tolerance * target;
        let mut phi_d = log.last().map(|l| l.phi_d).unwrap_or(target);
        let mut best = ((phi_d - target).abs(), beta, log.len());
        let mut best_m = m.clone();
        let (mut lo, mut hi): (Option<f64>, Option<f64>) = (None, None);
        let mut step = 1.0f64;
        for _ in 0..12 {
            if (phi_d - target).abs() <= tol {
                break;
            }
            // φ_d grows with β.
            if phi_d > target {
                hi = Some(beta);
            } else {
                lo = Some(beta);
            }
            beta = match (lo, hi) {
                (Some(l), Some(h)) => (l * h).sqrt(),
                _ => {
                    let mut f = (target / phi_d).clamp(0.25, 4.0);
                    if (f > 1.0) == (step > 1.0) && step != 1.0 {
                        f = if f > 1.0 {
                            f.max(step * step).min(16.0)
                        } else {
                            f.min(step * step).max(1.0 / 16.0)
                        };
                    }
                    step = f;
                    beta * f
                }
            };
            let cg = setup.solve(&mut m, beta, s, obs)?;
            op.apply(&m, &mut pred);
            phi_d = record(&mut log, &m, &pred, beta, cg, Some(eps_s), &setup);
            if (phi_d - target).abs() < best.0 {
                best = ((phi_d - target).abs(), beta, log.len());
                best_m.copy_from_slice(&m);
            }
        }
        if best.2 != log.len() {
            // Restate the closest trial as the last row of the log.
            m = best_m;
            beta = best.1;
            op.apply(&m, &mut pred);
            record(&mut log, &m, &pred, beta, 0, Some(eps_s), &setup);
            stopped.push_str(&format!(
                "; the model is the final β trial closest to the target (row {})",
                best.2
            ));
        }
        return Ok(finish(
            op, &setup, m, pred, log, beta, target, start, stopped,
        ));
    }
    Ok(finish(
        op, &setup, m, pred, log, beta, target, start, stopped,
    ))
}

fn percentile(v: &[f64], q: f64) -> f64 {
    if v.is_empty() {
        return 0.0;
    }
    let mut s: Vec<f64> = v.to_vec();
    s.sort_by(|a, b| a.total_cmp(b));
    s[((s.len() - 1) as f64 * q) as usize]
}

#[allow(clippy::too_many_arguments)]
fn finish<O: Operator>(
    op: &O,
    setup: &Setup<O>,
    m: Vec<f64>,
    pred: Vec<f64>,
    log: Vec<IterationRecord>,
    beta: f64,
    target: f64,
    start: Instant,
    stopped: String,
) -> RunResult {
    let last = log.last().cloned();
    let phi_d = setup.phi_d(&pred);
    let nd = pred.len();
    let mut stopped = stopped;
    if (phi_d - target).abs() > 0.05 * target {
        stopped.push_str(&format!("; the final chi-factor {:.3} is more than 5 % from the target: treat this model with care (raise max_cg or check the uncertainties)", phi_d / nd as f64));
    }
    let summary = RunSummary {
        n_data: nd,
        n_cells_active: m.len(),
        target_phi_d: target,
        phi_d,
        chi_factor: phi_d / nd as f64,
        phi_m: last.as_ref().map(|l| l.phi_m).unwrap_or(0.0),
        beta,
        iterations: log.len(),
        elapsed_s: start.elapsed().as_secs_f64(),
        operator: op.kind().to_string(),
        model_min: m.iter().copied().fold(f64::INFINITY, f64::min),
        model_max: m.iter().copied().fold(f64::NEG_INFINITY, f64::max),
        cells_at_lower_bound: last.as_ref().map(|l| l.at_lower).unwrap_or(0),
        cells_at_upper_bound: last.as_ref().map(|l| l.at_upper).unwrap_or(0),
        stopped_because: stopped,
    };
    RunResult {
        model: m,
        predicted: pred,
        log,
        summary,
    }
}
