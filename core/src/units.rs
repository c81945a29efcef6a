//! Physical constants and unit conversions, in one place.
//!
//! Fieldstone computes in SI internally and speaks the trade's units at the
//! boundary: gravity in mGal, magnetic field in nT, density contrast in g/cm³,
//! susceptibility in SI, magnetization in A/m, angles in degrees. Every
//! conversion between the two lives here so that no other module multiplies by
//! a bare 1e5 or 1e-9.

/// Newtonian constant of gravitation, CODATA 2018: 6.674 30 × 10⁻¹¹ m³ kg⁻¹ s⁻².
pub const G_SI: f64 = 6.674_30e-11;

/// 1 mGal = 10⁻⁵ m/s², so m/s² → mGal multiplies by 10⁵.
pub const MGAL_PER_M_S2: f64 = 1.0e5;

/// 1 g/cm³ = 1000 kg/m³.
pub const KG_M3_PER_G_CC: f64 = 1000.0;

/// μ₀ / 4π in T·m/A (exact in the pre-2019 SI; the 2019 redefinition changes it
/// by parts in 10¹⁰, far below any survey's precision).
pub const MU0_OVER_4PI: f64 = 1.0e-7;

/// 1 T = 10⁹ nT.
pub const NT_PER_T: f64 = 1.0e9;

/// μ₀ in T·m/A.
pub const MU0: f64 = 4.0 * std::f64::consts::PI * MU0_OVER_4PI;

/// The factor G·(kg/m³ per g/cm³)·(mGal per m/s²): multiplying a dimensionless
/// geometric kernel in metres by this and a density contrast in g/cm³ gives mGal.
pub const GRAVITY_KERNEL_TO_MGAL_PER_GCC: f64 = G_SI * KG_M3_PER_G_CC * MGAL_PER_M_S2;

/// μ₀/4π in nT·m/A: multiplying the dimensionless magnetic shape tensor by this
/// and a magnetization in A/m gives nT.
pub const MAG_KERNEL_TO_NT_PER_A_M: f64 = MU0_OVER_4PI * NT_PER_T;

/// Density in g/cm³ → kg/m³.
pub fn g_cc_to_kg_m3(rho_g_cc: f64) -> f64 {
    rho_g_cc * KG_M3_PER_G_CC
}

/// Acceleration in m/s² → mGal.
pub fn m_s2_to_mgal(a_m_s2: f64) -> f64 {
    a_m_s2 * MGAL_PER_M_S2
}

/// Induced magnetization (A/m) of a body of susceptibility `chi_si` (SI,
/// dimensionless) in an inducing field of flux density `field_nt` (nT):
/// M = χ H = χ B / μ₀, neglecting self-demagnetization (valid for χ ≲ 0.1;
/// Blakely 1995, §5.1).
pub fn induced_magnetization_a_m(chi_si: f64, field_nt: f64) -> f64 {
    chi_si * field_nt / NT_PER_T / MU0
}

/// Unit vector, in the project frame (x east, y north, z up), of a direction
/// given by the geomagnetic convention: inclination positive below the
/// horizontal, declination positive east of geographic north, both in degrees.
pub fn direction_from_inclination_declination(
    inclination_deg: f64,
    declination_deg: f64,
) -> [f64; 3] {
    let i = inclination_deg.to_radians();
    let d = declination_deg.to_radians();
    [i.cos() * d.sin(), i.cos() * d.cos(), -i.sin()]
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn bouguer_slab_constant_follows_from_codata_g() {
        // 2πGρh for ρ = 1 g/cm³, h = 1 m: 0.041 93 mGal (common practice constant).
        let slab = 2.0 * std::f64::consts::PI * GRAVITY_KERNEL_TO_MGAL_PER_GCC;
        assert!((slab - 0.04193).abs() < 1e-5, "{slab}");
    }

    #[test]
    fn induced_magnetization_of_unit_susceptibility() {
        // 50 000 nT = 5·10⁻⁵ T; H = B/μ₀ = 5·10⁻⁵ / (4π·10⁻⁷) ≈ 39.789 A/m.
        let m = induced_magnetization_a_m(1.0, 50_000.0);
        let want = 5.0e-5 / (4.0e-7 * std::f64::consts::PI);
        assert!((m - want).abs() < 1e-12 * want, "{m} vs {want}");
    }

    #[test]
    fn directions_follow_the_geomagnetic_convention() {
        // Vertical down at the north magnetic pole (I = +90°) is −z in a z-up frame.
        let d = direction_from_inclination_declination(90.0, 0.0);
        assert!(d[0].abs() < 1e-15 && d[1].abs() < 1e-15 && (d[2] + 1.0).abs() < 1e-15);
        // Horizontal, 90° east of north, points east.
        let e = direction_from_inclination_declination(0.0, 90.0);
        assert!((e[0] - 1.0).abs() < 1e-15 && e[1].abs() < 1e-15 && e[2].abs() < 1e-15);
    }
}
