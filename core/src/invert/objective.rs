//! The model objective φ_m and its weights (Li & Oldenburg 1996, 1998):
//!
//! φ_m = Σⱼ w_sⱼ² Rⱼ (mⱼ − m_refⱼ)² + Σ_faces w_f² R_f ((m_b − m_a)/h − g_f)²
//!
//! with w_s² = α_s · (reference weight) · (depth or sensitivity weight)², w_f² =
//! α_axis · (face smoothness weight) · (mean of the two cells' depth
//! weights)², h the distance between the two cell centres, g_f the reference
//! gradient, and R the IRLS weights of focusing (1 for the least-squares
//! norms).

// Index loops over several parallel arrays read more plainly than zipped
// iterators in these numerical kernels.
#![allow(clippy::needless_range_loop)]

use rayon::prelude::*;
use std::sync::Mutex;

/// A face between two active cells (indices into the active-cell vector).
#[derive(Debug, Clone, Copy)]
pub struct Face {
    pub a: u32,
    pub b: u32,
    pub axis: u8,
    /// w_f² without IRLS.
    pub w2: f64,
    pub inv_h: f64,
    pub g_ref: f64,
}

/// The model objective of a run. Faces are kept as parallel arrays with
/// their coefficients folded once per change of the IRLS weights, so a
/// Hessian product reads 16 bytes per face (two cell indices and one
/// coefficient): at a million cells it is bound by memory traffic.
#[derive(Debug)]
pub struct ModelObjective {
    /// w_s² per active cell without IRLS.
    pub ws2: Vec<f64>,
    pub m_ref: Vec<f64>,
    fa: Vec<u32>,
    fb: Vec<u32>,
    axis: Vec<u8>,
    /// w_f² without IRLS, 1/h and the reference gradient of each face.
    w2: Vec<f64>,
    inv_h: Vec<f64>,
    g_ref: Vec<f64>,
    /// IRLS weights (1 for L2).
    r_s: Vec<f64>,
    r_f: Vec<f64>,
    /// 2 w_s² R per cell, w_f² R per face and 2 w_f² R / h² per face.
    cell_coef: Vec<f64>,
    face_wr: Vec<f64>,
    face_hess: Vec<f64>,
    /// Faces of each cell: `incident[incident_start[j]..incident_start[j + 1]]`
    /// holds face index × 2, plus 1 where the cell is the face's `b` side.
    incident_start: Vec<u32>,
    incident: Vec<u32>,
    /// One value per face, reused by every product.
    face_values: Mutex<Vec<f64>>,
}

impl Clone for ModelObjective {
    fn clone(&self) -> Self {
        ModelObjective {
            ws2: self.ws2.clone(),
            m_ref: self.m_ref.clone(),
            fa: self.fa.clone(),
            fb: self.fb.clone(),
            axis: self.axis.clone(),
            w2: self.w2.clone(),
            inv_h: self.inv_h.clone(),
            g_ref: self.g_ref.clone(),
            r_s: self.r_s.clone(),
            r_f: self.r_f.clone(),
            cell_coef: self.cell_coef.clone(),
            face_wr: self.face_wr.clone(),
            face_hess: self.face_hess.clone(),
            incident_start: self.incident_start.clone(),
            incident: self.incident.clone(),
            face_values: Mutex::new(Vec::new()),
        }
    }
}

/// φ_m and its terms (smallness, x, y, z).
#[derive(Debug, Clone, Copy, Default, PartialEq)]
pub struct Terms {
    pub total: f64,
    pub s: f64,
    pub x: f64,
    pub y: f64,
    pub z: f64,
}

/// Cells or faces per parallel task. Fixed, so sums are added in the same
/// order on every machine and every run (results do not depend on the
/// thread count).
pub const CHUNK: usize = 8192;

/// Σ aᵢ bᵢ in parallel, in a fixed order.
pub fn dot(a: &[f64], b: &[f64]) -> f64 {
    let parts: Vec<f64> = a
        .par_chunks(CHUNK)
        .zip(b.par_chunks(CHUNK))
        .map(|(x, y)| x.iter().zip(y).map(|(p, q)| p * q).sum::<f64>())
        .collect();
    parts.iter().sum()
}

impl ModelObjective {
    /// The objective with IRLS weights 1 and the face lists of every cell.
    pub fn new(ws2: Vec<f64>, m_ref: Vec<f64>, faces: Vec<Face>) -> ModelObjective {
        let n = ws2.len();
        let mut count = vec![0u32; n + 1];
        for f in &faces {
            count[f.a as usize + 1] += 1;
            count[f.b as usize + 1] += 1;
        }
        for j in 0..n {
            count[j + 1] += count[j];
        }
        let mut fill = count.clone();
        let mut incident = vec![0u32; 2 * faces.len()];
        for (fi, f) in faces.iter().enumerate() {
            for (cell, is_b) in [(f.a, 0), (f.b, 1)] {
                let slot = &mut fill[cell as usize];
                incident[*slot as usize] = 2 * fi as u32 + is_b;
                *slot += 1;
            }
        }
        let nf = faces.len();
        let mut o = ModelObjective {
            r_s: vec![1.0; n],
            r_f: vec![1.0; nf],
            ws2,
            m_ref,
            fa: faces.iter().map(|f| f.a).collect(),
            fb: faces.iter().map(|f| f.b).collect(),
            axis: faces.iter().map(|f| f.axis).collect(),
            w2: faces.iter().map(|f| f.w2).collect(),
            inv_h: faces.iter().map(|f| f.inv_h).collect(),
            g_ref: faces.iter().map(|f| f.g_ref).collect(),
            cell_coef: Vec::new(),
            face_wr: Vec::new(),
            face_hess: Vec::new(),
            incident_start: count,
            incident,
            face_values: Mutex::new(Vec::new()),
        };
        o.refresh();
        o
    }

    fn refresh(&mut self) {
        self.cell_coef = self
            .ws2
            .iter()
            .zip(&self.r_s)
            .map(|(w, r)| 2.0 * w * r)
            .collect();
        self.face_wr = self.w2.iter().zip(&self.r_f).map(|(w, r)| w * r).collect();
        self.face_hess = self
            .face_wr
            .iter()
            .zip(&self.inv_h)
            .map(|(w, h)| 2.0 * w * h * h)
            .collect();
    }

    pub fn n_faces(&self) -> usize {
        self.fa.len()
    }

    /// The gradient across face `f` of the model m, (m_b − m_a)/h.
    pub fn face_gradient(&self, m: &[f64], f: usize) -> f64 {
        (m[self.fb[f] as usize] - m[self.fa[f] as usize]) * self.inv_h[f]
    }

    /// The axis (0 x, 1 y, 2 z) of face `f`.
    pub fn face_axis(&self, f: usize) -> u8 {
        self.axis[f]
    }

    /// Sets the IRLS weights: `set(r_s, r_f)` writes the cell and face
    /// weights, then the cached coefficients are recomputed.
    pub fn set_irls(&mut self, set: impl FnOnce(&mut [f64], &mut [f64])) {
        set(&mut self.r_s, &mut self.r_f);
        self.refresh();
    }

    pub fn value(&self, m: &[f64]) -> Terms {
        let s_parts: Vec<f64> = (0..m.len().div_ceil(CHUNK))
            .into_par_iter()
            .map(|c| {
                (c * CHUNK..((c + 1) * CHUNK).min(m.len()))
                    .map(|j| 0.5 * self.cell_coef[j] * (m[j] - self.m_ref[j]).powi(2))
                    .sum::<f64>()
            })
            .collect();
        let f_parts: Vec<[f64; 3]> = (0..self.n_faces().div_ceil(CHUNK))
            .into_par_iter()
            .map(|c| {
                let mut t = [0.0; 3];
                for f in c * CHUNK..((c + 1) * CHUNK).min(self.n_faces()) {
                    let d = self.face_gradient(m, f) - self.g_ref[f];
                    t[self.axis[f].min(2) as usize] += self.face_wr[f] * d * d;
                }
                t
            })
            .collect();
        let mut t = Terms {
            s: s_parts.iter().sum(),
            ..Terms::default()
        };
        for p in &f_parts {
            t.x += p[0];
            t.y += p[1];
            t.z += p[2];
        }
        t.total = t.s + t.x + t.y + t.z;
        t
    }

    /// For every cell j, out[j] += cell(j) + Σ over its faces of ±face(f)
    /// (+ on the face's b side, `sign_a` on its a side): the face values in
    /// one parallel pass over the faces, then a parallel pass over cells.
    fn gather(
        &self,
        out: &mut [f64],
        cell: impl Fn(usize) -> f64 + Sync,
        face: impl Fn(usize) -> f64 + Sync,
        sign_a: f64,
    ) {
        let mut guard = match self.face_values.lock() {
            Ok(g) => g,
            Err(e) => e.into_inner(),
        };
        let fv = &mut *guard;
        fv.resize(self.n_faces(), 0.0);
        fv.par_chunks_mut(CHUNK).enumerate().for_each(|(c, v)| {
            for (k, v) in v.iter_mut().enumerate() {
                *v = face(c * CHUNK + k);
            }
        });
        let fv = &*fv;
        out.par_chunks_mut(CHUNK).enumerate().for_each(|(c, o)| {
            for (jj, v) in o.iter_mut().enumerate() {
                let j = c * CHUNK + jj;
                let mut acc = cell(j);
                let (s, e) = (self.incident_start[j], self.incident_start[j + 1]);
                for &code in &self.incident[s as usize..e as usize] {
                    let x = fv[(code >> 1) as usize];
                    acc += if code & 1 == 1 { x } else { sign_a * x };
                }
                *v += acc;
            }
        });
    }

    /// ∇φ_m at m, added to `out` times `scale`.
    pub fn add_gradient(&self, m: &[f64], scale: f64, out: &mut [f64]) {
        self.gather(
            out,
            |j| scale * self.cell_coef[j] * (m[j] - self.m_ref[j]),
            |f| {
                let d = self.face_gradient(m, f) - self.g_ref[f];
                scale * 2.0 * self.face_wr[f] * d * self.inv_h[f]
            },
            -1.0,
        );
    }

    /// The diagonal of the Hessian of φ_m, added to `out` times `scale`.
    pub fn add_hessian_diagonal(&self, scale: f64, out: &mut [f64]) {
        self.gather(
            out,
            |j| scale * self.cell_coef[j],
            |f| scale * self.face_hess[f],
            1.0,
        );
    }

    /// Hessian of φ_m times v (the objective is quadratic), added to `out`
    /// times `scale`.
    pub fn add_hessian(&self, v: &[f64], scale: f64, out: &mut [f64]) {
        self.gather(
            out,
            |j| scale * self.cell_coef[j] * v[j],
            |f| scale * self.face_hess[f] * (v[self.fb[f] as usize] - v[self.fa[f] as usize]),
            -1.0,
        );
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    /// The gathered forms against the plain face loops they replace, on a
    /// small chain with every face kind.
    #[test]
    fn gathered_products_equal_face_loops() {
        let n = 7;
        let faces: Vec<Face> = (0..n - 1)
            .map(|j| Face {
                a: j as u32,
                b: (j + 1) as u32,
                axis: (j % 3) as u8,
                w2: 0.5 + j as f64,
                inv_h: 1.0 / (1.0 + 0.1 * j as f64),
                g_ref: 0.01 * j as f64,
            })
            .chain([Face {
                a: 0,
                b: 6,
                axis: 2,
                w2: 2.0,
                inv_h: 0.5,
                g_ref: -0.3,
            }])
            .collect();
        let mut o = ModelObjective::new(vec![0.3; n], vec![0.1; n], faces.clone());
        o.set_irls(|rs, rf| {
            rf[2] = 3.0;
            rs[4] = 0.2;
        });
        let m: Vec<f64> = (0..n).map(|j| (j as f64 * 0.7).sin()).collect();
        let (mut g, mut h, mut dg) = (vec![0.0; n], vec![0.0; n], vec![0.0; n]);
        o.add_gradient(&m, 1.5, &mut g);
        o.add_hessian(&m, 1.5, &mut h);
        o.add_hessian_diagonal(1.5, &mut dg);
        let (mut g2, mut h2, mut dg2) = (vec![0.0; n], vec![0.0; n], vec![0.0; n]);
        for j in 0..n {
            g2[j] += 1.5 * 2.0 * 0.3 * o.r_s[j] * (m[j] - 0.1);
            h2[j] += 1.5 * 2.0 * 0.3 * o.r_s[j] * m[j];
            dg2[j] += 1.5 * 2.0 * 0.3 * o.r_s[j];
        }
        let mut t = Terms::default();
        for (fi, f) in faces.iter().enumerate() {
            let (a, b) = (f.a as usize, f.b as usize);
            let d = (m[b] - m[a]) * f.inv_h - f.g_ref;
            let c = 1.5 * 2.0 * f.w2 * o.r_f[fi] * d * f.inv_h;
            g2[b] += c;
            g2[a] -= c;
            let c = 1.5 * 2.0 * f.w2 * o.r_f[fi] * (m[b] - m[a]) * f.inv_h * f.inv_h;
            h2[b] += c;
            h2[a] -= c;
            let c = 1.5 * 2.0 * f.w2 * o.r_f[fi] * f.inv_h * f.inv_h;
            dg2[b] += c;
            dg2[a] += c;
            let v = f.w2 * o.r_f[fi] * d * d;
            match f.axis {
                0 => t.x += v,
                1 => t.y += v,
                _ => t.z += v,
            }
        }
        for j in 0..n {
            assert!((g[j] - g2[j]).abs() < 1e-12);
            assert!((h[j] - h2[j]).abs() < 1e-12);
            assert!((dg[j] - dg2[j]).abs() < 1e-12);
        }
        let v = o.value(&m);
        assert!(
            (v.x - t.x).abs() < 1e-12 && (v.y - t.y).abs() < 1e-12 && (v.z - t.z).abs() < 1e-12
        );
    }
}
