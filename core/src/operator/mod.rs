//! Sensitivity operators: what the inversion needs of the forward problem.
//!
//! The solver only applies G and Gᵀ and asks for the squared column norms
//! (the diagonal of GᵀG, for sensitivity weighting). [`dense::DenseOperator`]
//! stores G in f32 rows built in parallel from the tensor-mesh kernels of
//! `physics::tensor` (corner terms shared between adjacent cells).

pub mod dense;
pub mod fft;

/// A linear forward operator on the active cells of a mesh.
pub trait Operator: Sync {
    fn n_data(&self) -> usize;
    fn n_cells(&self) -> usize;
    /// out = G m.
    fn apply(&self, m: &[f64], out: &mut [f64]);
    /// out = Gᵀ r.
    fn apply_t(&self, r: &[f64], out: &mut [f64]);
    /// Σᵢ Gᵢⱼ² for every cell j.
    fn column_norms_sq(&self) -> Vec<f64>;
    /// "dense" or "fft".
    fn kind(&self) -> &'static str;
}
