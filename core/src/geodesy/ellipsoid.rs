//! Reference ellipsoids.

use serde::{Deserialize, Serialize};

/// A reference ellipsoid by its semi-major axis and flattening.
#[derive(Debug, Clone, Copy, PartialEq, Serialize, Deserialize)]
pub struct Ellipsoid {
    pub name: &'static str,
    /// Semi-major axis, metres.
    pub a_m: f64,
    /// Flattening f = (a − b)/a.
    pub f: f64,
}

/// GRS80 (Moritz 2000): a = 6 378 137 m, 1/f = 298.257 222 101 (derived from
/// the defining constant J₂ and given in the paper to that many digits).
pub const GRS80: Ellipsoid = Ellipsoid {
    name: "GRS80",
    a_m: 6_378_137.0,
    f: 1.0 / 298.257_222_101,
};

/// WGS 84 (NIMA TR8350.2): a = 6 378 137 m, 1/f = 298.257 223 563 (defining).
pub const WGS84: Ellipsoid = Ellipsoid {
    name: "WGS 84",
    a_m: 6_378_137.0,
    f: 1.0 / 298.257_223_563,
};

impl Ellipsoid {
    /// First eccentricity squared, e² = f(2 − f).
    pub fn e2(&self) -> f64 {
        self.f * (2.0 - self.f)
    }

    /// Third flattening n = f/(2 − f).
    pub fn n(&self) -> f64 {
        self.f / (2.0 - self.f)
    }

    /// Semi-minor axis b = a(1 − f), metres.
    pub fn b_m(&self) -> f64 {
        self.a_m * (1.0 - self.f)
    }
}
