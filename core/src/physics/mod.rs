//! Potential-field physics of right rectangular prisms.
//!
//! * [`gravity`]: g_x, g_y, g_z of a uniform-density prism (Nagy, Papp &
//!   Benedek 2000; Plouff 1976).
//! * [`magnetic`]: the field of a uniformly magnetized prism through its
//!   dimensionless shape tensor (Bhattacharyya 1964; Blakely 1995 §9.2).
//! * [`corner`]: the corner functions both share, with every singular case
//!   handled in one place.
//! * [`quadrature`]: Gauss–Legendre cubature used in the far field, where the
//!   closed forms lose digits to cancellation.
//! * [`tensor`]: whole rows of a tensor-mesh sensitivity for one station,
//!   sharing corner terms between adjacent cells.
//!
//! Frame: x east, y north, z up, metres. A prism is given by its bounds on
//! each axis.

pub mod corner;
pub mod gravity;
pub mod magnetic;
pub mod quadrature;
pub mod tensor;

use serde::{Deserialize, Serialize};
use thiserror::Error;

/// A right rectangular prism with faces normal to the axes, bounds in metres.
#[derive(Debug, Clone, Copy, PartialEq, Serialize, Deserialize)]
pub struct Prism {
    pub x: [f64; 2],
    pub y: [f64; 2],
    pub z: [f64; 2],
}

/// Why a prism is not valid.
#[derive(Debug, Error, PartialEq)]
pub enum PrismError {
    #[error("{axis} bounds must be finite numbers, got [{lo}, {hi}]")]
    NotFinite { axis: char, lo: f64, hi: f64 },
    #[error("{axis} bounds must increase (lower < upper), got [{lo}, {hi}]")]
    NotIncreasing { axis: char, lo: f64, hi: f64 },
}

impl Prism {
    /// A prism after checking that every bound is finite and increasing.
    pub fn new(x: [f64; 2], y: [f64; 2], z: [f64; 2]) -> Result<Self, PrismError> {
        let p = Prism { x, y, z };
        p.validate()?;
        Ok(p)
    }

    /// Checks finiteness and order of the bounds on each axis.
    pub fn validate(&self) -> Result<(), PrismError> {
        for (axis, [lo, hi]) in [('x', self.x), ('y', self.y), ('z', self.z)] {
            if !lo.is_finite() || !hi.is_finite() {
                return Err(PrismError::NotFinite { axis, lo, hi });
            }
            if lo >= hi {
                return Err(PrismError::NotIncreasing { axis, lo, hi });
            }
        }
        Ok(())
    }

    /// Volume in m³.
    pub fn volume_m3(&self) -> f64 {
        (self.x[1] - self.x[0]) * (self.y[1] - self.y[0]) * (self.z[1] - self.z[0])
    }

    /// Centre point.
    pub fn centre(&self) -> [f64; 3] {
        [
            0.5 * (self.x[0] + self.x[1]),
            0.5 * (self.y[0] + self.y[1]),
            0.5 * (self.z[0] + self.z[1]),
        ]
    }

    /// Length of the space diagonal in metres.
    pub fn diagonal_m(&self) -> f64 {
        let a = self.x[1] - self.x[0];
        let b = self.y[1] - self.y[0];
        let c = self.z[1] - self.z[0];
        (a * a + b * b + c * c).sqrt()
    }

    /// True when the point lies strictly inside the prism.
    pub fn contains_strictly(&self, p: [f64; 3]) -> bool {
        p[0] > self.x[0]
            && p[0] < self.x[1]
            && p[1] > self.y[0]
            && p[1] < self.y[1]
            && p[2] > self.z[0]
            && p[2] < self.z[1]
    }

    /// True when `station` is far enough (relative to the prism's size) that
    /// the closed-form corner sums would lose more digits to cancellation than
    /// Gauss–Legendre cubature loses to truncation. See [`quadrature`].
    pub(crate) fn is_far_from(&self, station: [f64; 3]) -> bool {
        let c = self.centre();
        let d2 =
            (station[0] - c[0]).powi(2) + (station[1] - c[1]).powi(2) + (station[2] - c[2]).powi(2);
        let l = self.diagonal_m() * quadrature::FAR_FIELD_RATIO;
        d2 > l * l
    }

    /// The eight corners relative to `station`, each with its sign in the
    /// alternating corner sum (+1 at upper bounds, −1 at lower, multiplied
    /// over the three axes).
    pub(crate) fn relative_corners(&self, station: [f64; 3]) -> [([f64; 3], f64); 8] {
        let xs = [self.x[0] - station[0], self.x[1] - station[0]];
        let ys = [self.y[0] - station[1], self.y[1] - station[1]];
        let zs = [self.z[0] - station[2], self.z[1] - station[2]];
        let mut out = [([0.0; 3], 0.0); 8];
        let mut n = 0;
        for (a, &x) in xs.iter().enumerate() {
            for (b, &y) in ys.iter().enumerate() {
                for (c, &z) in zs.iter().enumerate() {
                    let s = if (a + b + c) % 2 == 1 { -1.0 } else { 1.0 };
                    // (a,b,c) = (1,1,1) is the all-upper corner with sign +1;
                    // each lower bound flips the sign.
                    out[n] = ([x, y, z], -s);
                    n += 1;
                }
            }
        }
        out
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn corner_signs_are_plus_at_the_upper_corner_and_alternate() {
        let p = Prism::new([0.0, 1.0], [0.0, 1.0], [0.0, 1.0]).unwrap();
        let c = p.relative_corners([0.0, 0.0, 0.0]);
        let sum: f64 = c.iter().map(|(_, s)| s).sum();
        assert_eq!(sum, 0.0);
        let upper = c.iter().find(|(u, _)| *u == [1.0, 1.0, 1.0]).unwrap();
        assert_eq!(upper.1, 1.0);
        let lower = c.iter().find(|(u, _)| *u == [0.0, 0.0, 0.0]).unwrap();
        assert_eq!(lower.1, -1.0);
        let one_low = c.iter().find(|(u, _)| *u == [0.0, 1.0, 1.0]).unwrap();
        assert_eq!(one_low.1, -1.0);
    }

    #[test]
    fn invalid_prisms_are_refused_with_the_axis_named() {
        let e = Prism::new([1.0, 0.0], [0.0, 1.0], [0.0, 1.0]).unwrap_err();
        assert!(e.to_string().contains("x bounds must increase"));
        let e = Prism::new([0.0, 1.0], [0.0, f64::NAN], [0.0, 1.0]).unwrap_err();
        assert!(matches!(e, PrismError::NotFinite { axis: 'y', .. }));
        assert!(Prism::new([0.0, 1.0], [0.0, 1.0], [2.0, 2.0]).is_err());
    }
}
