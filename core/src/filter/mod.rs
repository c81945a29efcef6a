//! Regional–residual separation and wavenumber-domain filters.
//!
//! * [`trend`]: polynomial trend surfaces (order 0–3, optionally robust).
//! * [`spectral`]: filters applied by FFT with edge handling — upward
//!   continuation, vertical and horizontal derivatives, total horizontal
//!   derivative, analytic-signal amplitude, reduction to the pole, band-pass.
//! * [`regional`]: a regional by trend or by upward continuation, and the
//!   residual, each kept as a grid with its recipe.

pub mod regional;
pub mod spectral;
pub mod trend;
