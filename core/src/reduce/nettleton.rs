//! Reduction density by Nettleton's (1939) method: the density for which the
//! Bouguer anomaly is least correlated with topography.
//!
//! Every density-dependent term of the complete Bouguer anomaly is linear in
//! the density: CBA(ρ) = FAA − ρ·K with K = slab − curvature − terrain per
//! g/cm³. The correlation of CBA(ρ) with elevation is zero at
//! ρ* = cov(FAA, h) / cov(K, h), which is returned together with the
//! correlation curve over a density range for plotting.

use thiserror::Error;

#[derive(Debug, Clone, PartialEq)]
pub struct NettletonResult {
    /// Density with zero correlation, g/cm³.
    pub density_g_cc: f64,
    /// (density, correlation coefficient) pairs over the requested range.
    pub curve: Vec<(f64, f64)>,
    /// Number of stations used.
    pub n: usize,
}

#[derive(Debug, Error, PartialEq)]
pub enum NettletonError {
    #[error("Nettleton's method needs at least 3 stations with values; {0} have them")]
    TooFew(usize),
    #[error("the elevations do not vary (or do not vary with the density terms); no density can be estimated from this profile")]
    NoRelief,
}

fn cov(a: &[f64], b: &[f64]) -> f64 {
    let n = a.len() as f64;
    let (ma, mb) = (a.iter().sum::<f64>() / n, b.iter().sum::<f64>() / n);
    a.iter()
        .zip(b)
        .map(|(x, y)| (x - ma) * (y - mb))
        .sum::<f64>()
        / n
}

/// `faa`: free-air anomalies; `per_density`: K (mGal per g/cm³) at each
/// station; `elevation_m`. Stations with a non-finite value are skipped.
pub fn nettleton(
    faa: &[f64],
    per_density: &[f64],
    elevation_m: &[f64],
    range: (f64, f64),
    step: f64,
) -> Result<NettletonResult, NettletonError> {
    let keep: Vec<usize> = (0..faa.len())
        .filter(|&i| faa[i].is_finite() && per_density[i].is_finite() && elevation_m[i].is_finite())
        .collect();
    if keep.len() < 3 {
        return Err(NettletonError::TooFew(keep.len()));
    }
    let f: Vec<f64> = keep.iter().map(|&i| faa[i]).collect();
    let k: Vec<f64> = keep.iter().map(|&i| per_density[i]).collect();
    let h: Vec<f64> = keep.iter().map(|&i| elevation_m[i]).collect();
    let (cfh, ckh, chh) = (cov(&f, &h), cov(&k, &h), cov(&h, &h));
    if chh <= 0.0 || ckh.abs() < 1e-12 {
        return Err(NettletonError::NoRelief);
    }
    let (cff, ckk, cfk) = (cov(&f, &f), cov(&k, &k), cov(&f, &k));
    let mut curve = Vec::new();
    let mut rho = range.0;
    while rho <= range.1 + 1e-9 {
        // var and cov of FAA − ρK from the pairwise moments.
        let var = cff - 2.0 * rho * cfk + rho * rho * ckk;
        let c = (cfh - rho * ckh) / (var.max(1e-300) * chh).sqrt();
        curve.push((rho, c));
        rho += step;
    }
    Ok(NettletonResult {
        density_g_cc: cfh / ckh,
        curve,
        n: keep.len(),
    })
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::reduce::gravity::{bouguer_slab_mgal, curvature_correction_mgal};

    #[test]
    fn recovers_the_density_of_synthetic_topography() {
        // Hills of density 2.40 g/cm³ over a constant regional: the free-air
        // anomaly carries 2.40·K(h); Nettleton's density is 2.40. (A regional
        // that correlates with the topography would bias the estimate; the
        // method assumes it does not.)
        let n = 200;
        let x: Vec<f64> = (0..n).map(|i| i as f64 * 25.0).collect();
        let h: Vec<f64> = x
            .iter()
            .map(|x| 300.0 + 40.0 * (x / 700.0).sin() + 15.0 * (x / 230.0).cos())
            .collect();
        let k: Vec<f64> = h
            .iter()
            .map(|&h| bouguer_slab_mgal(h, 1.0) - curvature_correction_mgal(h, 1.0))
            .collect();
        let faa: Vec<f64> = k
            .iter()
            .enumerate()
            .map(|(i, k)| 2.40 * k + 12.5 + 0.3 * ((i * 7919 % 101) as f64 / 101.0 - 0.5))
            .collect();
        let r = nettleton(&faa, &k, &h, (1.8, 3.0), 0.05).unwrap();
        assert!((r.density_g_cc - 2.40).abs() < 0.01, "{}", r.density_g_cc);
        let near = r
            .curve
            .iter()
            .min_by(|a, b| a.1.abs().total_cmp(&b.1.abs()))
            .unwrap();
        assert!((near.0 - 2.40).abs() < 0.051);
        assert!(matches!(
            nettleton(&faa[..2], &k[..2], &h[..2], (2.0, 3.0), 0.1),
            Err(NettletonError::TooFew(2))
        ));
        let flat = vec![100.0; n];
        assert_eq!(
            nettleton(&faa, &k, &flat, (2.0, 3.0), 0.1),
            Err(NettletonError::NoRelief)
        );
    }
}
