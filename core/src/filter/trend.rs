//! Polynomial trend surfaces of order 0 to 3 by least squares, optionally
//! robust (iteratively reweighted with Tukey's biweight, so that an anomaly
//! does not drag the regional), over a whole grid or inside a polygon.

use crate::grid::blank::inside_polygon;
use crate::grid::Grid2;
use serde::{Deserialize, Serialize};
use thiserror::Error;

#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct TrendSettings {
    /// Polynomial order, 0 to 3.
    pub order: usize,
    /// Reweight to ignore outliers (the anomalies).
    pub robust: bool,
    /// Fit only nodes inside this polygon (map coordinates), if given.
    pub polygon: Option<Vec<(f64, f64)>>,
}

#[derive(Debug, Error, PartialEq)]
pub enum TrendError {
    #[error("trend order must be 0 to 3, got {0}")]
    Order(usize),
    #[error("an order-{order} trend has {terms} coefficients but only {nodes} nodes with data are available")]
    TooFew {
        order: usize,
        terms: usize,
        nodes: usize,
    },
    #[error(
        "the nodes used for the trend lie on a line, so an order-{0} surface is not determined"
    )]
    Singular(usize),
}

fn terms(order: usize, u: f64, v: f64, out: &mut Vec<f64>) {
    out.clear();
    for total in 0..=order {
        for py in 0..=total {
            out.push(u.powi((total - py) as i32) * v.powi(py as i32));
        }
    }
}

/// The fitted trend evaluated on every node of `g` (nodes without data too).
pub fn trend_surface(g: &Grid2, s: &TrendSettings) -> Result<Grid2, TrendError> {
    if s.order > 3 {
        return Err(TrendError::Order(s.order));
    }
    let n_terms = (s.order + 1) * (s.order + 2) / 2;
    // Coordinates scaled to [−1, 1] for conditioning.
    let (xmin, xmax, ymin, ymax) = g.extent();
    let (cx, cy, hx, hy) = (
        0.5 * (xmin + xmax),
        0.5 * (ymin + ymax),
        0.5 * (xmax - xmin),
        0.5 * (ymax - ymin),
    );
    let mut pts = Vec::new();
    for j in 0..g.ny {
        for i in 0..g.nx {
            let v = g.get(i, j);
            if !v.is_finite() {
                continue;
            }
            let (x, y) = (g.x_of(i), g.y_of(j));
            if let Some(p) = &s.polygon {
                if !inside_polygon(p, x, y) {
                    continue;
                }
            }
            pts.push(((x - cx) / hx, (y - cy) / hy, v));
        }
    }
    if pts.len() < n_terms {
        return Err(TrendError::TooFew {
            order: s.order,
            terms: n_terms,
            nodes: pts.len(),
        });
    }
    let mut w = vec![1.0; pts.len()];
    let mut coef = nalgebra::DVector::zeros(n_terms);
    let mut b = Vec::with_capacity(n_terms);
    for _round in 0..(if s.robust { 12 } else { 1 }) {
        let mut ata = nalgebra::DMatrix::<f64>::zeros(n_terms, n_terms);
        let mut atb = nalgebra::DVector::<f64>::zeros(n_terms);
        for (k, &(u, v, val)) in pts.iter().enumerate() {
            terms(s.order, u, v, &mut b);
            for p in 0..n_terms {
                atb[p] += w[k] * b[p] * val;
                for q in 0..n_terms {
                    ata[(p, q)] += w[k] * b[p] * b[q];
                }
            }
        }
        let sv = ata.clone().svd(false, false).singular_values;
        if sv.min() <= 1e-12 * sv.max() {
            return Err(TrendError::Singular(s.order));
        }
        coef = ata.lu().solve(&atb).ok_or(TrendError::Singular(s.order))?;
        if !s.robust {
            break;
        }
        // Tukey biweight on residuals scaled by 4.685 × 1.4826 × MAD.
        let mut res: Vec<f64> = pts
            .iter()
            .map(|&(u, v, val)| {
                terms(s.order, u, v, &mut b);
                val - b.iter().zip(coef.iter()).map(|(a, c)| a * c).sum::<f64>()
            })
            .collect();
        let mut abs: Vec<f64> = res.iter().map(|r| r.abs()).collect();
        let mad = crate::survey::lines::median(&mut abs).unwrap_or(0.0);
        if mad <= 0.0 {
            break;
        }
        let c = 4.685 * 1.4826 * mad;
        for (wk, r) in w.iter_mut().zip(res.iter_mut()) {
            let t = *r / c;
            *wk = if t.abs() < 1.0 {
                (1.0 - t * t).powi(2)
            } else {
                0.0
            };
        }
    }
    let mut out = g.clone();
    for j in 0..g.ny {
        for i in 0..g.nx {
            terms(
                s.order,
                (g.x_of(i) - cx) / hx,
                (g.y_of(j) - cy) / hy,
                &mut b,
            );
            out.values[i + g.nx * j] = b.iter().zip(coef.iter()).map(|(a, c)| a * c).sum();
        }
    }
    out.note = format!(
        "order-{} {}trend surface of {}",
        s.order,
        if s.robust { "robust " } else { "" },
        g.note
    );
    Ok(out)
}

#[cfg(test)]
mod tests {
    use super::*;

    fn grid(f: impl Fn(f64, f64) -> f64) -> Grid2 {
        let mut g = Grid2::new_empty(0.0, 0.0, 50.0, 50.0, 41, 31).unwrap();
        for j in 0..31 {
            for i in 0..41 {
                g.values[i + 41 * j] = f(g.x_of(i), g.y_of(j));
            }
        }
        g
    }

    #[test]
    fn a_cubic_is_fitted_exactly_and_a_robust_fit_ignores_an_anomaly() {
        let f = |x: f64, y: f64| {
            2.0 + 1e-3 * x - 2e-3 * y + 1e-6 * x * y - 3e-9 * x.powi(3) + 1e-9 * y.powi(3)
        };
        let g = grid(f);
        let t = trend_surface(
            &g,
            &TrendSettings {
                order: 3,
                robust: false,
                polygon: None,
            },
        )
        .unwrap();
        assert!(t
            .values
            .iter()
            .zip(&g.values)
            .all(|(a, b)| (a - b).abs() < 1e-9));
        // A plane plus a strong local anomaly: the robust plane stays the plane.
        let plane = |x: f64, y: f64| 10.0 + 0.01 * x + 0.005 * y;
        let g = grid(|x, y| {
            plane(x, y) + 25.0 * (-((x - 1000.0).powi(2) + (y - 700.0).powi(2)) / 2.0e4).exp()
        });
        let r = trend_surface(
            &g,
            &TrendSettings {
                order: 1,
                robust: true,
                polygon: None,
            },
        )
        .unwrap();
        let ls = trend_surface(
            &g,
            &TrendSettings {
                order: 1,
                robust: false,
                polygon: None,
            },
        )
        .unwrap();
        let err = |t: &Grid2| {
            (0..t.values.len())
                .map(|k| (t.values[k] - plane(t.x_of(k % 41), t.y_of(k / 41))).abs())
                .fold(0.0, f64::max)
        };
        assert!(
            err(&r) < 0.05 && err(&ls) > 0.1,
            "robust {} vs least squares {}",
            err(&r),
            err(&ls)
        );
    }

    #[test]
    fn too_few_nodes_and_bad_orders_are_refused() {
        let mut g = grid(|_, _| 1.0);
        assert_eq!(
            trend_surface(
                &g,
                &TrendSettings {
                    order: 4,
                    robust: false,
                    polygon: None
                }
            ),
            Err(TrendError::Order(4))
        );
        g.values.iter_mut().skip(5).for_each(|v| *v = f64::NAN);
        assert!(matches!(
            trend_surface(
                &g,
                &TrendSettings {
                    order: 2,
                    robust: false,
                    polygon: None
                }
            ),
            Err(TrendError::TooFew {
                terms: 6,
                nodes: 5,
                ..
            })
        ));
        assert!(matches!(
            trend_surface(
                &g,
                &TrendSettings {
                    order: 1,
                    robust: false,
                    polygon: None
                }
            ),
            Err(TrendError::Singular(1))
        ));
    }
}
