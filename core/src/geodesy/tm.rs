//! Transverse Mercator by Krüger's series (Karney 2011, §4).
//!
//! Forward: geodetic latitude φ and longitude difference λ → conformal
//! latitude (eq. 7–9 via τ′), Gauss–Schreiber coordinates ξ′, η′ (eq. 10),
//! then ξ = ξ′ + Σ α_j sin 2jξ′ cosh 2jη′, η = η′ + Σ α_j cos 2jξ′ sinh 2jη′
//! (eq. 11) and x = k₀Aη, y = k₀Aξ. Inverse: the β series (eq. 15), then τ
//! from τ′ by Newton's method (eq. 19–21). Coefficients α_j, β_j to n⁶ are
//! Karney's eqs. 35–36; A is eq. 14. Truncation error of the n⁶ series is a
//! few nanometres within 3 900 km of the central meridian (Karney 2011,
//! Table 3).

use super::ellipsoid::Ellipsoid;

/// A transverse Mercator projection on an ellipsoid.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct TransverseMercator {
    pub ellipsoid: Ellipsoid,
    /// Central meridian, degrees east.
    pub lon0_deg: f64,
    /// Scale on the central meridian.
    pub k0: f64,
    pub false_easting_m: f64,
    pub false_northing_m: f64,
    e: f64,
    e2: f64,
    /// k₀ · A, metres.
    k0a: f64,
    alpha: [f64; 6],
    beta: [f64; 6],
}

/// Horner evaluation of Σ c_i nⁱ for i = 0.. (`c` lowest order first).
fn poly(n: f64, c: &[f64]) -> f64 {
    c.iter().rev().fold(0.0, |acc, &ci| acc * n + ci)
}

impl TransverseMercator {
    pub fn new(
        ellipsoid: Ellipsoid,
        lon0_deg: f64,
        k0: f64,
        false_easting_m: f64,
        false_northing_m: f64,
    ) -> Self {
        let n = ellipsoid.n();
        let e2 = ellipsoid.e2();
        // A = a/(1 + n) (1 + n²/4 + n⁴/64 + n⁶/256)  (eq. 14)
        let big_a =
            ellipsoid.a_m / (1.0 + n) * poly(n * n, &[1.0, 1.0 / 4.0, 1.0 / 64.0, 1.0 / 256.0]);
        // α_j (eq. 35), each a polynomial in n starting at n^j.
        let a = [
            n * poly(
                n,
                &[
                    1.0 / 2.0,
                    -2.0 / 3.0,
                    5.0 / 16.0,
                    41.0 / 180.0,
                    -127.0 / 288.0,
                    7891.0 / 37800.0,
                ],
            ),
            n.powi(2)
                * poly(
                    n,
                    &[
                        13.0 / 48.0,
                        -3.0 / 5.0,
                        557.0 / 1440.0,
                        281.0 / 630.0,
                        -1983433.0 / 1935360.0,
                    ],
                ),
            n.powi(3)
                * poly(
                    n,
                    &[
                        61.0 / 240.0,
                        -103.0 / 140.0,
                        15061.0 / 26880.0,
                        167603.0 / 181440.0,
                    ],
                ),
            n.powi(4)
                * poly(
                    n,
                    &[49561.0 / 161280.0, -179.0 / 168.0, 6601661.0 / 7257600.0],
                ),
            n.powi(5) * poly(n, &[34729.0 / 80640.0, -3418889.0 / 1995840.0]),
            n.powi(6) * (212378941.0 / 319334400.0),
        ];
        // β_j (eq. 36).
        let b = [
            n * poly(
                n,
                &[
                    1.0 / 2.0,
                    -2.0 / 3.0,
                    37.0 / 96.0,
                    -1.0 / 360.0,
                    -81.0 / 512.0,
                    96199.0 / 604800.0,
                ],
            ),
            n.powi(2)
                * poly(
                    n,
                    &[
                        1.0 / 48.0,
                        1.0 / 15.0,
                        -437.0 / 1440.0,
                        46.0 / 105.0,
                        -1118711.0 / 3870720.0,
                    ],
                ),
            n.powi(3)
                * poly(
                    n,
                    &[
                        17.0 / 480.0,
                        -37.0 / 840.0,
                        -209.0 / 4480.0,
                        5569.0 / 90720.0,
                    ],
                ),
            n.powi(4)
                * poly(
                    n,
                    &[4397.0 / 161280.0, -11.0 / 504.0, -830251.0 / 7257600.0],
                ),
            n.powi(5) * poly(n, &[4583.0 / 161280.0, -108847.0 / 3991680.0]),
            n.powi(6) * (20648693.0 / 638668800.0),
        ];
        TransverseMercator {
            ellipsoid,
            lon0_deg,
            k0,
            false_easting_m,
            false_northing_m,
            e: e2.sqrt(),
            e2,
            k0a: k0 * big_a,
            alpha: a,
            beta: b,
        }
    }

    /// τ′ = tan of the conformal latitude from τ = tan φ (Karney eqs. 7–9).
    fn tau_prime(&self, tau: f64) -> f64 {
        let s = (1.0 + tau * tau).sqrt();
        let sigma = (self.e * (self.e * tau / s).atanh()).sinh();
        tau * (1.0 + sigma * sigma).sqrt() - sigma * s
    }

    /// (easting, northing) in metres from latitude and longitude in degrees.
    pub fn forward(&self, lat_deg: f64, lon_deg: f64) -> (f64, f64) {
        let phi = lat_deg.to_radians();
        let mut dlon = lon_deg - self.lon0_deg;
        dlon = (dlon + 540.0).rem_euclid(360.0) - 180.0;
        let lam = dlon.to_radians();
        let tau = phi.tan();
        let taup = if phi.abs() >= std::f64::consts::FRAC_PI_2 {
            tau.signum() * f64::INFINITY
        } else {
            self.tau_prime(tau)
        };
        let (xip, etap) = if taup.is_infinite() {
            (taup.signum() * std::f64::consts::FRAC_PI_2, 0.0)
        } else {
            // ξ′ = atan2(τ′, cos λ), η′ = asinh(sin λ / √(τ′² + cos² λ))  (eq. 10)
            (
                taup.atan2(lam.cos()),
                (lam.sin() / (taup * taup + lam.cos().powi(2)).sqrt()).asinh(),
            )
        };
        let mut xi = xip;
        let mut eta = etap;
        for (j, a) in self.alpha.iter().enumerate() {
            let k = 2.0 * (j + 1) as f64;
            xi += a * (k * xip).sin() * (k * etap).cosh();
            eta += a * (k * xip).cos() * (k * etap).sinh();
        }
        (
            self.false_easting_m + self.k0a * eta,
            self.false_northing_m + self.k0a * xi,
        )
    }

    /// (latitude, longitude) in degrees from easting and northing in metres.
    pub fn inverse(&self, easting_m: f64, northing_m: f64) -> (f64, f64) {
        let xi = (northing_m - self.false_northing_m) / self.k0a;
        let eta = (easting_m - self.false_easting_m) / self.k0a;
        let mut xip = xi;
        let mut etap = eta;
        for (j, b) in self.beta.iter().enumerate() {
            let k = 2.0 * (j + 1) as f64;
            xip -= b * (k * xi).sin() * (k * eta).cosh();
            etap -= b * (k * xi).cos() * (k * eta).sinh();
        }
        let taup = xip.sin() / (etap.sinh().powi(2) + xip.cos().powi(2)).sqrt();
        let lam = etap.sinh().atan2(xip.cos());
        // Newton for τ (eqs. 19–21), starting from τ = τ′.
        let mut tau = taup;
        for _ in 0..6 {
            let tp = self.tau_prime(tau);
            let d = (1.0 - self.e2) * (1.0 + tp * tp).sqrt() * (1.0 + tau * tau).sqrt()
                / (1.0 + (1.0 - self.e2) * tau * tau);
            let step = (taup - tp) / d;
            tau += step;
            if step.abs() <= 1e-15 * tau.abs().max(1.0) {
                break;
            }
        }
        (tau.atan().to_degrees(), self.lon0_deg + lam.to_degrees())
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::geodesy::ellipsoid::{Ellipsoid, GRS80};

    #[test]
    fn snyder_worked_example_clarke_1866() {
        // Snyder (1987), USGS PP 1395, p. 269 (ellipsoidal transverse Mercator
        // example): Clarke 1866, φ = 40°30′ N, λ = 73°30′ W, λ₀ = 75° W,
        // k₀ = 0.9996 → x = 127 106.5 m, y = 4 484 124.4 m. Values from
        // memory; Snyder's own series is good to a few centimetres here.
        let clarke = Ellipsoid {
            name: "Clarke 1866",
            a_m: 6_378_206.4,
            f: 1.0 - (1.0_f64 - 0.006_768_658).sqrt(),
        };
        let tm = TransverseMercator::new(clarke, -75.0, 0.9996, 0.0, 0.0);
        let (x, y) = tm.forward(40.5, -73.5);
        assert!((x - 127_106.5).abs() < 0.1, "x = {x}");
        assert!((y - 4_484_124.4).abs() < 0.1, "y = {y}");
    }

    #[test]
    fn central_meridian_and_equator_map_to_false_origin() {
        let tm = TransverseMercator::new(GRS80, 147.0, 0.9996, 500_000.0, 10_000_000.0);
        let (x, y) = tm.forward(0.0, 147.0);
        assert!((x - 500_000.0).abs() < 1e-9 && (y - 10_000_000.0).abs() < 1e-9);
    }

    #[test]
    fn round_trip_is_sub_micrometre_across_a_zone() {
        let tm = TransverseMercator::new(GRS80, -123.0, 0.9996, 500_000.0, 0.0);
        for lat in [-70.0, -33.3, 0.0, 12.5, 49.9, 80.0] {
            for dlon in [-3.5, -1.0, 0.0, 2.2, 3.5] {
                let (x, y) = tm.forward(lat, -123.0 + dlon);
                let (la, lo) = tm.inverse(x, y);
                let (x2, y2) = tm.forward(la, lo);
                assert!(
                    (x - x2).abs() < 1e-6 && (y - y2).abs() < 1e-6,
                    "{lat} {dlon}"
                );
                assert!((la - lat).abs() < 1e-10 && (lo - (-123.0 + dlon)).abs() < 1e-10);
            }
        }
    }
}
