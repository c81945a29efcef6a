//! Biharmonic spline interpolation (Sandwell 1987): the surface
//! u(x) = Σⱼ wⱼ g(|x − xⱼ|) with the 2-D Green's function g(r) = r²(ln r − 1)
//! of the biharmonic operator, weights from the dense system that makes u pass
//! through every datum. A planar trend is removed first and restored. For up to
//! a few thousand points; an independent check on minimum curvature.

use super::mincurv::{fit_plane, GriddingError};
use super::Grid2;
use crate::progress::Observer;
use rayon::prelude::*;

/// Largest number of data accepted (the system is dense: n² memory, n³ work).
pub const MAX_POINTS: usize = 5000;

fn green(r: f64) -> f64 {
    if r <= 0.0 {
        0.0
    } else {
        r * r * (r.ln() - 1.0)
    }
}

/// Interpolates (x, y, v) onto the nodes of `template`.
pub fn biharmonic(
    x: &[f64],
    y: &[f64],
    v: &[f64],
    template: &Grid2,
    obs: &dyn Observer,
) -> Result<Grid2, GriddingError> {
    let keep: Vec<usize> = (0..x.len())
        .filter(|&k| x[k].is_finite() && y[k].is_finite() && v[k].is_finite())
        .collect();
    if keep.len() < 3 {
        return Err(GriddingError::TooFew(keep.len()));
    }
    if keep.len() > MAX_POINTS {
        return Err(GriddingError::TooManyForSpline {
            n: keep.len(),
            max: MAX_POINTS,
        });
    }
    let origin = (template.x0, template.y0);
    let (xs, ys, vs): (Vec<f64>, Vec<f64>, Vec<f64>) = (
        keep.iter().map(|&k| x[k]).collect(),
        keep.iter().map(|&k| y[k]).collect(),
        keep.iter().map(|&k| v[k]).collect(),
    );
    let plane = fit_plane(&xs, &ys, &vs, origin)?;
    let n = xs.len();
    // Lengths scaled by the data extent keep ln r well conditioned.
    let scale = {
        let (a, b) = xs
            .iter()
            .fold((f64::INFINITY, f64::NEG_INFINITY), |(a, b), &v| {
                (a.min(v), b.max(v))
            });
        let (c, d) = ys
            .iter()
            .fold((f64::INFINITY, f64::NEG_INFINITY), |(a, b), &v| {
                (a.min(v), b.max(v))
            });
        (b - a).max(d - c).max(1e-9)
    };
    let a = nalgebra::DMatrix::from_fn(n, n, |i, j| {
        green((xs[i] - xs[j]).hypot(ys[i] - ys[j]) / scale)
    });
    let rhs = nalgebra::DVector::from_iterator(
        n,
        (0..n).map(|k| {
            vs[k] - plane[0] - plane[1] * (xs[k] - origin.0) - plane[2] * (ys[k] - origin.1)
        }),
    );
    if obs.cancelled() {
        return Err(GriddingError::Cancelled);
    }
    let w = a.lu().solve(&rhs).ok_or(GriddingError::Collinear)?;
    let mut g = template.clone();
    let nx = g.nx;
    let (x0, y0, dx, dy) = (g.x0, g.y0, g.dx, g.dy);
    g.values
        .par_chunks_mut(nx)
        .enumerate()
        .for_each(|(j, row)| {
            let yy = y0 + dy * j as f64;
            for (i, out) in row.iter_mut().enumerate() {
                let xx = x0 + dx * i as f64;
                let mut s = plane[0] + plane[1] * (xx - origin.0) + plane[2] * (yy - origin.1);
                for k in 0..n {
                    s += w[k] * green((xx - xs[k]).hypot(yy - ys[k]) / scale);
                }
                *out = s;
            }
        });
    Ok(g)
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::progress::Silent;

    #[test]
    fn passes_through_the_data_and_reproduces_a_plane() {
        let x = [0.0, 100.0, 40.0, 70.0, 10.0, 90.0, 55.0];
        let y = [0.0, 10.0, 80.0, 30.0, 60.0, 95.0, 50.0];
        let v: Vec<f64> = x
            .iter()
            .zip(&y)
            .map(|(a, b)| 3.0 + 0.1 * a - 0.05 * b)
            .collect();
        let t = Grid2::new_empty(0.0, 0.0, 10.0, 10.0, 11, 11).unwrap();
        let g = biharmonic(&x, &y, &v, &t, &Silent).unwrap();
        for j in 0..11 {
            for i in 0..11 {
                assert!((g.get(i, j) - (3.0 + 0.1 * g.x_of(i) - 0.05 * g.y_of(j))).abs() < 1e-9);
            }
        }
        let w: Vec<f64> = x
            .iter()
            .zip(&y)
            .map(|(a, b)| (a / 30.0).sin() + (b / 20.0).cos())
            .collect();
        let g = biharmonic(&x, &y, &w, &t, &Silent).unwrap();
        assert!((g.get(0, 0) - w[0]).abs() < 1e-9 && (g.get(10, 1) - w[1]).abs() < 1e-9);
        assert!(matches!(
            biharmonic(
                &[0.0, 1.0, 2.0],
                &[0.0, 1.0, 2.0],
                &[1.0, 2.0, 3.0],
                &t,
                &Silent
            ),
            Err(GriddingError::Collinear)
        ));
    }
}
