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

#[derive(Debug, Clone)]
pub struct ModelObjective {
    /// w_s² per active cell without IRLS.
    pub ws2: Vec<f64>,
    pub m_ref: Vec<f64>,
    pub faces: Vec<Face>,
    /// IRLS weights (1 for L2).
    pub r_s: Vec<f64>,
    pub r_f: Vec<f64>,
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

impl ModelObjective {
    pub fn value(&self, m: &[f64]) -> Terms {
        let mut t = Terms::default();
        for j in 0..m.len() {
            t.s += self.ws2[j] * self.r_s[j] * (m[j] - self.m_ref[j]).powi(2);
        }
        for (f, r) in self.faces.iter().zip(&self.r_f) {
            let d = (m[f.b as usize] - m[f.a as usize]) * f.inv_h - f.g_ref;
            let v = f.w2 * r * d * d;
            match f.axis {
                0 => t.x += v,
                1 => t.y += v,
                _ => t.z += v,
            }
        }
        t.total = t.s + t.x + t.y + t.z;
        t
    }

    /// ∇φ_m at m, added to `out` times `scale`.
    pub fn add_gradient(&self, m: &[f64], scale: f64, out: &mut [f64]) {
        for j in 0..m.len() {
            out[j] += scale * 2.0 * self.ws2[j] * self.r_s[j] * (m[j] - self.m_ref[j]);
        }
        for (f, r) in self.faces.iter().zip(&self.r_f) {
            let d = (m[f.b as usize] - m[f.a as usize]) * f.inv_h - f.g_ref;
            let c = scale * 2.0 * f.w2 * r * d * f.inv_h;
            out[f.b as usize] += c;
            out[f.a as usize] -= c;
        }
    }

    /// The diagonal of the Hessian of φ_m, added to `out` times `scale`.
    pub fn add_hessian_diagonal(&self, scale: f64, out: &mut [f64]) {
        for j in 0..out.len() {
            out[j] += scale * 2.0 * self.ws2[j] * self.r_s[j];
        }
        for (f, r) in self.faces.iter().zip(&self.r_f) {
            let c = scale * 2.0 * f.w2 * r * f.inv_h * f.inv_h;
            out[f.b as usize] += c;
            out[f.a as usize] += c;
        }
    }

    /// Hessian of φ_m times v (the objective is quadratic), added to `out`
    /// times `scale`.
    pub fn add_hessian(&self, v: &[f64], scale: f64, out: &mut [f64]) {
        for j in 0..v.len() {
            out[j] += scale * 2.0 * self.ws2[j] * self.r_s[j] * v[j];
        }
        for (f, r) in self.faces.iter().zip(&self.r_f) {
            let c =
                scale * 2.0 * f.w2 * r * (v[f.b as usize] - v[f.a as usize]) * f.inv_h * f.inv_h;
            out[f.b as usize] += c;
            out[f.a as usize] -= c;
        }
    }
}
