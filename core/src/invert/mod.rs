//! Constrained inversion (Li & Oldenburg 1996, 1998): minimise
//! φ = φ_d + β φ_m subject to lower ≤ m ≤ upper, cooling β until the data
//! misfit reaches its target, then optionally focusing by iteratively
//! reweighted least squares (Last & Kubik 1983; Portniaguine & Zhdanov 1999;
//! Fournier & Oldenburg 2019).
//!
//! * [`objective`]: the model objective and its weights.
//! * [`solver`]: the bounded quadratic solve (projected gradient with
//!   conjugate gradients on the free cells; Kelley 1999), the β schedule, IRLS,
//!   and the run record.

pub mod appraise;
pub mod objective;
pub mod solver;

use serde::{Deserialize, Serialize};

/// Weighting of the model objective against the decay of sensitivity.
#[derive(Debug, Clone, Copy, PartialEq, Serialize, Deserialize)]
#[serde(tag = "kind", rename_all = "snake_case")]
pub enum Weighting {
    /// (z₀ + depth)^(−q/2) below the highest station (Li & Oldenburg): q = 2
    /// for gravity, 3 for magnetics.
    Depth {
        exponent_q: f64,
    },
    /// (diag GᵀG)^(1/4), normalised to 1 at its largest.
    Sensitivity,
    None,
}

/// Inversion settings, as plain data.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct InversionSettings {
    /// Target φ_d = chi_factor × number of data.
    pub chi_factor: f64,
    /// Accept φ_d within this fraction of the target.
    pub target_tolerance: f64,
    pub alpha_s: f64,
    pub alpha_x: f64,
    pub alpha_y: f64,
    pub alpha_z: f64,
    pub weighting: Weighting,
    /// β₀ = this × λ_max(data term) / λ_max(model term).
    pub beta0_ratio: f64,
    /// β is divided by this each iteration until the target is reached.
    pub cooling: f64,
    pub max_beta_iterations: usize,
    pub max_cg: usize,
    pub cg_tolerance: f64,
    /// Norms for focusing, 0 ≤ p ≤ 2: smallness, x, y, z. All 2: no focusing.
    pub norms: [f64; 4],
    pub max_irls_iterations: usize,
}

impl Default for InversionSettings {
    fn default() -> Self {
        InversionSettings {
            chi_factor: 1.0,
            target_tolerance: 0.02,
            alpha_s: 1e-4,
            alpha_x: 1.0,
            alpha_y: 1.0,
            alpha_z: 1.0,
            weighting: Weighting::Depth { exponent_q: 2.0 },
            beta0_ratio: 10.0,
            cooling: 2.0,
            max_beta_iterations: 30,
            max_cg: 40,
            cg_tolerance: 1e-3,
            norms: [2.0, 2.0, 2.0, 2.0],
            max_irls_iterations: 15,
        }
    }
}

pub use crate::progress::IterationRecord;

/// The summary written with every run.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct RunSummary {
    pub n_data: usize,
    pub n_cells_active: usize,
    pub target_phi_d: f64,
    pub phi_d: f64,
    pub chi_factor: f64,
    pub phi_m: f64,
    pub beta: f64,
    pub iterations: usize,
    pub elapsed_s: f64,
    pub operator: String,
    pub model_min: f64,
    pub model_max: f64,
    pub cells_at_lower_bound: usize,
    pub cells_at_upper_bound: usize,
    pub stopped_because: String,
}
