//! Earth tide by Longman's (1959) formulas.
//!
//! Longman gives the vertical tidal acceleration (positive upward) of the
//! Moon (degree 2 and 3) and the Sun (degree 2) at a point on a rigid Earth,
//! from mean orbital elements of Schureman (1958) counted in Julian centuries
//! from 1899 December 31, 12:00. An elastic Earth amplifies it by the
//! gravimetric factor δ = 1 + h − 3k/2 (≈ 1.16, common practice).
//!
//! [`tide_effect_mgal`] returns the change the tide makes to a gravity
//! reading (positive when the reading increases), which is −δ × the upward
//! acceleration; the correction added to a reading is its negative.

/// Gravimetric factor, common practice default.
pub const DEFAULT_GRAVIMETRIC_FACTOR: f64 = 1.16;

/// Seconds from 1970-01-01 00:00 UTC to Longman's epoch, 1899-12-31 12:00 UTC.
const EPOCH_1899_S: f64 = -2_209_032_000.0;

/// The tidal change of a gravity reading, mGal, at time `t_s` (seconds since
/// 1970-01-01 UTC), geodetic latitude and east longitude in degrees, and
/// height above sea level in metres, with gravimetric factor `factor`.
pub fn tide_effect_mgal(t_s: f64, lat_deg: f64, lon_deg: f64, height_m: f64, factor: f64) -> f64 {
    -factor * longman_upward_gal(t_s, lat_deg, lon_deg, height_m) * 1000.0
}

/// Longman's vertical tidal acceleration, Gal (cm/s²), positive upward.
pub fn longman_upward_gal(t_s: f64, lat_deg: f64, lon_deg: f64, height_m: f64) -> f64 {
    // Constants in cgs units (Longman 1959, Table 1).
    let mu = 6.670e-8; // gravitational constant, cm³ g⁻¹ s⁻²
    let m_moon = 7.3537e25; // g
    let m_sun = 1.993e33; // g
    let e = 0.054_90; // eccentricity of the Moon's orbit
    let m = 0.074_804; // ratio of the Sun's to the Moon's mean motion
    let c = 3.844_02e10; // Moon's mean distance, cm
    let c1 = 1.495e13; // Sun's mean distance, cm
    let a = 6.378_270e8; // Earth's equatorial radius, cm
    let i = 5.145_f64.to_radians(); // inclination of the Moon's orbit to the ecliptic
    let omega = 23.452_f64.to_radians(); // obliquity of the ecliptic

    let days = (t_s - EPOCH_1899_S) / 86_400.0;
    let t = days / 36_525.0;
    let deg = |v: f64| (v.rem_euclid(360.0)).to_radians();
    // Mean elements (Schureman 1958), degrees.
    let s = deg(270.434_164 + 481_267.883_1 * t - 0.001_133 * t * t + 0.000_001_9 * t.powi(3));
    let p = deg(334.329_556 + 4_069.034_032_9 * t - 0.010_325 * t * t - 0.000_012_5 * t.powi(3));
    let h = deg(279.696_678 + 36_000.768_925 * t + 0.000_302_5 * t * t);
    let n = deg(259.183_275 - 1_934.142_008 * t + 0.002_078 * t * t + 0.000_002_2 * t.powi(3));
    let p1 = deg(281.220_833 + 1.719_175 * t + 0.000_452_78 * t * t + 0.000_003_33 * t.powi(3));
    let e1 = 0.016_751_04 - 0.000_041_8 * t - 0.000_000_126 * t * t;

    // Inclination of the Moon's orbit to the equator, and the arcs ν, α, ξ.
    let cos_i = omega.cos() * i.cos() - omega.sin() * i.sin() * n.cos();
    let big_i = cos_i.acos();
    let nu = (i.sin() * n.sin() / big_i.sin()).asin();
    let cos_alpha = n.cos() * nu.cos() + n.sin() * nu.sin() * omega.cos();
    let sin_alpha = omega.sin() * n.sin() / big_i.sin();
    let alpha = 2.0 * (sin_alpha / (1.0 + cos_alpha)).atan();
    let xi = n - alpha;
    let sigma = s - xi;
    // Moon's longitude in its orbit reckoned from the equator crossing.
    let l = sigma
        + 2.0 * e * (s - p).sin()
        + 1.25 * e * e * (2.0 * (s - p)).sin()
        + 3.75 * m * e * (s - 2.0 * h + p).sin()
        + 1.375 * m * m * (2.0 * (s - h)).sin();
    // Hour angle of the mean Sun (westward from the meridian of the place).
    let secs_of_day = (t_s.rem_euclid(86_400.0)) / 3600.0;
    let tt = (15.0 * (secs_of_day - 12.0) + lon_deg).to_radians();
    let chi = tt + h - nu;
    let chi1 = tt + h;
    let l1 = h + 2.0 * e1 * (h - p1).sin();
    // Zenith angles of the Moon and the Sun. Longman writes the latitude of
    // the place; the zenith angle is geometric, so the geocentric latitude
    // (on the WGS 84 ellipsoid, tan φ′ = (1 − e²) tan φ) is used here. With the
    // geodetic latitude the result differs by up to 0.008 mGal at mid-latitudes.
    let phi_geodetic = lat_deg.to_radians();
    let phi = ((1.0 - 0.006_694_379_990_14) * phi_geodetic.tan()).atan();
    let cos_theta = phi.sin() * big_i.sin() * l.sin()
        + phi.cos()
            * ((big_i / 2.0).cos().powi(2) * (l - chi).cos()
                + (big_i / 2.0).sin().powi(2) * (l + chi).cos());
    let cos_phi1 = phi.sin() * omega.sin() * l1.sin()
        + phi.cos()
            * ((omega / 2.0).cos().powi(2) * (l1 - chi1).cos()
                + (omega / 2.0).sin().powi(2) * (l1 + chi1).cos());
    // Distances.
    let ap = 1.0 / (c * (1.0 - e * e));
    let inv_d = 1.0 / c
        + ap * e * (s - p).cos()
        + ap * e * e * (2.0 * (s - p)).cos()
        + 1.875 * ap * m * e * (s - 2.0 * h + p).cos()
        + ap * m * m * (2.0 * (s - h)).cos();
    let ap1 = 1.0 / (c1 * (1.0 - e1 * e1));
    let inv_d1 = 1.0 / c1 + ap1 * e1 * (h - p1).cos();
    // Distance of the station from the Earth's centre, cm.
    let cc = (1.0 / (1.0 + 0.006_738 * phi_geodetic.sin().powi(2))).sqrt();
    let r = cc * a + height_m * 100.0;
    let g_moon = mu * m_moon * r * inv_d.powi(3) * (3.0 * cos_theta * cos_theta - 1.0)
        + 1.5 * mu * m_moon * r * r * inv_d.powi(4) * (5.0 * cos_theta.powi(3) - 3.0 * cos_theta);
    let g_sun = mu * m_sun * r * inv_d1.powi(3) * (3.0 * cos_phi1 * cos_phi1 - 1.0);
    g_moon + g_sun
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn amplitude_stays_within_the_physical_range() {
        // The combined tide on gravity never exceeds about 0.3 mGal peak to
        // peak (common practice); sample a month every 20 minutes.
        let t0 = 1_767_225_600.0; // 2026-01-01 UTC
        let (mut lo, mut hi) = (f64::INFINITY, f64::NEG_INFINITY);
        for k in 0..(31 * 72) {
            let g = tide_effect_mgal(
                t0 + k as f64 * 1200.0,
                45.0,
                10.0,
                300.0,
                DEFAULT_GRAVIMETRIC_FACTOR,
            );
            lo = lo.min(g);
            hi = hi.max(g);
        }
        assert!(hi - lo > 0.15 && hi - lo < 0.35, "range {lo} .. {hi}");
    }
}
