//! The International Geomagnetic Reference Field, 14th generation (IGRF-14).
//!
//! Coefficients: the IAGA Division V-MOD table `assets/igrf14coeffs.txt`
//! (Schmidt semi-normalised Gauss coefficients in nT, 1900–2025 in five-year
//! epochs, secular variation for 2025–2030), compiled into the program so it
//! needs no files at run time. Between epochs coefficients are interpolated
//! linearly; after 2025 the secular variation is extrapolated to 2030 (the
//! model's stated validity; Alken et al. 2021 describe the same scheme for
//! IGRF-13).
//!
//! Synthesis: V = a Σₙ (a/r)ⁿ⁺¹ Σₘ (gₙᵐ cos mφ + hₙᵐ sin mφ) Pₙᵐ(cos θ) with
//! a = 6371.2 km; X = (1/r) ∂V/∂θ, Y = −(1/(r sin θ)) ∂V/∂φ, Z = ∂V/∂r
//! (Blakely 1995, §8.3). Geodetic coordinates on WGS 84 are converted to
//! geocentric and the result rotated back to the geodetic frame.

use thiserror::Error;

/// The coefficient table, shipped in `assets/`.
pub const IGRF14_TABLE: &str = include_str!("../../../assets/igrf14coeffs.txt");

/// Highest degree the synthesis supports (IGRF-14 goes to 13).
const MAX_DEGREE: usize = 13;

/// Reference radius of the expansion, km.
const A_REF_KM: f64 = 6371.2;
/// WGS 84 semi-axes, km.
const WGS84_A_KM: f64 = 6378.137;
const WGS84_B_KM: f64 = 6_356.752_314_2;

/// The main field at a point, geodetic frame (geomagnetic convention).
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct MainField {
    /// North component, nT.
    pub x_nt: f64,
    /// East component, nT.
    pub y_nt: f64,
    /// Vertical component, positive down, nT.
    pub z_nt: f64,
    pub h_nt: f64,
    pub f_nt: f64,
    /// Positive downward, degrees.
    pub inclination_deg: f64,
    /// Positive east of true north, degrees.
    pub declination_deg: f64,
}

#[derive(Debug, Error, PartialEq)]
pub enum IgrfError {
    #[error("date {0:.3} (decimal year) is outside IGRF-14, which covers 1900.0 to 2030.0")]
    OutOfRange(f64),
    #[error("latitude {0}° is outside −90° to 90°")]
    Latitude(f64),
    #[error(
        "height {0} m is outside −10 km to 600 km, where a main-field model of the surface applies"
    )]
    Height(f64),
    #[error("the coefficient table is malformed at line {line}: {message}")]
    Table { line: usize, message: String },
    #[error("'{0}' is not a date; use YYYY-MM-DD")]
    Date(String),
}

/// Parsed coefficients: `g[e][idx]`, `h[e][idx]` per epoch with idx over
/// (n, m) as n(n+1)/2 + m − 1, and the secular variation after the last epoch.
#[derive(Debug, Clone)]
pub struct IgrfModel {
    pub epochs: Vec<f64>,
    g: Vec<Vec<f64>>,
    h: Vec<Vec<f64>>,
    g_sv: Vec<f64>,
    h_sv: Vec<f64>,
    pub n_max: usize,
}

fn idx(n: usize, m: usize) -> usize {
    n * (n + 1) / 2 + m - 1
}

impl IgrfModel {
    /// The shipped IGRF-14 model.
    pub fn igrf14() -> &'static IgrfModel {
        static MODEL: std::sync::OnceLock<IgrfModel> = std::sync::OnceLock::new();
        MODEL.get_or_init(|| {
            IgrfModel::parse(IGRF14_TABLE)
                .expect("the shipped IGRF-14 table parses (checked by tests)")
        })
    }

    /// Parses a table in the IAGA coefficient format.
    pub fn parse(text: &str) -> Result<IgrfModel, IgrfError> {
        let mut epochs = Vec::new();
        let mut rows: Vec<(bool, usize, usize, Vec<f64>, f64)> = Vec::new();
        for (ln, line) in text.lines().enumerate() {
            let t = line.trim();
            if t.is_empty() || t.starts_with('#') {
                continue;
            }
            let f: Vec<&str> = t.split_whitespace().collect();
            if f[0] == "g/h" {
                epochs = f[3..f.len() - 1]
                    .iter()
                    .map(|v| v.parse::<f64>())
                    .collect::<Result<_, _>>()
                    .map_err(|_| IgrfError::Table {
                        line: ln + 1,
                        message: "bad epoch".into(),
                    })?;
                continue;
            }
            if f[0] != "g" && f[0] != "h" {
                continue;
            }
            let bad = |m: &str| IgrfError::Table {
                line: ln + 1,
                message: m.to_string(),
            };
            let n: usize = f[1].parse().map_err(|_| bad("bad degree"))?;
            let m: usize = f[2].parse().map_err(|_| bad("bad order"))?;
            if n == 0 || m > n {
                return Err(bad("degree and order out of range"));
            }
            let vals: Vec<f64> = f[3..]
                .iter()
                .map(|v| v.parse::<f64>())
                .collect::<Result<_, _>>()
                .map_err(|_| bad("bad value"))?;
            if epochs.is_empty() || vals.len() != epochs.len() + 1 {
                return Err(bad("value count does not match the epochs"));
            }
            let sv = vals[vals.len() - 1];
            rows.push((f[0] == "g", n, m, vals[..vals.len() - 1].to_vec(), sv));
        }
        let n_max = rows.iter().map(|r| r.1).max().ok_or(IgrfError::Table {
            line: 0,
            message: "no coefficients".into(),
        })?;
        let size = idx(n_max, n_max) + 1;
        let mut g = vec![vec![0.0; size]; epochs.len()];
        let mut h = vec![vec![0.0; size]; epochs.len()];
        let (mut g_sv, mut h_sv) = (vec![0.0; size], vec![0.0; size]);
        for (is_g, n, m, vals, sv) in rows {
            let k = idx(n, m);
            for (e, v) in vals.into_iter().enumerate() {
                if is_g {
                    g[e][k] = v;
                } else {
                    h[e][k] = v;
                }
            }
            if is_g {
                g_sv[k] = sv;
            } else {
                h_sv[k] = sv;
            }
        }
        Ok(IgrfModel {
            epochs,
            g,
            h,
            g_sv,
            h_sv,
            n_max,
        })
    }

    /// Last date of validity (last epoch + 5 years of secular variation).
    pub fn valid_until(&self) -> f64 {
        self.epochs.last().copied().unwrap_or(0.0) + 5.0
    }

    /// Coefficients at decimal year `t`.
    fn coefficients(&self, t: f64) -> Result<(Vec<f64>, Vec<f64>), IgrfError> {
        let first = self.epochs[0];
        let last = *self.epochs.last().unwrap_or(&first);
        if !(t >= first && t <= self.valid_until()) {
            return Err(IgrfError::OutOfRange(t));
        }
        if t >= last {
            let dt = t - last;
            let e = self.epochs.len() - 1;
            return Ok((
                self.g[e]
                    .iter()
                    .zip(&self.g_sv)
                    .map(|(a, s)| a + s * dt)
                    .collect(),
                self.h[e]
                    .iter()
                    .zip(&self.h_sv)
                    .map(|(a, s)| a + s * dt)
                    .collect(),
            ));
        }
        let e = self.epochs.partition_point(|&ep| ep <= t) - 1;
        let w = (t - self.epochs[e]) / (self.epochs[e + 1] - self.epochs[e]);
        let lerp = |a: &[f64], b: &[f64]| {
            a.iter()
                .zip(b)
                .map(|(x, y)| x + w * (y - x))
                .collect::<Vec<f64>>()
        };
        Ok((
            lerp(&self.g[e], &self.g[e + 1]),
            lerp(&self.h[e], &self.h[e + 1]),
        ))
    }

    /// The field at geodetic latitude and longitude (degrees), height above
    /// the WGS 84 ellipsoid (m) and decimal year.
    pub fn field(
        &self,
        lat_deg: f64,
        lon_deg: f64,
        height_m: f64,
        year: f64,
    ) -> Result<MainField, IgrfError> {
        if !(-90.0..=90.0).contains(&lat_deg) {
            return Err(IgrfError::Latitude(lat_deg));
        }
        if !(-10_000.0..=600_000.0).contains(&height_m) {
            return Err(IgrfError::Height(height_m));
        }
        let (g, h) = self.coefficients(year)?;
        Ok(self.synthesise(&g, &h, lat_deg, lon_deg, height_m))
    }

    /// Synthesis from given coefficients (shared by [`Self::field`] and
    /// [`FieldAtDate`]).
    fn synthesise(
        &self,
        g: &[f64],
        h: &[f64],
        lat_deg: f64,
        lon_deg: f64,
        height_m: f64,
    ) -> MainField {
        let alt = height_m / 1000.0;
        // Geodetic → geocentric (WGS 84), as in the IAGA reference program.
        let (a2, b2) = (WGS84_A_KM * WGS84_A_KM, WGS84_B_KM * WGS84_B_KM);
        let colat = (90.0 - lat_deg).to_radians();
        let (mut ct, mut st) = (colat.cos(), colat.sin());
        let one = a2 * st * st;
        let two = b2 * ct * ct;
        let three = one + two;
        let rho = three.sqrt();
        let r = (alt * (alt + 2.0 * rho) + (a2 * one + b2 * two) / three).sqrt();
        let cd = (alt + rho) / r;
        let sd = (a2 - b2) / rho * ct * st / r;
        let c_old = ct;
        ct = ct * cd - st * sd;
        st = st * cd + c_old * sd;
        // sin θ ≥ 0 for colatitudes in [0, π]; at the poles Y uses the limit.
        let st_safe = st.max(1e-10);
        let nmax = self.n_max.min(MAX_DEGREE);
        // Schmidt semi-normalised Pₙᵐ(cos θ) and dPₙᵐ/dθ, on the stack (no
        // allocation per point).
        let mut p = [[0.0f64; MAX_DEGREE + 1]; MAX_DEGREE + 1];
        let mut dp = [[0.0f64; MAX_DEGREE + 1]; MAX_DEGREE + 1];
        p[0][0] = 1.0;
        for n in 1..=nmax {
            for m in 0..=n {
                if n == m {
                    let f = if n == 1 {
                        1.0
                    } else {
                        ((2 * n - 1) as f64 / (2 * n) as f64).sqrt()
                    };
                    p[n][n] = f * st * p[n - 1][n - 1];
                    dp[n][n] = f * (ct * p[n - 1][n - 1] + st * dp[n - 1][n - 1]);
                } else {
                    let a = (2 * n - 1) as f64;
                    let den = ((n * n - m * m) as f64).sqrt();
                    let k = if n >= 2 && m + 2 <= n {
                        (((n - 1) * (n - 1) - m * m) as f64).sqrt()
                    } else {
                        0.0
                    };
                    let (p2, dp2) = if n >= 2 && m + 2 <= n {
                        (p[n - 2][m], dp[n - 2][m])
                    } else {
                        (0.0, 0.0)
                    };
                    p[n][m] = (a * ct * p[n - 1][m] - k * p2) / den;
                    dp[n][m] = (a * (ct * dp[n - 1][m] - st * p[n - 1][m]) - k * dp2) / den;
                }
            }
        }
        let phi = lon_deg.to_radians();
        // cos mφ and sin mφ by the angle-addition recurrence.
        let mut cosm = [1.0f64; MAX_DEGREE + 1];
        let mut sinm = [0.0f64; MAX_DEGREE + 1];
        let (c1, s1) = (phi.cos(), phi.sin());
        for m in 1..=nmax {
            cosm[m] = cosm[m - 1] * c1 - sinm[m - 1] * s1;
            sinm[m] = sinm[m - 1] * c1 + cosm[m - 1] * s1;
        }
        let (mut x, mut y, mut z) = (0.0, 0.0, 0.0);
        let ratio = A_REF_KM / r;
        let mut rn = ratio * ratio; // (a/r)^(n+2) for n = 0
        for n in 1..=nmax {
            rn *= ratio;
            for m in 0..=n {
                let k = idx(n, m);
                let (cm, sm) = (cosm[m], sinm[m]);
                let gh = g[k] * cm + h[k] * sm;
                x += rn * gh * dp[n][m];
                y += rn * m as f64 * (g[k] * sm - h[k] * cm) * p[n][m] / st_safe;
                z -= rn * (n + 1) as f64 * gh * p[n][m];
            }
        }
        // Back to the geodetic frame.
        let x_old = x;
        x = x * cd + z * sd;
        z = z * cd - x_old * sd;
        let hh = x.hypot(y);
        MainField {
            x_nt: x,
            y_nt: y,
            z_nt: z,
            h_nt: hh,
            f_nt: hh.hypot(z),
            inclination_deg: z.atan2(hh).to_degrees(),
            declination_deg: y.atan2(x).to_degrees(),
        }
    }

    /// Coefficients fixed at one date, for evaluating many points quickly.
    pub fn at_date(&self, year: f64) -> Result<FieldAtDate<'_>, IgrfError> {
        let (g, h) = self.coefficients(year)?;
        Ok(FieldAtDate { model: self, g, h })
    }
}

/// The model with its coefficients evaluated at one date.
#[derive(Debug, Clone)]
pub struct FieldAtDate<'a> {
    model: &'a IgrfModel,
    g: Vec<f64>,
    h: Vec<f64>,
}

impl FieldAtDate<'_> {
    pub fn field(&self, lat_deg: f64, lon_deg: f64, height_m: f64) -> Result<MainField, IgrfError> {
        if !(-90.0..=90.0).contains(&lat_deg) {
            return Err(IgrfError::Latitude(lat_deg));
        }
        if !(-10_000.0..=600_000.0).contains(&height_m) {
            return Err(IgrfError::Height(height_m));
        }
        Ok(self
            .model
            .synthesise(&self.g, &self.h, lat_deg, lon_deg, height_m))
    }
}

/// Decimal year of a civil date and time of day (UTC): year + (day of year − 1
/// + fraction of day) / days in the year.
pub fn decimal_year(year: i64, month: u32, day: u32, seconds_of_day: f64) -> f64 {
    use crate::time::days_from_civil;
    let start = days_from_civil(year, 1, 1);
    let len = days_from_civil(year + 1, 1, 1) - start;
    let doy = days_from_civil(year, month, day) - start;
    year as f64 + (doy as f64 + seconds_of_day / 86_400.0) / len as f64
}

/// Decimal year of a time in seconds since 1970-01-01 UTC.
pub fn decimal_year_of_epoch_seconds(t_s: f64) -> f64 {
    let days = (t_s / 86_400.0).floor();
    let (y, m, d) = crate::time::civil_from_days(days as i64);
    decimal_year(y, m, d, t_s - days * 86_400.0)
}

/// Parses YYYY-MM-DD to a decimal year (at 00:00 UTC).
pub fn decimal_year_of_date(text: &str) -> Result<f64, IgrfError> {
    let days = crate::time::parse_date(text, crate::time::DateOrder::YearMonthDay)
        .map_err(|_| IgrfError::Date(text.to_string()))?;
    Ok(decimal_year_of_epoch_seconds(days as f64 * 86_400.0))
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn the_shipped_table_parses_completely() {
        let m = IgrfModel::igrf14();
        assert_eq!(m.n_max, 13);
        assert_eq!(m.epochs.len(), 26);
        assert_eq!(m.epochs[0], 1900.0);
        assert_eq!(*m.epochs.last().unwrap(), 2025.0);
        assert_eq!(m.valid_until(), 2030.0);
        // g₁⁰(2025) = −29 350.0 nT with SV 12.6 nT/yr (the IGRF-14 table).
        let (g, _) = m.coefficients(2025.0).unwrap();
        assert_eq!(g[0], -29_350.0);
        let (g, _) = m.coefficients(2030.0).unwrap();
        assert!((g[0] + 29_287.0).abs() < 1e-9);
    }

    #[test]
    fn dates_outside_the_model_are_refused() {
        let m = IgrfModel::igrf14();
        assert!(matches!(
            m.field(10.0, 10.0, 0.0, 2031.0),
            Err(IgrfError::OutOfRange(_))
        ));
        assert!(matches!(
            m.field(10.0, 10.0, 0.0, 1899.9),
            Err(IgrfError::OutOfRange(_))
        ));
        assert!(m.field(95.0, 0.0, 0.0, 2026.0).is_err());
        assert!((decimal_year(2026, 7, 2, 43_200.0) - (2026.0 + 182.5 / 365.0)).abs() < 1e-12);
        assert!(decimal_year_of_date("2026-13-01").is_err());
    }
}
