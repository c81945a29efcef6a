//! Magnetic field of a uniformly magnetized right rectangular prism.
//!
//! For a uniform magnetization M (A/m) the anomalous flux density at a station
//! is B = (μ₀/4π) T·M, where T is the prism's dimensionless shape tensor
//!
//! T_ij = ∫_prism ∂_i ∂_j (1/|u|) dV,   u = r′ − r₀,
//!
//! the volume integral of the dipole kernel (3 u_i u_j − |u|² δ_ij)/|u|⁵
//! (Blakely 1995, eqs. 4.16 and 9.13; Bhattacharyya 1964). Its closed form is an
//! alternating corner sum of the terms in [`corner::magnetic_terms`]. T is
//! symmetric with trace 0 outside the prism and −4π inside (Poisson), which
//! the tests check.
//!
//! The total-field anomaly (TMI) is the projection of B on the unit vector of
//! the inducing field, which is accurate while |B| ≪ |F| (Blakely 1995 §4.4;
//! common practice for anomalies below a few thousand nT).
//!
//! Singular case: on an edge of the prism some components of B are
//! logarithmically infinite. [`prism_shape_tensor`] returns `None` there; on a
//! face (off its edges) it returns the mean of the inside and outside limits.

use super::{corner, quadrature, Prism};
use crate::units::{
    direction_from_inclination_declination, induced_magnetization_a_m, MAG_KERNEL_TO_NT_PER_A_M,
};
use serde::{Deserialize, Serialize};

/// Symmetric 3×3 shape tensor stored as [xx, yy, zz, xy, xz, yz].
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct ShapeTensor(pub [f64; 6]);

impl ShapeTensor {
    /// T·v.
    pub fn apply(&self, v: [f64; 3]) -> [f64; 3] {
        let [xx, yy, zz, xy, xz, yz] = self.0;
        [
            xx * v[0] + xy * v[1] + xz * v[2],
            xy * v[0] + yy * v[1] + yz * v[2],
            xz * v[0] + yz * v[1] + zz * v[2],
        ]
    }

    /// Trace (0 outside the prism, −4π inside).
    pub fn trace(&self) -> f64 {
        self.0[0] + self.0[1] + self.0[2]
    }
}

/// An inducing (main) field: intensity in nT, inclination positive down and
/// declination positive east of north, in degrees.
#[derive(Debug, Clone, Copy, PartialEq, Serialize, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct InducingField {
    pub intensity_nt: f64,
    pub inclination_deg: f64,
    pub declination_deg: f64,
}

impl InducingField {
    /// Unit vector of the field in the project frame (x east, y north, z up).
    pub fn unit(&self) -> [f64; 3] {
        direction_from_inclination_declination(self.inclination_deg, self.declination_deg)
    }

    /// Magnetization (A/m) induced in susceptibility `chi_si`, ignoring
    /// self-demagnetization.
    pub fn induced_magnetization(&self, chi_si: f64) -> [f64; 3] {
        let m = induced_magnetization_a_m(chi_si, self.intensity_nt);
        let u = self.unit();
        [m * u[0], m * u[1], m * u[2]]
    }
}

/// A magnetization vector given by intensity (A/m), inclination and
/// declination (degrees, geomagnetic convention).
#[derive(Debug, Clone, Copy, PartialEq, Serialize, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct Magnetization {
    pub intensity_am: f64,
    pub inclination_deg: f64,
    pub declination_deg: f64,
}

impl Magnetization {
    /// The vector in A/m in the project frame.
    pub fn vector_a_m(&self) -> [f64; 3] {
        let u = direction_from_inclination_declination(self.inclination_deg, self.declination_deg);
        [
            self.intensity_am * u[0],
            self.intensity_am * u[1],
            self.intensity_am * u[2],
        ]
    }
}

/// True when `station` lies on one of the twelve edges of `prism` (where the
/// magnetic field is singular).
pub fn on_edge(prism: &Prism, station: [f64; 3]) -> bool {
    let bounds = [prism.x, prism.y, prism.z];
    let mut on_face_plane = 0;
    for a in 0..3 {
        let [lo, hi] = bounds[a];
        let v = station[a];
        if v < lo || v > hi {
            return false;
        }
        if v == lo || v == hi {
            on_face_plane += 1;
        }
    }
    on_face_plane >= 2
}

/// The shape tensor of `prism` seen from `station`; `None` on an edge.
pub fn prism_shape_tensor(prism: &Prism, station: [f64; 3]) -> Option<ShapeTensor> {
    if on_edge(prism, station) {
        return None;
    }
    if prism.is_far_from(station) {
        return Some(far_field_tensor(prism, station));
    }
    let mut t = [0.0; 6];
    for (u, sign) in prism.relative_corners(station) {
        // r = 0 only at a corner, which is on an edge and excluded above.
        let terms = corner::magnetic_terms(u[0], u[1], u[2])?;
        for (acc, v) in t.iter_mut().zip(terms) {
            *acc += sign * v;
        }
    }
    Some(ShapeTensor(t))
}

/// The tensor by cubature of the dipole kernel (3 u_i u_j − r² δ_ij)/r⁵.
fn far_field_tensor(prism: &Prism, station: [f64; 3]) -> ShapeTensor {
    let mut t = [0.0; 6];
    quadrature::for_each_point(prism, station, |u, w| {
        let r2 = u[0] * u[0] + u[1] * u[1] + u[2] * u[2];
        let inv_r5 = w / (r2 * r2 * r2.sqrt());
        t[0] += (3.0 * u[0] * u[0] - r2) * inv_r5;
        t[1] += (3.0 * u[1] * u[1] - r2) * inv_r5;
        t[2] += (3.0 * u[2] * u[2] - r2) * inv_r5;
        t[3] += 3.0 * u[0] * u[1] * inv_r5;
        t[4] += 3.0 * u[0] * u[2] * inv_r5;
        t[5] += 3.0 * u[1] * u[2] * inv_r5;
    });
    ShapeTensor(t)
}

/// Anomalous flux density (B_x east, B_y north, B_z up) in nT at `station` of
/// `prism` carrying magnetization `m_a_m` (A/m, project frame). `None` on an
/// edge of the prism.
pub fn prism_field_nt(prism: &Prism, station: [f64; 3], m_a_m: [f64; 3]) -> Option<[f64; 3]> {
    let t = prism_shape_tensor(prism, station)?;
    let b = t.apply(m_a_m);
    Some([
        b[0] * MAG_KERNEL_TO_NT_PER_A_M,
        b[1] * MAG_KERNEL_TO_NT_PER_A_M,
        b[2] * MAG_KERNEL_TO_NT_PER_A_M,
    ])
}

/// Total-field anomaly (nT): projection of `b_nt` on the unit vector `field_unit`.
pub fn tmi_nt(b_nt: [f64; 3], field_unit: [f64; 3]) -> f64 {
    b_nt[0] * field_unit[0] + b_nt[1] * field_unit[1] + b_nt[2] * field_unit[2]
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn trace_is_zero_outside_and_minus_four_pi_inside() {
        let p = Prism::new([-5.0, 15.0], [-10.0, 10.0], [-40.0, -8.0]).unwrap();
        for st in [
            [0.0, 0.0, 0.0],
            [30.0, -4.0, -20.0],
            [1.0, 2.0, -50.0],
            [3.0, 1.0, -8.0 + 1e-9],
        ] {
            let t = prism_shape_tensor(&p, st).unwrap();
            assert!(t.trace().abs() < 1e-12, "{st:?}: {}", t.trace());
        }
        let t = prism_shape_tensor(&p, [1.0, 2.0, -20.0]).unwrap();
        assert!((t.trace() + 4.0 * std::f64::consts::PI).abs() < 1e-12);
    }

    #[test]
    fn edges_are_reported_and_faces_are_not() {
        let p = Prism::new([0.0, 1.0], [0.0, 1.0], [-1.0, 0.0]).unwrap();
        assert!(on_edge(&p, [0.0, 0.5, 0.0]));
        assert!(on_edge(&p, [1.0, 1.0, -0.3]));
        assert!(prism_shape_tensor(&p, [1.0, 1.0, 0.0]).is_none());
        assert!(!on_edge(&p, [0.5, 0.5, 0.0]));
        assert!(
            !on_edge(&p, [0.0, 2.0, 0.0]),
            "edge extension is not an edge"
        );
        let t = prism_shape_tensor(&p, [0.0, 2.0, 0.0]).unwrap();
        assert!(t.0.iter().all(|v| v.is_finite()));
    }
}
