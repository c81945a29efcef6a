//! Wavenumber-domain filters of grids (Blakely 1995, ch. 12).
//!
//! Edge handling, in order: nodata is filled by repeated averaging of
//! neighbours; a least-squares plane is removed; the grid is extended on
//! every side by mirror reflection under a cosine taper that reaches zero at
//! the edge of the padded array, whose size is the next product of 2, 3 and 5
//! at least 1.5 times the grid; the FFT is taken, multiplied by the filter,
//! inverted and cropped; the plane's own filtered value is added back (the
//! plane is harmonic: it continues unchanged, its vertical derivative is 0 and
//! its horizontal derivatives are its slopes); the original nodata mask is
//! restored.
//!
//! Conventions: F(k) = Σ f(x) e^{−ik·x} (the forward FFT), so ∂/∂x ↔ i kₓ.
//! The vertical derivative is taken positive downward, ∂/∂z ↔ |k| (Blakely's
//! z-down convention), so it is positive over a positive anomaly's peak.
//! Reduction to the pole uses Θ = f_z + i(fₓkₓ + f_yk_y)/|k| for the unit field
//! direction f = (cos I sin D, cos I cos D, sin I) in (east, north, down),
//! and multiplies by 1/Θ² for induced magnetization (Baranov 1957; Blakely
//! 1995 eq. 12.31); below `min_inclination_deg` the amplitude term f_z uses
//! that inclination instead (common practice stabilisation at low latitudes).

use crate::grid::Grid2;
use crate::progress::Observer;
use rayon::prelude::*;
use rustfft::num_complex::Complex64;
use rustfft::FftPlanner;
use serde::{Deserialize, Serialize};
use thiserror::Error;

/// A wavenumber-domain filter.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
#[serde(tag = "kind", rename_all = "snake_case")]
pub enum Filter {
    UpwardContinuation {
        height_m: f64,
    },
    VerticalDerivative,
    XDerivative,
    YDerivative,
    TotalHorizontalDerivative,
    AnalyticSignal,
    ReductionToPole {
        inclination_deg: f64,
        declination_deg: f64,
        min_inclination_deg: f64,
    },
    /// Butterworth band-pass between wavelengths (metres); `order` ≥ 1.
    BandPass {
        long_wavelength_m: f64,
        short_wavelength_m: f64,
        order: u32,
    },
}

#[derive(Debug, Error, PartialEq)]
pub enum FilterError {
    #[error("upward continuation height must be positive and finite, got {0} m")]
    Height(f64),
    #[error(
        "inclination must be within −90° to 90° and declination finite (got I = {inc}, D = {dec})"
    )]
    Direction { inc: f64, dec: f64 },
    #[error("band-pass wavelengths must satisfy long > short > 0 and order ≥ 1 (got {long} m, {short} m, order {order})")]
    Band { long: f64, short: f64, order: u32 },
    #[error("the grid has no data to filter")]
    Empty,
    #[error("the grid cells must be square for wavenumber filters (dx = {dx}, dy = {dy})")]
    NotSquare { dx: f64, dy: f64 },
    #[error("a grid of {n} padded nodes needs about {mb:.0} MB for the FFT, more than the {limit_mb:.0} MB allowed; use a coarser grid")]
    TooBig { n: usize, mb: f64, limit_mb: f64 },
    #[error("filtering was cancelled")]
    Cancelled,
}

impl Filter {
    fn check(&self) -> Result<(), FilterError> {
        match *self {
            Filter::UpwardContinuation { height_m }
                if !(height_m.is_finite() && height_m > 0.0) =>
            {
                Err(FilterError::Height(height_m))
            }
            Filter::ReductionToPole {
                inclination_deg: i,
                declination_deg: d,
                ..
            } if !((-90.0..=90.0).contains(&i) && d.is_finite()) => {
                Err(FilterError::Direction { inc: i, dec: d })
            }
            Filter::BandPass {
                long_wavelength_m: l,
                short_wavelength_m: s,
                order,
            } if !(l > s && s > 0.0 && order >= 1 && l.is_finite()) => Err(FilterError::Band {
                long: l,
                short: s,
                order,
            }),
            _ => Ok(()),
        }
    }

    /// Units of the output for input units `u`.
    pub fn units(&self, u: &str) -> String {
        match self {
            Filter::VerticalDerivative
            | Filter::XDerivative
            | Filter::YDerivative
            | Filter::TotalHorizontalDerivative
            | Filter::AnalyticSignal => format!("{u}/m"),
            _ => u.to_string(),
        }
    }
}

/// Memory limit for one filter's FFT buffers.
pub const MAX_FFT_BYTES: f64 = 4.0e9;

/// The smallest n′ ≥ n whose only prime factors are 2, 3 and 5 (fast FFT sizes).
pub fn fast_size(n: usize) -> usize {
    let mut m = n.max(2);
    loop {
        let mut r = m;
        for p in [2, 3, 5] {
            while r.is_multiple_of(p) {
                r /= p;
            }
        }
        if r == 1 {
            return m;
        }
        m += 1;
    }
}

/// Fills nodata by repeated averaging of the finite neighbours.
fn fill(values: &mut [f64], nx: usize, ny: usize) {
    let mut missing: Vec<usize> = (0..values.len())
        .filter(|&k| !values[k].is_finite())
        .collect();
    let mut guard = 0;
    while !missing.is_empty() && guard < nx + ny {
        guard += 1;
        let mut updates = Vec::new();
        let mut still = Vec::new();
        for &k in &missing {
            let (i, j) = (k % nx, k / nx);
            let mut s = 0.0;
            let mut c = 0;
            for (di, dj) in [(-1i64, 0i64), (1, 0), (0, -1), (0, 1)] {
                let (a, b) = (i as i64 + di, j as i64 + dj);
                if a >= 0 && b >= 0 && (a as usize) < nx && (b as usize) < ny {
                    let v = values[a as usize + nx * b as usize];
                    if v.is_finite() {
                        s += v;
                        c += 1;
                    }
                }
            }
            if c > 0 {
                updates.push((k, s / c as f64));
            } else {
                still.push(k);
            }
        }
        for (k, v) in updates {
            values[k] = v;
        }
        missing = still;
    }
}

fn fft2(data: &mut [Complex64], px: usize, py: usize, inverse: bool) {
    let mut planner = FftPlanner::new();
    let fx = if inverse {
        planner.plan_fft_inverse(px)
    } else {
        planner.plan_fft_forward(px)
    };
    let fy = if inverse {
        planner.plan_fft_inverse(py)
    } else {
        planner.plan_fft_forward(py)
    };
    data.par_chunks_mut(px).for_each(|row| fx.process(row));
    let mut t = vec![Complex64::new(0.0, 0.0); px * py];
    t.par_chunks_mut(py).enumerate().for_each(|(i, col)| {
        for (j, c) in col.iter_mut().enumerate() {
            *c = data[i + px * j];
        }
    });
    t.par_chunks_mut(py).for_each(|col| fy.process(col));
    data.par_chunks_mut(px).enumerate().for_each(|(j, row)| {
        for (i, c) in row.iter_mut().enumerate() {
            *c = t[j + py * i];
        }
    });
    if inverse {
        let s = 1.0 / (px * py) as f64;
        data.par_iter_mut().for_each(|c| *c *= s);
    }
}

/// Applies `filter` to `g`.
pub fn apply(g: &Grid2, filter: &Filter, obs: &dyn Observer) -> Result<Grid2, FilterError> {
    filter.check()?;
    if (g.dx - g.dy).abs() > 1e-9 * g.dx {
        return Err(FilterError::NotSquare { dx: g.dx, dy: g.dy });
    }
    if g.n_valid() == 0 {
        return Err(FilterError::Empty);
    }
    let (nx, ny) = (g.nx, g.ny);
    let px = fast_size(nx + nx / 2 + 8);
    let py = fast_size(ny + ny / 2 + 8);
    let bytes = (px * py) as f64 * 16.0 * 4.0;
    if bytes > MAX_FFT_BYTES {
        return Err(FilterError::TooBig {
            n: px * py,
            mb: bytes / 1e6,
            limit_mb: MAX_FFT_BYTES / 1e6,
        });
    }
    let mut vals = g.values.clone();
    fill(&mut vals, nx, ny);
    // Plane a + b·i + c·j in node units.
    let (mut sx, mut sy, mut sv, mut sxx, mut syy, mut sxy, mut sxv, mut syv) =
        (0.0, 0.0, 0.0, 0.0, 0.0, 0.0, 0.0, 0.0);
    for j in 0..ny {
        for i in 0..nx {
            let (x, y, v) = (i as f64, j as f64, vals[i + nx * j]);
            sx += x;
            sy += y;
            sv += v;
            sxx += x * x;
            syy += y * y;
            sxy += x * y;
            sxv += x * v;
            syv += y * v;
        }
    }
    let n = (nx * ny) as f64;
    let m = nalgebra::Matrix3::new(n, sx, sy, sx, sxx, sxy, sy, sxy, syy);
    let plane = m
        .lu()
        .solve(&nalgebra::Vector3::new(sv, sxv, syv))
        .unwrap_or(nalgebra::Vector3::new(sv / n, 0.0, 0.0));
    let (pa, pb, pc) = (plane[0], plane[1], plane[2]);
    // Centre the grid in the padded array; mirror and taper outside it.
    let (ox, oy) = ((px - nx) / 2, (py - ny) / 2);
    let reflect = |p: i64, n: usize| -> usize {
        let n = n as i64;
        let period = 2 * n;
        let mut q = p.rem_euclid(period);
        if q >= n {
            q = period - 1 - q;
        }
        q as usize
    };
    let taper = |p: i64, n: usize, lo_pad: usize, hi_pad: usize| -> f64 {
        let (d, w) = if p < 0 {
            (-p as f64, lo_pad as f64)
        } else if p >= n as i64 {
            ((p - n as i64 + 1) as f64, hi_pad as f64)
        } else {
            return 1.0;
        };
        0.5 * (1.0 + (std::f64::consts::PI * (d / (w + 1.0)).min(1.0)).cos())
    };
    let mut data = vec![Complex64::new(0.0, 0.0); px * py];
    data.par_chunks_mut(px).enumerate().for_each(|(jj, row)| {
        let j = jj as i64 - oy as i64;
        let (rj, wy) = (reflect(j, ny), taper(j, ny, oy, py - ny - oy));
        for (ii, c) in row.iter_mut().enumerate() {
            let i = ii as i64 - ox as i64;
            let (ri, wx) = (reflect(i, nx), taper(i, nx, ox, px - nx - ox));
            let v = vals[ri + nx * rj] - (pa + pb * ri as f64 + pc * rj as f64);
            *c = Complex64::new(v * wx * wy, 0.0);
        }
    });
    if obs.cancelled() {
        return Err(FilterError::Cancelled);
    }
    fft2(&mut data, px, py, false);
    let dk_x = 2.0 * std::f64::consts::PI / (px as f64 * g.dx);
    let dk_y = 2.0 * std::f64::consts::PI / (py as f64 * g.dy);
    let wave = |i: usize, n: usize, dk: f64| {
        if i <= n / 2 {
            i as f64 * dk
        } else {
            (i as f64 - n as f64) * dk
        }
    };
    let multiply =
        |spec: &[Complex64], h: &(dyn Fn(f64, f64) -> Complex64 + Sync)| -> Vec<Complex64> {
            let mut out = spec.to_vec();
            out.par_chunks_mut(px).enumerate().for_each(|(j, row)| {
                let ky = wave(j, py, dk_y);
                for (i, c) in row.iter_mut().enumerate() {
                    *c *= h(wave(i, px, dk_x), ky);
                }
            });
            out
        };
    let back = |mut s: Vec<Complex64>| -> Vec<f64> {
        fft2(&mut s, px, py, true);
        let mut out = vec![0.0; nx * ny];
        for j in 0..ny {
            for i in 0..nx {
                out[i + nx * j] = s[(i + ox) + px * (j + oy)].re;
            }
        }
        out
    };
    let i_unit = Complex64::new(0.0, 1.0);
    let (slope_x, slope_y) = (pb / g.dx, pc / g.dy);
    let plane_at = |i: usize, j: usize| pa + pb * i as f64 + pc * j as f64;
    let mut result: Vec<f64> = match filter {
        Filter::UpwardContinuation { height_m } => {
            let h = *height_m;
            let r = back(multiply(&data, &move |kx: f64, ky: f64| {
                Complex64::new((-(kx.hypot(ky)) * h).exp(), 0.0)
            }));
            (0..nx * ny)
                .map(|k| r[k] + plane_at(k % nx, k / nx))
                .collect()
        }
        Filter::VerticalDerivative => back(multiply(&data, &|kx: f64, ky: f64| {
            Complex64::new(kx.hypot(ky), 0.0)
        })),
        Filter::XDerivative => back(multiply(&data, &|kx: f64, _| i_unit * kx))
            .into_iter()
            .map(|v| v + slope_x)
            .collect(),
        Filter::YDerivative => back(multiply(&data, &|_, ky: f64| i_unit * ky))
            .into_iter()
            .map(|v| v + slope_y)
            .collect(),
        Filter::TotalHorizontalDerivative | Filter::AnalyticSignal => {
            let dx = back(multiply(&data, &|kx: f64, _| i_unit * kx));
            let dy = back(multiply(&data, &|_, ky: f64| i_unit * ky));
            let dz = if matches!(filter, Filter::AnalyticSignal) {
                Some(back(multiply(&data, &|kx: f64, ky: f64| {
                    Complex64::new(kx.hypot(ky), 0.0)
                })))
            } else {
                None
            };
            (0..nx * ny)
                .map(|k| {
                    let (a, b) = (dx[k] + slope_x, dy[k] + slope_y);
                    let c = dz.as_ref().map(|d| d[k]).unwrap_or(0.0);
                    (a * a + b * b + c * c).sqrt()
                })
                .collect()
        }
        Filter::ReductionToPole {
            inclination_deg,
            declination_deg,
            min_inclination_deg,
        } => {
            let (inc, dec) = (inclination_deg.to_radians(), declination_deg.to_radians());
            let (fx, fy) = (inc.cos() * dec.sin(), inc.cos() * dec.cos());
            let inc_a = if inclination_deg.abs() < *min_inclination_deg {
                min_inclination_deg.to_radians().copysign(inc)
            } else {
                inc
            };
            let fz = inc_a.sin();
            back(multiply(&data, &move |kx: f64, ky: f64| {
                let k = kx.hypot(ky);
                if k == 0.0 {
                    return Complex64::new(1.0, 0.0);
                }
                let theta = Complex64::new(fz, (fx * kx + fy * ky) / k);
                Complex64::new(1.0, 0.0) / (theta * theta)
            }))
        }
        Filter::BandPass {
            long_wavelength_m,
            short_wavelength_m,
            order,
        } => {
            let (klo, khi, n2) = (
                2.0 * std::f64::consts::PI / long_wavelength_m,
                2.0 * std::f64::consts::PI / short_wavelength_m,
                2 * *order as i32,
            );
            back(multiply(&data, &move |kx: f64, ky: f64| {
                let k = kx.hypot(ky);
                if k == 0.0 {
                    return Complex64::new(0.0, 0.0);
                }
                let hp = 1.0 / (1.0 + (klo / k).powi(n2));
                let lp = 1.0 / (1.0 + (k / khi).powi(n2));
                Complex64::new(hp * lp, 0.0)
            }))
        }
    };
    for (r, orig) in result.iter_mut().zip(&g.values) {
        if !orig.is_finite() {
            *r = f64::NAN;
        }
    }
    let mut out = g.clone();
    out.values = result;
    out.units = filter.units(&g.units);
    out.note = format!("{filter:?} of {}", g.note);
    Ok(out)
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::progress::Silent;

    #[test]
    fn sizes_are_products_of_two_three_and_five() {
        assert_eq!(fast_size(7), 8);
        assert_eq!(fast_size(1031), 1080);
        assert_eq!(fast_size(3080), 3125);
    }

    #[test]
    fn a_plane_passes_through_continuation_and_has_its_slopes() {
        let mut g = Grid2::new_empty(0.0, 0.0, 10.0, 10.0, 40, 30).unwrap();
        for j in 0..30 {
            for i in 0..40 {
                g.values[i + 40 * j] = 5.0 + 0.2 * g.x_of(i) - 0.1 * g.y_of(j);
            }
        }
        let up = apply(&g, &Filter::UpwardContinuation { height_m: 50.0 }, &Silent).unwrap();
        assert!(up
            .values
            .iter()
            .zip(&g.values)
            .all(|(a, b)| (a - b).abs() < 1e-9));
        let dx = apply(&g, &Filter::XDerivative, &Silent).unwrap();
        assert!(dx.values.iter().all(|v| (v - 0.2).abs() < 1e-9));
        let vd = apply(&g, &Filter::VerticalDerivative, &Silent).unwrap();
        assert!(vd.values.iter().all(|v| v.abs() < 1e-9));
        assert_eq!(vd.units, "/m");
    }

    #[test]
    fn bad_parameters_are_refused() {
        let g = Grid2::new_empty(0.0, 0.0, 10.0, 10.0, 4, 4).unwrap();
        assert_eq!(
            apply(&g, &Filter::UpwardContinuation { height_m: -5.0 }, &Silent).unwrap_err(),
            FilterError::Height(-5.0)
        );
        assert!(matches!(
            apply(
                &g,
                &Filter::BandPass {
                    long_wavelength_m: 100.0,
                    short_wavelength_m: 200.0,
                    order: 2
                },
                &Silent
            ),
            Err(FilterError::Band { .. })
        ));
        assert_eq!(
            apply(&g, &Filter::VerticalDerivative, &Silent).unwrap_err(),
            FilterError::Empty
        );
        let r = Grid2::new_empty(0.0, 0.0, 10.0, 20.0, 4, 4).unwrap();
        assert!(matches!(
            apply(&r, &Filter::VerticalDerivative, &Silent),
            Err(FilterError::NotSquare { .. })
        ));
    }
}
