//! Gravity reductions at a station: normal gravity, height (free-air),
//! atmospheric, Bouguer slab and curvature corrections, and the anomalies.
//!
//! Every correction is the amount *added* to observed gravity, except the
//! slab, which is the attraction that is subtracted (the convention of the
//! `reduce gravity` output):
//! free-air anomaly = g − γ + free-air + atmospheric;
//! Bouguer anomaly = free-air anomaly − slab;
//! complete Bouguer anomaly = Bouguer anomaly + curvature + terrain.
//!
//! Heights: the standard (Hinze et al. 2005) reduces with ellipsoidal heights;
//! using orthometric (sea-level) heights is a choice to record.

use crate::geodesy::normal_gravity::GravityEllipsoid;
use crate::units::GRAVITY_KERNEL_TO_MGAL_PER_GCC;
use serde::{Deserialize, Serialize};
use std::f64::consts::PI;

/// Which height correction to apply.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize, Deserialize, Default)]
#[serde(rename_all = "kebab-case")]
pub enum FreeAir {
    /// (0.308 7691 − 0.000 4398 sin²φ) h − 7.2125 × 10⁻⁸ h² (Hinze et al. 2005, eq. 5).
    #[default]
    SecondOrder,
    /// 0.3086 h (common practice, first order).
    FirstOrder,
}

/// Height correction (mGal, added) for height `h_m` above the ellipsoid at
/// geodetic latitude `lat_deg`.
pub fn free_air_correction_mgal(h_m: f64, lat_deg: f64, kind: FreeAir) -> f64 {
    match kind {
        FreeAir::SecondOrder => {
            (0.308_769_1 - 0.000_439_8 * lat_deg.to_radians().sin().powi(2)) * h_m
                - 7.2125e-8 * h_m * h_m
        }
        FreeAir::FirstOrder => 0.3086 * h_m,
    }
}

/// Atmospheric correction (mGal, added): 0.874 − 9.9 × 10⁻⁵ h + 3.56 × 10⁻⁹ h²
/// (Hinze et al. 2005, eq. 3, after Wenzel 1985), h in metres.
pub fn atmospheric_correction_mgal(h_m: f64) -> f64 {
    0.874 - 9.9e-5 * h_m + 3.56e-9 * h_m * h_m
}

/// Bouguer slab attraction 2πGρh (mGal) for density `rho_g_cc` and height `h_m`.
pub fn bouguer_slab_mgal(h_m: f64, rho_g_cc: f64) -> f64 {
    2.0 * PI * GRAVITY_KERNEL_TO_MGAL_PER_GCC * rho_g_cc * h_m
}

/// Radius of the spherical cap of the Bullard B correction, 166.735 km
/// (Hayford–Bowie zone O; Hinze et al. 2005), and the mean Earth radius used
/// with it, 6371 km (LaFehr 1991).
pub const CAP_RADIUS_M: f64 = 166_735.0;
pub const EARTH_RADIUS_M: f64 = 6_371_000.0;

/// Attraction of the spherical cap (radius 166.735 km, thickness h) minus the
/// attraction of the infinite slab, mGal, by LaFehr's (1991) exact formula:
/// 2πGρ(μh − λR) with R = R₀ + h, η = h/R, μ = η²/3 − η, δ = R₀/R,
/// α = S/R₀ and λ = ⅓{(d + fδ + δ²)[(f − δ)² + k]^½ + p + m ln(n/(f − δ + [(f − δ)² + k]^½))},
/// d = 3cos²α − 2, f = cos α, k = sin²α, p = −6cos²α sin(α/2) + 4sin³(α/2),
/// m = −3 sin²α cos α, n = 2[sin(α/2) − sin²(α/2)].
pub fn cap_minus_slab_mgal(h_m: f64, rho_g_cc: f64) -> f64 {
    let r = EARTH_RADIUS_M + h_m;
    let alpha = CAP_RADIUS_M / EARTH_RADIUS_M;
    let eta = h_m / r;
    let delta = EARTH_RADIUS_M / r;
    let (ca, sa, s2) = (alpha.cos(), alpha.sin(), (alpha / 2.0).sin());
    let d = 3.0 * ca * ca - 2.0;
    let f = ca;
    let k = sa * sa;
    let p = -6.0 * ca * ca * s2 + 4.0 * s2.powi(3);
    let m = -3.0 * sa * sa * ca;
    let n = 2.0 * (s2 - s2 * s2);
    let mu = eta * eta / 3.0 - eta;
    let q = ((f - delta).powi(2) + k).sqrt();
    let lambda = ((d + f * delta + delta * delta) * q + p + m * (n / (f - delta + q)).ln()) / 3.0;
    2.0 * PI * GRAVITY_KERNEL_TO_MGAL_PER_GCC * rho_g_cc * (mu * h_m - lambda * r)
}

/// Curvature (Bullard B) correction, mGal, added: the slab is replaced by the
/// spherical cap, so the correction is slab − cap.
pub fn curvature_correction_mgal(h_m: f64, rho_g_cc: f64) -> f64 {
    -cap_minus_slab_mgal(h_m, rho_g_cc)
}

/// Which corrections to apply and with what density.
#[derive(Debug, Clone, Copy, PartialEq, Serialize, Deserialize)]
pub struct GravitySettings {
    /// Reduction density, g/cm³ (common practice default 2.67). The background
    /// every density contrast in a model is relative to.
    pub density_g_cc: f64,
    pub ellipsoid: GravityEllipsoid,
    pub free_air: FreeAir,
    pub atmospheric: bool,
    pub curvature: bool,
}

impl Default for GravitySettings {
    fn default() -> Self {
        GravitySettings {
            density_g_cc: 2.67,
            ellipsoid: GravityEllipsoid::Grs80,
            free_air: FreeAir::SecondOrder,
            atmospheric: true,
            curvature: true,
        }
    }
}

/// Every correction and anomaly at one station, mGal.
#[derive(Debug, Clone, Copy, PartialEq, Default)]
pub struct StationReduction {
    pub normal_gravity: f64,
    pub free_air_correction: f64,
    pub atmospheric_correction: f64,
    pub bouguer_slab: f64,
    pub curvature_correction: f64,
    pub terrain_correction: f64,
    pub free_air_anomaly: f64,
    pub bouguer_anomaly: f64,
    pub complete_bouguer_anomaly: f64,
}

/// Reduces one station: observed gravity `g_mgal`, latitude, height (m) and a
/// terrain correction already computed (mGal, 0 when not used).
pub fn reduce_station(
    s: &GravitySettings,
    g_mgal: f64,
    lat_deg: f64,
    h_m: f64,
    terrain_mgal: f64,
) -> StationReduction {
    let normal = s.ellipsoid.model().on_ellipsoid_mgal(lat_deg);
    let fa = free_air_correction_mgal(h_m, lat_deg, s.free_air);
    let atm = if s.atmospheric {
        atmospheric_correction_mgal(h_m)
    } else {
        0.0
    };
    let slab = bouguer_slab_mgal(h_m, s.density_g_cc);
    let curv = if s.curvature {
        curvature_correction_mgal(h_m, s.density_g_cc)
    } else {
        0.0
    };
    let faa = g_mgal - normal + fa + atm;
    let ba = faa - slab;
    StationReduction {
        normal_gravity: normal,
        free_air_correction: fa,
        atmospheric_correction: atm,
        bouguer_slab: slab,
        curvature_correction: curv,
        terrain_correction: terrain_mgal,
        free_air_anomaly: faa,
        bouguer_anomaly: ba,
        complete_bouguer_anomaly: ba + curv + terrain_mgal,
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn height_corrections_follow_the_published_formulas() {
        // First order: 0.3086 mGal/m (common practice).
        assert!((free_air_correction_mgal(100.0, 45.0, FreeAir::FirstOrder) - 30.86).abs() < 1e-12);
        // Second order at 1000 m, 45°: (0.3087691 − 0.0004398·0.5)·1000 − 0.072125
        // = 308.5492 − 0.072125 = 308.477 075 mGal (Hinze et al. 2005, eq. 5).
        assert!(
            (free_air_correction_mgal(1000.0, 45.0, FreeAir::SecondOrder) - 308.477_075).abs()
                < 1e-6
        );
        // Atmospheric at sea level 0.874 mGal, at 1000 m 0.874 − 0.099 + 0.00356.
        assert!((atmospheric_correction_mgal(0.0) - 0.874).abs() < 1e-12);
        assert!((atmospheric_correction_mgal(1000.0) - 0.778_56).abs() < 1e-9);
        // Slab: 0.041 93 mGal per m per g/cm³ (common practice), so 100 m of
        // 2.67 g/cm³ is about 11.196 mGal.
        assert!((bouguer_slab_mgal(100.0, 2.67) - 0.04193 * 267.0).abs() < 2e-3);
    }

    #[test]
    fn anomalies_combine_the_corrections_as_documented() {
        let s = GravitySettings::default();
        let r = reduce_station(&s, 979_500.0, -33.0, 250.0, 0.4);
        assert!(
            (r.free_air_anomaly
                - (979_500.0 - r.normal_gravity
                    + r.free_air_correction
                    + r.atmospheric_correction))
                .abs()
                < 1e-9
        );
        assert!((r.bouguer_anomaly - (r.free_air_anomaly - r.bouguer_slab)).abs() < 1e-9);
        assert!(
            (r.complete_bouguer_anomaly - (r.bouguer_anomaly + r.curvature_correction + 0.4)).abs()
                < 1e-9
        );
        let off = GravitySettings {
            atmospheric: false,
            curvature: false,
            ..s
        };
        let r = reduce_station(&off, 979_500.0, -33.0, 250.0, 0.0);
        assert_eq!(
            (r.atmospheric_correction, r.curvature_correction),
            (0.0, 0.0)
        );
    }
}
