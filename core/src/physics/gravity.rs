//! Gravity of a right rectangular prism of uniform density contrast.
//!
//! With u = r′ − r₀ the source point relative to the station, the attraction
//! is g = G Δρ ∫ u/|u|³ dV. Integrating once along each axis and twice more
//! with the antiderivatives of [`corner::gravity_phi`] gives (Nagy, Papp &
//! Benedek 2000, eq. 13; Plouff 1976):
//!
//! g_x = −G Δρ Σ s Φ_x,  g_y = −G Δρ Σ s Φ_y,  g_z↓ = +G Δρ Σ s Φ_z,
//!
//! summed over the eight corners with sign s (+ at upper bounds). g_x, g_y are
//! the east and north components of the attraction (positive toward a mass
//! lying east or north); g_z is reported positive downward, so a positive
//! contrast below the station gives positive g_z (the trade's convention).
//!
//! The formulas hold at every point outside the prism and on its surface
//! (g is continuous there). Far from the prism (see [`quadrature`]) the field
//! is integrated by cubature instead, to avoid cancellation.

use super::{corner, quadrature, Prism};
use crate::units::GRAVITY_KERNEL_TO_MGAL_PER_GCC;

/// Gravity components (g_x east, g_y north, g_z down) in mGal at `station`
/// (x, y, z in metres) of `prism` with density contrast `density_g_cc` (g/cm³).
pub fn prism_gravity_mgal(prism: &Prism, station: [f64; 3], density_g_cc: f64) -> [f64; 3] {
    let k = GRAVITY_KERNEL_TO_MGAL_PER_GCC * density_g_cc;
    let [sx, sy, sz] = if prism.is_far_from(station) {
        far_field_sums(prism, station)
    } else {
        let mut s = [0.0; 3];
        for (u, sign) in prism.relative_corners(station) {
            let phi = corner::gravity_phi(u[0], u[1], u[2]);
            s[0] += sign * phi[0];
            s[1] += sign * phi[1];
            s[2] += sign * phi[2];
        }
        s
    };
    [-k * sx, -k * sy, k * sz]
}

/// Vertical gravity g_z (positive down) only, in mGal.
pub fn prism_gz_mgal(prism: &Prism, station: [f64; 3], density_g_cc: f64) -> f64 {
    let k = GRAVITY_KERNEL_TO_MGAL_PER_GCC * density_g_cc;
    if prism.is_far_from(station) {
        return k * far_field_sums(prism, station)[2];
    }
    let mut s = 0.0;
    for (u, sign) in prism.relative_corners(station) {
        s += sign * corner::gravity_phi_z(u[0], u[1], u[2]);
    }
    k * s
}

/// The corner sums (Σ s Φ_x, Σ s Φ_y, Σ s Φ_z) by cubature: Σ s Φ_a equals
/// −∫ u_a/|u|³ dV, which is what is integrated here.
fn far_field_sums(prism: &Prism, station: [f64; 3]) -> [f64; 3] {
    let mut s = [0.0; 3];
    quadrature::for_each_point(prism, station, |u, w| {
        let r2 = u[0] * u[0] + u[1] * u[1] + u[2] * u[2];
        let inv_r3 = w / (r2 * r2.sqrt());
        s[0] -= u[0] * inv_r3;
        s[1] -= u[1] * inv_r3;
        s[2] -= u[2] * inv_r3;
    });
    s
}

#[cfg(test)]
mod tests {
    use super::*;

    fn cube() -> Prism {
        Prism::new([-10.0, 10.0], [-10.0, 10.0], [-30.0, -10.0]).unwrap()
    }

    #[test]
    fn positive_contrast_below_gives_positive_gz() {
        let g = prism_gravity_mgal(&cube(), [0.0, 0.0, 0.0], 1.0);
        assert!(g[2] > 0.0);
        // Directly above the centre, the horizontal components vanish by symmetry.
        assert!(g[0].abs() < 1e-14 && g[1].abs() < 1e-14);
    }

    #[test]
    fn horizontal_attraction_points_toward_the_mass() {
        let g = prism_gravity_mgal(&cube(), [-50.0, 0.0, -20.0], 1.0);
        assert!(g[0] > 0.0, "mass lies east of the station: {g:?}");
        let g = prism_gravity_mgal(&cube(), [0.0, 50.0, -20.0], 1.0);
        assert!(g[1] < 0.0, "mass lies south of the station: {g:?}");
        // Level with the centre, beside the prism: no vertical component.
        assert!(g[2].abs() < 1e-13);
    }

    #[test]
    fn closed_form_and_cubature_agree_at_the_switch() {
        // Just inside and just outside the far-field switch the two methods
        // must agree closely, or the switch would show as a step.
        let p = cube();
        let d = p.diagonal_m() * quadrature::FAR_FIELD_RATIO;
        let c = p.centre();
        let near = [c[0] + d * 0.6, c[1] + d * 0.5, c[2] + d * 0.62];
        let scale = (near[0] - c[0]).hypot(near[1] - c[1]).hypot(near[2] - c[2]) / d;
        let inside = [
            c[0] + (near[0] - c[0]) / scale * 0.999_999,
            c[1] + (near[1] - c[1]) / scale * 0.999_999,
            c[2] + (near[2] - c[2]) / scale * 0.999_999,
        ];
        assert!(!p.is_far_from(inside));
        let closed = prism_gravity_mgal(&p, inside, 1.0);
        let cub = {
            let s = far_field_sums(&p, inside);
            let k = GRAVITY_KERNEL_TO_MGAL_PER_GCC;
            [-k * s[0], -k * s[1], k * s[2]]
        };
        let norm = closed.iter().map(|v| v * v).sum::<f64>().sqrt();
        for a in 0..3 {
            assert!(
                (closed[a] - cub[a]).abs() < 1e-9 * norm,
                "{closed:?} vs {cub:?}"
            );
        }
    }
}
