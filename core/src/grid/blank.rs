//! Blanking: nodes too far from any datum, outside the data's convex hull, or
//! outside a polygon become nodata; and a suggested cell size from survey
//! geometry.

use super::Grid2;

/// Squared Euclidean distance transform of one line (Felzenszwalb &
/// Huttenlocher 2012, "Distance transforms of sampled functions").
fn edt_1d(f: &[f64], out: &mut [f64], v: &mut [usize], z: &mut [f64]) {
    let n = f.len();
    let mut k = 0usize;
    v[0] = 0;
    z[0] = f64::NEG_INFINITY;
    z[1] = f64::INFINITY;
    for q in 1..n {
        if !f[q].is_finite() {
            continue;
        }
        loop {
            let p = v[k];
            if !f[p].is_finite() {
                v[k] = q;
                z[k + 1] = f64::INFINITY;
                break;
            }
            let s = ((f[q] + (q * q) as f64) - (f[p] + (p * p) as f64))
                / (2.0 * q as f64 - 2.0 * p as f64);
            if s <= z[k] && k > 0 {
                k -= 1;
                continue;
            }
            if s <= z[k] {
                v[k] = q;
                z[k + 1] = f64::INFINITY;
                break;
            }
            k += 1;
            v[k] = q;
            z[k] = s;
            z[k + 1] = f64::INFINITY;
            break;
        }
    }
    let mut k = 0;
    for (q, o) in out.iter_mut().enumerate().take(n) {
        while z[k + 1] < q as f64 {
            k += 1;
        }
        let p = v[k];
        *o = if f[p].is_finite() {
            (q as f64 - p as f64).powi(2) + f[p]
        } else {
            f64::INFINITY
        };
    }
}

/// Distance (metres) from every node to the nearest node holding a datum.
pub fn distance_to_data(g: &Grid2, x: &[f64], y: &[f64]) -> Vec<f64> {
    let (nx, ny) = (g.nx, g.ny);
    let mut f = vec![f64::INFINITY; nx * ny];
    for k in 0..x.len() {
        let (i, j) = (
            ((x[k] - g.x0) / g.dx).round(),
            ((y[k] - g.y0) / g.dy).round(),
        );
        if i >= 0.0 && j >= 0.0 && (i as usize) < nx && (j as usize) < ny {
            f[i as usize + nx * j as usize] = 0.0;
        }
    }
    let n = nx.max(ny);
    let (mut v, mut z, mut col, mut out) = (
        vec![0usize; n],
        vec![0.0; n + 1],
        vec![0.0; n],
        vec![0.0; n],
    );
    // Columns (y), in cell units scaled to dy, then rows (x).
    let ry = (g.dy / g.dx).powi(2);
    for i in 0..nx {
        for j in 0..ny {
            col[j] = f[i + nx * j];
        }
        edt_1d(&col[..ny], &mut out[..ny], &mut v, &mut z);
        for j in 0..ny {
            f[i + nx * j] = out[j] * ry;
        }
    }
    for j in 0..ny {
        let row: Vec<f64> = f[j * nx..(j + 1) * nx].to_vec();
        edt_1d(&row, &mut out[..nx], &mut v, &mut z);
        f[j * nx..(j + 1) * nx].copy_from_slice(&out[..nx]);
    }
    f.iter().map(|d2| d2.sqrt() * g.dx).collect()
}

/// Sets nodes farther than `max_m` from any datum to nodata.
pub fn blank_by_distance(g: &mut Grid2, x: &[f64], y: &[f64], max_m: f64) {
    let d = distance_to_data(g, x, y);
    for (v, d) in g.values.iter_mut().zip(d) {
        if d > max_m {
            *v = f64::NAN;
        }
    }
}

/// Convex hull of points (Andrew's monotone chain), counter-clockwise.
pub fn convex_hull(x: &[f64], y: &[f64]) -> Vec<(f64, f64)> {
    let mut p: Vec<(f64, f64)> = x
        .iter()
        .zip(y)
        .filter(|(a, b)| a.is_finite() && b.is_finite())
        .map(|(a, b)| (*a, *b))
        .collect();
    p.sort_by(|a, b| a.0.total_cmp(&b.0).then(a.1.total_cmp(&b.1)));
    p.dedup();
    if p.len() < 3 {
        return p;
    }
    let cross = |o: (f64, f64), a: (f64, f64), b: (f64, f64)| {
        (a.0 - o.0) * (b.1 - o.1) - (a.1 - o.1) * (b.0 - o.0)
    };
    let mut h: Vec<(f64, f64)> = Vec::with_capacity(2 * p.len());
    for &pt in p.iter().chain(p.iter().rev().skip(1)) {
        while h.len() >= 2 && cross(h[h.len() - 2], h[h.len() - 1], pt) <= 0.0 {
            h.pop();
        }
        h.push(pt);
    }
    h.pop();
    // Remove the duplicated run produced by chaining the lower and upper hulls.
    let mut out: Vec<(f64, f64)> = Vec::new();
    for q in h {
        if out.last() != Some(&q) {
            out.push(q);
        }
    }
    out
}

/// Even–odd point-in-polygon test.
pub fn inside_polygon(poly: &[(f64, f64)], x: f64, y: f64) -> bool {
    let mut inside = false;
    let n = poly.len();
    for k in 0..n {
        let (a, b) = (poly[k], poly[(k + 1) % n]);
        if (a.1 > y) != (b.1 > y) && x < a.0 + (y - a.1) / (b.1 - a.1) * (b.0 - a.0) {
            inside = !inside;
        }
    }
    inside
}

/// Sets nodes outside `poly` to nodata.
pub fn blank_outside(g: &mut Grid2, poly: &[(f64, f64)]) {
    for j in 0..g.ny {
        for i in 0..g.nx {
            if !inside_polygon(poly, g.x_of(i), g.y_of(j)) {
                g.values[i + g.nx * j] = f64::NAN;
            }
        }
    }
}

/// A suggested cell size and the reason for it (common practice: a quarter
/// to a fifth of the line spacing, never below half the along-line spacing).
pub fn suggest_cell(line_spacing_m: f64, along_line_m: f64) -> (f64, String) {
    if !line_spacing_m.is_finite() || line_spacing_m <= 0.0 {
        let c = if along_line_m.is_finite() && along_line_m > 0.0 {
            along_line_m * 2.0
        } else {
            f64::NAN
        };
        return (
            c,
            "no line spacing could be measured; twice the along-line spacing is suggested".into(),
        );
    }
    let quarter = line_spacing_m / 4.0;
    let floor = if along_line_m.is_finite() {
        along_line_m / 2.0
    } else {
        0.0
    };
    let c = quarter.max(floor);
    let why = if c > quarter {
        format!("a quarter of the {line_spacing_m:.0} m line spacing would be {quarter:.1} m, below half the {along_line_m:.1} m along-line spacing, so {c:.1} m")
    } else {
        format!("a quarter of the {line_spacing_m:.0} m line spacing (common practice: a quarter to a fifth), not below half the {along_line_m:.1} m along-line spacing")
    };
    (c, why)
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn distance_transform_is_euclidean() {
        let g = Grid2::new_empty(0.0, 0.0, 10.0, 10.0, 21, 11).unwrap();
        let d = distance_to_data(&g, &[50.0], &[30.0]);
        for j in 0..11 {
            for i in 0..21 {
                let want =
                    ((i as f64 * 10.0 - 50.0).powi(2) + (j as f64 * 10.0 - 30.0).powi(2)).sqrt();
                assert!(
                    (d[i + 21 * j] - want).abs() < 1e-9,
                    "({i},{j}) {} vs {want}",
                    d[i + 21 * j]
                );
            }
        }
    }

    #[test]
    fn hull_and_polygon_blanking() {
        let x = [0.0, 10.0, 10.0, 0.0, 5.0, 3.0];
        let y = [0.0, 0.0, 10.0, 10.0, 5.0, 8.0];
        let h = convex_hull(&x, &y);
        assert_eq!(h.len(), 4, "{h:?}");
        assert!(inside_polygon(&h, 5.0, 5.0) && !inside_polygon(&h, 11.0, 5.0));
        let mut g = Grid2::new_empty(-5.0, -5.0, 5.0, 5.0, 5, 5).unwrap();
        g.values.iter_mut().for_each(|v| *v = 1.0);
        blank_outside(&mut g, &h);
        assert!(g.get(0, 0).is_nan() && g.get(2, 2) == 1.0);
    }

    #[test]
    fn cell_suggestion_follows_the_rule_and_says_why() {
        let (c, why) = suggest_cell(100.0, 5.0);
        assert_eq!(c, 25.0);
        assert!(why.contains("quarter"));
        let (c, _) = suggest_cell(100.0, 80.0);
        assert_eq!(c, 40.0);
    }
}
