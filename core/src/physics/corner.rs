//! Corner functions of the prism closed forms, with their singular cases.
//!
//! With (x, y, z) the coordinates of a prism corner relative to the station and
//! r = √(x² + y² + z²), the gravity and magnetic fields of a prism are
//! alternating sums over its eight corners of a few elementary terms
//! (Nagy, Papp & Benedek 2000, eqs. 11–15; Blakely 1995, eq. 9.13):
//!
//! * `ln(a + r)` for a ∈ {x, y, z};
//! * `atan(b·c / (a·r))` for the three choices of a.
//!
//! Singular cases, and how each is handled:
//!
//! * `ln(a + r)` with a < 0 loses every digit to cancellation when the other
//!   two coordinates are small, and is ln 0 when both are zero. We use the
//!   identity a + r = (b² + c²)/(r − a), exact in real arithmetic and well
//!   conditioned for a < 0. When b = c = 0 the value is −∞; in the gravity
//!   sums the term is then multiplied by a coefficient that is exactly zero
//!   (the limit t·ln t → 0), and in the magnetic sums the −∞ parts of the two
//!   corners on the same edge line cancel (both carry ln(b² + c²) → the same
//!   constant), so [`ln_a_plus_r`] drops ln(b² + c²) when it is zero and the
//!   remaining −ln(r − a) is finite. This is what makes stations on the
//!   extension of an edge (beyond the prism) exact.
//! * `atan(b·c/(a·r))` with a = 0: the station lies in the plane of a face.
//!   The gravity terms multiply it by a = 0. In the magnetic sums the one-sided
//!   limits are ±π/2; over the four corners of that face plane they cancel
//!   unless the station lies on the face itself, where the field is
//!   discontinuous. Returning 0 gives the exact value off the face and the
//!   mean of the inside and outside limits on it.
//! * r = 0: the station is at a corner. Every gravity term has a zero
//!   coefficient; callers skip the corner.

/// `ln(a + r)` evaluated stably, with `rest_sq = b² + c²` (the squares of the
/// other two relative coordinates) and `r = √(a² + rest_sq)`. See the module
/// notes for the a < 0 and rest_sq = 0 cases.
#[inline(always)]
pub fn ln_a_plus_r(a: f64, r: f64, rest_sq: f64) -> f64 {
    if a >= 0.0 {
        (a + r).ln()
    } else if rest_sq > 0.0 {
        (rest_sq / (r - a)).ln()
    } else {
        // b = c = 0, a < 0: a + r = 0. The ln(b² + c²) part is dropped (it is
        // multiplied by zero or cancels between paired corners); −ln(r − a)
        // remains, and r − a = 2|a| > 0.
        -(r - a).ln()
    }
}

/// `atan(num / (a·r))`, zero in the face plane a = 0 (see module notes).
#[inline(always)]
pub fn atan_over(num: f64, a: f64, r: f64) -> f64 {
    if a == 0.0 {
        0.0
    } else {
        (num / (a * r)).atan()
    }
}

/// The three antiderivatives whose corner sums give the gravity components.
///
/// For a corner at relative position (x, y, z):
/// Φ_x = y ln(z + r) + z ln(y + r) − x atan(yz / (xr)),
/// Φ_y = z ln(x + r) + x ln(z + r) − y atan(xz / (yr)),
/// Φ_z = x ln(y + r) + y ln(x + r) − z atan(xy / (zr)),
/// each an antiderivative of 1/r in the two coordinates other than its own
/// (Nagy et al. 2000, eq. 13 for Φ_z and its cyclic permutations).
#[inline(always)]
pub fn gravity_phi(x: f64, y: f64, z: f64) -> [f64; 3] {
    let (x2, y2, z2) = (x * x, y * y, z * z);
    let r = (x2 + y2 + z2).sqrt();
    if r == 0.0 {
        return [0.0; 3];
    }
    let lx = ln_a_plus_r(x, r, y2 + z2);
    let ly = ln_a_plus_r(y, r, x2 + z2);
    let lz = ln_a_plus_r(z, r, x2 + y2);
    let px = y * lz + z * ly - x * atan_over(y * z, x, r);
    let py = z * lx + x * lz - y * atan_over(x * z, y, r);
    let pz = x * ly + y * lx - z * atan_over(x * y, z, r);
    // Any product with a zero coefficient above is exactly zero because every
    // ln term is finite by construction.
    [px, py, pz]
}

/// Only Φ_z, for the vertical-gravity hot loop of sensitivity builds.
#[inline(always)]
pub fn gravity_phi_z(x: f64, y: f64, z: f64) -> f64 {
    let (x2, y2, z2) = (x * x, y * y, z * z);
    let r = (x2 + y2 + z2).sqrt();
    if r == 0.0 {
        return 0.0;
    }
    let lx = ln_a_plus_r(x, r, y2 + z2);
    let ly = ln_a_plus_r(y, r, x2 + z2);
    x * ly + y * lx - z * atan_over(x * y, z, r)
}

/// The six independent corner terms of the magnetic shape tensor, in the
/// order xx, yy, zz, xy, xz, yz:
/// t_xx = −atan(yz/(xr)), t_yy = −atan(xz/(yr)), t_zz = −atan(xy/(zr)),
/// t_xy = ln(z + r), t_xz = ln(y + r), t_yz = ln(x + r)
/// (Blakely 1995, eq. 9.13, written for the second derivatives of 1/r).
/// Returns `None` at r = 0.
#[inline(always)]
pub fn magnetic_terms(x: f64, y: f64, z: f64) -> Option<[f64; 6]> {
    let (x2, y2, z2) = (x * x, y * y, z * z);
    let r = (x2 + y2 + z2).sqrt();
    if r == 0.0 {
        return None;
    }
    Some([
        -atan_over(y * z, x, r),
        -atan_over(x * z, y, r),
        -atan_over(x * y, z, r),
        ln_a_plus_r(z, r, x2 + y2),
        ln_a_plus_r(y, r, x2 + z2),
        ln_a_plus_r(x, r, y2 + z2),
    ])
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn stable_log_matches_the_direct_form_where_both_are_accurate() {
        for &(a, b, c) in &[(-3.0, 4.0, 0.0), (-1.0, 0.5, 0.25), (2.0, 1.0, 1.0)] {
            let rest: f64 = b * b + c * c;
            let r = (a * a + rest).sqrt();
            let direct = (a + r).ln();
            assert!((ln_a_plus_r(a, r, rest) - direct).abs() < 1e-13);
        }
    }

    #[test]
    fn stable_log_keeps_digits_where_the_direct_form_loses_them() {
        // a = −10⁶, b = 10⁻³: a + r = b²/(2|a|)(1 + O(b²/a²)) = 5·10⁻¹³.
        let (a, b) = (-1.0e6_f64, 1.0e-3_f64);
        let r = (a * a + b * b).sqrt();
        let v = ln_a_plus_r(a, r, b * b);
        let exact = (b * b / (2.0 * a.abs())).ln();
        assert!((v - exact).abs() < 1e-12, "{v} vs {exact}");
    }

    #[test]
    fn every_term_is_finite_on_axes_and_planes() {
        let cases = [
            (0.0, 0.0, -1.0),
            (0.0, -1.0, 0.0),
            (-1.0, 0.0, 0.0),
            (0.0, 0.0, 1.0),
            (0.0, 2.0, -1.0),
            (1.0, 0.0, 0.0),
        ];
        for &(x, y, z) in &cases {
            assert!(
                gravity_phi(x, y, z).iter().all(|v| v.is_finite()),
                "{x} {y} {z}"
            );
            assert!(gravity_phi_z(x, y, z).is_finite());
            assert!(magnetic_terms(x, y, z)
                .unwrap()
                .iter()
                .all(|v| v.is_finite()));
        }
        assert_eq!(gravity_phi(0.0, 0.0, 0.0), [0.0; 3]);
        assert!(magnetic_terms(0.0, 0.0, 0.0).is_none());
    }
}
