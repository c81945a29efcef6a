//! Normal gravity on the reference ellipsoid by Somigliana's closed form.
//!
//! γ(φ) = γ_e (1 + k sin²φ) / √(1 − e² sin²φ),  k = b γ_p / (a γ_e) − 1
//! (Moritz 2000, GRS80, eqs. for normal gravity; the same form for WGS 84,
//! NIMA TR8350.2 eq. 4-1).

use serde::{Deserialize, Serialize};

/// Constants of a level ellipsoid needed for normal gravity.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct NormalGravityModel {
    pub name: &'static str,
    /// Semi-major axis, m.
    pub a_m: f64,
    /// Semi-minor axis, m.
    pub b_m: f64,
    /// First eccentricity squared.
    pub e2: f64,
    /// Normal gravity at the equator, m/s².
    pub gamma_e: f64,
    /// Normal gravity at the pole, m/s².
    pub gamma_p: f64,
}

/// GRS80 (Moritz 2000): b = 6 356 752.3141 m, e² = 0.006 694 380 022 90,
/// γ_e = 9.780 326 7715 m/s², γ_p = 9.832 186 3685 m/s².
pub const GRS80_GRAVITY: NormalGravityModel = NormalGravityModel {
    name: "GRS80",
    a_m: 6_378_137.0,
    b_m: 6_356_752.314_1,
    e2: 0.006_694_380_022_90,
    gamma_e: 9.780_326_771_5,
    gamma_p: 9.832_186_368_5,
};

/// WGS 84 (NIMA TR8350.2, 3rd ed., Table 3.4): b = 6 356 752.3142 m,
/// e² = 0.006 694 379 990 14, γ_e = 9.780 325 3359 m/s², γ_p = 9.832 184 9378 m/s².
pub const WGS84_GRAVITY: NormalGravityModel = NormalGravityModel {
    name: "WGS 84",
    a_m: 6_378_137.0,
    b_m: 6_356_752.314_2,
    e2: 0.006_694_379_990_14,
    gamma_e: 9.780_325_335_9,
    gamma_p: 9.832_184_937_8,
};

/// The ellipsoid used for normal gravity.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize, Deserialize, Default)]
#[serde(rename_all = "snake_case")]
pub enum GravityEllipsoid {
    #[default]
    Grs80,
    Wgs84,
}

impl GravityEllipsoid {
    pub fn model(&self) -> &'static NormalGravityModel {
        match self {
            GravityEllipsoid::Grs80 => &GRS80_GRAVITY,
            GravityEllipsoid::Wgs84 => &WGS84_GRAVITY,
        }
    }
}

impl NormalGravityModel {
    /// Normal gravity on the ellipsoid at geodetic latitude `lat_deg`, in mGal.
    pub fn on_ellipsoid_mgal(&self, lat_deg: f64) -> f64 {
        let s2 = lat_deg.to_radians().sin().powi(2);
        let k = self.b_m * self.gamma_p / (self.a_m * self.gamma_e) - 1.0;
        self.gamma_e * (1.0 + k * s2) / (1.0 - self.e2 * s2).sqrt() * 1.0e5
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn equator_and_pole_equal_the_defining_values() {
        // Moritz (2000): γ_e = 978 032.677 15 mGal, γ_p = 983 218.636 85 mGal.
        assert!((GRS80_GRAVITY.on_ellipsoid_mgal(0.0) - 978_032.677_15).abs() < 1e-4);
        assert!((GRS80_GRAVITY.on_ellipsoid_mgal(90.0) - 983_218.636_85).abs() < 1e-4);
        assert!((GRS80_GRAVITY.on_ellipsoid_mgal(-90.0) - 983_218.636_85).abs() < 1e-4);
        assert!((WGS84_GRAVITY.on_ellipsoid_mgal(0.0) - 978_032.533_59).abs() < 1e-4);
        assert!((WGS84_GRAVITY.on_ellipsoid_mgal(90.0) - 983_218.493_78).abs() < 1e-4);
    }

    #[test]
    fn closed_form_agrees_with_the_series_form() {
        // Moritz (2000), GRS80 series: γ = γ_e (1 + 0.005 279 0414 sin²φ
        // + 0.000 023 2718 sin⁴φ + 0.000 000 1262 sin⁶φ + 0.000 000 0007 sin⁸φ),
        // stated relative accuracy 10⁻¹⁰ (≈ 0.0001 mGal).
        for lat in [-75.0_f64, -45.0, -10.0, 5.0, 30.0, 51.5, 67.0, 89.0] {
            let s2: f64 = lat.to_radians().sin().powi(2);
            let series = 978_032.677_15
                * (1.0
                    + 0.005_279_041_4 * s2
                    + 0.000_023_271_8 * s2 * s2
                    + 0.000_000_126_2 * s2.powi(3)
                    + 0.000_000_000_7 * s2.powi(4));
            assert!(
                (GRS80_GRAVITY.on_ellipsoid_mgal(lat) - series).abs() < 2e-4,
                "{lat}: {} vs {series}",
                GRS80_GRAVITY.on_ellipsoid_mgal(lat)
            );
        }
    }
}
