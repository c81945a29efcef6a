//! Regional and residual grids, each with the recipe that made it.

use super::spectral::{apply, Filter, FilterError};
use super::trend::{trend_surface, TrendError, TrendSettings};
use crate::grid::Grid2;
use crate::progress::Observer;
use serde::{Deserialize, Serialize};
use thiserror::Error;

/// How the regional is made.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
#[serde(tag = "method", rename_all = "snake_case")]
pub enum RegionalMethod {
    Trend(TrendSettings),
    UpwardContinuation {
        height_m: f64,
    },
    /// A known plane (e.g. from a regional compilation): `value` at
    /// `origin_m` plus gradients east and north per kilometre, in the data's
    /// units.
    Plane {
        origin_m: [f64; 2],
        value: f64,
        gradient_per_km: [f64; 2],
    },
}

#[derive(Debug, Error, PartialEq)]
pub enum RegionalError {
    #[error(transparent)]
    Trend(#[from] TrendError),
    #[error(transparent)]
    Filter(#[from] FilterError),
}

/// Regional and residual (= data − regional) of `g`; nodata stays nodata.
pub fn separate(
    g: &Grid2,
    method: &RegionalMethod,
    obs: &dyn Observer,
) -> Result<(Grid2, Grid2), RegionalError> {
    let mut regional = match method {
        RegionalMethod::Trend(s) => trend_surface(g, s)?,
        RegionalMethod::UpwardContinuation { height_m } => apply(
            g,
            &Filter::UpwardContinuation {
                height_m: *height_m,
            },
            obs,
        )?,
        RegionalMethod::Plane {
            origin_m,
            value,
            gradient_per_km,
        } => {
            let mut r = g.clone();
            for j in 0..g.ny {
                for i in 0..g.nx {
                    r.values[i + g.nx * j] = value
                        + gradient_per_km[0] * (g.x_of(i) - origin_m[0]) / 1000.0
                        + gradient_per_km[1] * (g.y_of(j) - origin_m[1]) / 1000.0;
                }
            }
            r
        }
    };
    for (r, d) in regional.values.iter_mut().zip(&g.values) {
        if !d.is_finite() {
            *r = f64::NAN;
        }
    }
    regional.note = format!("regional by {method:?} of {}", g.note);
    let mut residual = g.clone();
    for (r, reg) in residual.values.iter_mut().zip(&regional.values) {
        *r -= reg;
    }
    residual.note = format!("residual after regional by {method:?} of {}", g.note);
    Ok((regional, residual))
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::progress::Silent;

    #[test]
    fn residual_plus_regional_is_the_data() {
        let mut g = Grid2::new_empty(0.0, 0.0, 10.0, 10.0, 30, 20).unwrap();
        for (k, v) in g.values.iter_mut().enumerate() {
            *v = (k as f64 * 0.37).sin() + 0.01 * k as f64;
        }
        g.values[7] = f64::NAN;
        for m in [
            RegionalMethod::Trend(TrendSettings {
                order: 2,
                robust: true,
                polygon: None,
            }),
            RegionalMethod::UpwardContinuation { height_m: 40.0 },
            RegionalMethod::Plane {
                origin_m: [0.0, 0.0],
                value: 1.0,
                gradient_per_km: [2.0, -1.0],
            },
        ] {
            let (reg, res) = separate(&g, &m, &Silent).unwrap();
            for k in 0..g.values.len() {
                if k == 7 {
                    assert!(reg.values[k].is_nan() && res.values[k].is_nan());
                } else {
                    assert!((reg.values[k] + res.values[k] - g.values[k]).abs() < 1e-12);
                }
            }
            assert!(res.note.contains("residual"));
            if let RegionalMethod::Plane { .. } = m {
                // 1 + 2·x/1000 − y/1000 at node (3, 4) = (30 m, 40 m).
                assert!((reg.get(3, 4) - (1.0 + 0.06 - 0.04)).abs() < 1e-12);
            }
        }
    }
}
