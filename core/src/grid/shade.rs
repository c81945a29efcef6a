//! Hillshade of a grid: the cosine of the angle between the surface normal
//! and the direction to a light at azimuth (degrees clockwise from grid
//! north) and altitude (degrees above the horizon), the usual analytical
//! shading of terrain (Burrough & McDonnell 1998, ch. 8). Slopes are central
//! differences inside the grid and one-sided at its edges and beside blanked
//! nodes, as numpy.gradient takes them.

use super::Grid2;

/// The light's unit direction (x east, y north, z up).
pub fn light(azimuth_deg: f64, altitude_deg: f64) -> [f64; 3] {
    let (az, alt) = (azimuth_deg.to_radians(), altitude_deg.to_radians());
    [az.sin() * alt.cos(), az.cos() * alt.cos(), alt.sin()]
}

/// Illumination per node in [−1, 1] (negative: facing away from the light),
/// NaN where the grid has no value. `vertical_exaggeration` scales the
/// values before the slopes are taken (e.g. to shade a gravity grid).
pub fn hillshade(
    g: &Grid2,
    azimuth_deg: f64,
    altitude_deg: f64,
    vertical_exaggeration: f64,
) -> Vec<f64> {
    let l = light(azimuth_deg, altitude_deg);
    let v = |i: usize, j: usize| g.values[i + g.nx * j];
    // Derivative along one axis from the valid neighbours of a node.
    let deriv = |c: f64, before: Option<f64>, after: Option<f64>, h: f64| -> f64 {
        let ok = |x: Option<f64>| x.filter(|x| x.is_finite());
        match (ok(before), ok(after)) {
            (Some(a), Some(b)) => (b - a) / (2.0 * h),
            (None, Some(b)) => (b - c) / h,
            (Some(a), None) => (c - a) / h,
            (None, None) => 0.0,
        }
    };
    let mut out = vec![f64::NAN; g.values.len()];
    for j in 0..g.ny {
        for i in 0..g.nx {
            let c = v(i, j);
            if !c.is_finite() {
                continue;
            }
            let dzdx = deriv(
                c,
                (i > 0).then(|| v(i - 1, j)),
                (i + 1 < g.nx).then(|| v(i + 1, j)),
                g.dx,
            ) * vertical_exaggeration;
            let dzdy = deriv(
                c,
                (j > 0).then(|| v(i, j - 1)),
                (j + 1 < g.ny).then(|| v(i, j + 1)),
                g.dy,
            ) * vertical_exaggeration;
            let n = [-dzdx, -dzdy, 1.0];
            let len = (n[0] * n[0] + n[1] * n[1] + 1.0).sqrt();
            out[i + g.nx * j] = (n[0] * l[0] + n[1] * l[1] + n[2] * l[2]) / len;
        }
    }
    out
}

/// A vertical exaggeration that makes a grid of any units shade like
/// terrain: its value range spread over a tenth of its width (common
/// practice for shading anomaly grids).
pub fn auto_exaggeration(g: &Grid2) -> f64 {
    let (lo, hi) = g.value_range();
    let width = (g.nx as f64 * g.dx).max(g.ny as f64 * g.dy);
    if hi > lo {
        0.1 * width / (hi - lo)
    } else {
        1.0
    }
}

/// Multiplies a colour by a shade factor (0.45 in full shadow to 1.2 in
/// full light, clipped), the blend the figures and the window both use.
pub fn shade_colour(c: [u8; 3], illumination: f64) -> [u8; 3] {
    let f = if illumination.is_finite() {
        0.45 + 0.75 * illumination.clamp(0.0, 1.0)
    } else {
        1.0
    };
    [
        (c[0] as f64 * f).min(255.0) as u8,
        (c[1] as f64 * f).min(255.0) as u8,
        (c[2] as f64 * f).min(255.0) as u8,
    ]
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn a_plane_is_lit_by_the_cosine_of_its_angle_to_the_light() {
        // z = 0.5 x rises to the east: normal (−0.5, 0, 1)/√1.25. Closed form
        // for a light in the west at 30° altitude: cos = (0.5 cos30° + sin30°)/√1.25.
        let mut g = Grid2::new_empty(0.0, 0.0, 10.0, 10.0, 6, 5).unwrap();
        for j in 0..5 {
            for i in 0..6 {
                g.values[i + 6 * j] = 0.5 * 10.0 * i as f64;
            }
        }
        let want = (0.5 * 30f64.to_radians().cos() + 30f64.to_radians().sin()) / 1.25f64.sqrt();
        for s in hillshade(&g, 270.0, 30.0, 1.0) {
            assert!((s - want).abs() < 1e-12, "{s} vs {want}");
        }
        // Seen from the east it faces away more.
        assert!(hillshade(&g, 90.0, 30.0, 1.0)[7] < want);
        let l = light(315.0, 45.0);
        assert!((l[0] + 0.5).abs() < 1e-12 && (l[1] - 0.5).abs() < 1e-12);
    }
}
