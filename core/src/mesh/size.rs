//! What a mesh costs before anything is built.

use serde::Serialize;

/// Cell and memory figures of a mesh with a number of data.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct SizeEstimate {
    pub cells: usize,
    pub active_cells: usize,
    pub data: usize,
    /// Bytes of a dense f32 sensitivity (data × active cells × 4).
    pub dense_bytes: u64,
    /// Bytes of the working vectors of an inversion (about 12 f64 per active cell).
    pub model_bytes: u64,
    pub available_bytes: Option<u64>,
    pub fits: bool,
    /// What to change when it does not fit.
    pub advice: Vec<String>,
}

/// Estimates the cost of a dense-sensitivity inversion; refuses (fits = false)
/// above 80 % of the available memory.
pub fn estimate(
    cells: usize,
    active_cells: usize,
    data: usize,
    available: Option<u64>,
) -> SizeEstimate {
    let dense = data as u64 * active_cells as u64 * 4;
    let model = active_cells as u64 * 12 * 8;
    let limit =
        (available.unwrap_or(crate::memory::ASSUMED_BYTES) as f64 * crate::memory::SHARE) as u64;
    let fits = dense + model <= limit;
    let mut advice = Vec::new();
    if !fits {
        let ratio = (dense + model) as f64 / limit as f64;
        advice.push(format!(
            "cells {:.1}× coarser in each horizontal direction would cut the sensitivity by {:.0}×",
            ratio.sqrt().ceil(),
            ratio.sqrt().ceil().powi(2)
        ));
        advice.push(format!(
            "fewer data: at most {} of the {data} fit at this mesh",
            (limit.saturating_sub(model) / (active_cells.max(1) as u64 * 4))
        ));
        advice.push("gridded data at constant height with uniform horizontal cells use the FFT operator, which stores no matrix".into());
    }
    SizeEstimate {
        cells,
        active_cells,
        data,
        dense_bytes: dense,
        model_bytes: model,
        available_bytes: available,
        fits,
        advice,
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn dense_sensitivity_size_and_refusal() {
        let e = estimate(1_000_000, 800_000, 2_500, Some(24 << 30));
        assert_eq!(e.dense_bytes, 2_500 * 800_000 * 4);
        assert!(e.fits && e.advice.is_empty());
        let e = estimate(2_000_000, 2_000_000, 10_000, Some(8 << 30));
        assert!(!e.fits);
        assert_eq!(e.advice.len(), 3);
        assert!(e.advice[2].contains("FFT"));
        // An actual allocation of the estimated dense matrix size matches the estimate within 10 %.
        let small = estimate(10_000, 10_000, 100, Some(1 << 30));
        let v: Vec<f32> = vec![0.0; 100 * 10_000];
        let actual = (v.capacity() * std::mem::size_of::<f32>()) as u64;
        assert!((actual as f64 - small.dense_bytes as f64).abs() <= 0.1 * small.dense_bytes as f64);
    }

    #[test]
    fn available_memory_is_read_on_linux() {
        if cfg!(target_os = "linux") {
            assert!(crate::memory::available_bytes().is_some_and(|b| b > 0));
        }
    }
}
