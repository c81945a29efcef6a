//! The known model of the invented demo scenario, as plain parameters that
//! can be evaluated at any point (so it can be compared with a model on any
//! mesh).
//!
//! Everything here is invented for the demonstration: a dipping, dense and
//! magnetic intrusive body offset by a fault, under 20–40 m of light,
//! non-magnetic glacial cover on gently rolling terrain.

use crate::mesh::TensorMesh;
use serde::{Deserialize, Serialize};
use std::f64::consts::PI;

/// A tabular body whose top edge runs north–south at `top_x_m` and
/// `top_z_m`, dipping east.
#[derive(Debug, Clone, Copy, PartialEq, Serialize, Deserialize)]
pub struct DippingBody {
    pub top_x_m: f64,
    pub top_z_m: f64,
    /// Extent along strike (north–south), centred on `centre_y_m`.
    pub centre_y_m: f64,
    pub length_m: f64,
    pub dip_deg: f64,
    pub depth_extent_m: f64,
    pub thickness_m: f64,
    pub density_contrast_g_cc: f64,
    pub susceptibility_si: f64,
}

impl DippingBody {
    /// Whether a point lies inside the body (south-block geometry).
    pub fn contains(&self, p: [f64; 3]) -> bool {
        if (p[1] - self.centre_y_m).abs() > 0.5 * self.length_m {
            return false;
        }
        let dip = self.dip_deg.to_radians();
        // Along the dip direction (east and down) and across it.
        let (ux, uz) = (dip.cos(), -dip.sin());
        let (dx, dz) = (p[0] - self.top_x_m, p[2] - self.top_z_m);
        let along = dx * ux + dz * uz;
        // Normal pointing up and east-ish: (sin, cos).
        let across = dx * dip.sin() + dz * dip.cos();
        (0.0..=self.depth_extent_m).contains(&along) && across.abs() <= 0.5 * self.thickness_m
    }
}

/// An east–west fault: north of `y_m` the body is shifted east by
/// `shift_east_m` and down by `throw_m`.
#[derive(Debug, Clone, Copy, PartialEq, Serialize, Deserialize)]
pub struct Fault {
    pub y_m: f64,
    pub shift_east_m: f64,
    pub throw_m: f64,
}

/// The invented truth of the demo.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct TrueModel {
    pub note: String,
    /// South-west corner of the survey, metres (project coordinates).
    pub origin_m: [f64; 2],
    /// Mean terrain elevation and the amplitudes of its two undulations, metres.
    pub terrain_mean_m: f64,
    pub terrain_amplitude_m: [f64; 2],
    /// Cover thickness: mean and amplitude, metres.
    pub cover_mean_m: f64,
    pub cover_amplitude_m: f64,
    pub cover_density_contrast_g_cc: f64,
    /// The cover exists within this box (x0, x1, y0, y1), metres.
    pub cover_extent_m: [f64; 4],
    pub body: DippingBody,
    pub fault: Fault,
    /// A planar regional field from deeper sources: value at the origin and
    /// gradients east and north, mGal and mGal/km.
    pub regional_mgal: [f64; 3],
    /// Background density the contrasts are relative to, g/cm³.
    pub background_density_g_cc: f64,
}

impl TrueModel {
    /// The demo scenario with its origin at `origin_m`.
    pub fn demo(origin_m: [f64; 2]) -> TrueModel {
        let [e0, n0] = origin_m;
        TrueModel {
            note: "INVENTED demonstration model. No real place, survey or rock is described."
                .into(),
            origin_m,
            terrain_mean_m: 312.0,
            terrain_amplitude_m: [7.0, 4.0],
            cover_mean_m: 30.0,
            cover_amplitude_m: 10.0,
            cover_density_contrast_g_cc: -0.5,
            cover_extent_m: [e0 - 600.0, e0 + 2100.0, n0 - 600.0, n0 + 1600.0],
            body: DippingBody {
                top_x_m: e0 + 600.0,
                top_z_m: 240.0,
                centre_y_m: n0 + 500.0,
                length_m: 800.0,
                dip_deg: 55.0,
                depth_extent_m: 350.0,
                thickness_m: 150.0,
                density_contrast_g_cc: 0.35,
                susceptibility_si: 0.04,
            },
            fault: Fault {
                y_m: n0 + 500.0,
                shift_east_m: 80.0,
                throw_m: 40.0,
            },
            regional_mgal: [-12.0, 0.6, -0.9],
            background_density_g_cc: 2.67,
        }
    }

    /// Terrain elevation, metres.
    pub fn terrain_m(&self, x: f64, y: f64) -> f64 {
        let (u, v) = (x - self.origin_m[0], y - self.origin_m[1]);
        let [a, b] = self.terrain_amplitude_m;
        self.terrain_mean_m
            + a * (2.0 * PI * u / 1300.0).sin() * (2.0 * PI * v / 1700.0 + 0.4).cos()
            + b * (2.0 * PI * (u + v) / 900.0).sin()
            + 0.004 * u
    }

    /// Thickness of the cover, metres (20 to 40 with the demo values).
    pub fn cover_thickness_m(&self, x: f64, y: f64) -> f64 {
        let (u, v) = (x - self.origin_m[0], y - self.origin_m[1]);
        self.cover_mean_m
            + self.cover_amplitude_m
                * (2.0 * PI * u / 1100.0 + 1.0).sin()
                * (2.0 * PI * v / 800.0).sin()
    }

    /// Elevation of the base of the cover, metres.
    pub fn cover_base_m(&self, x: f64, y: f64) -> f64 {
        self.terrain_m(x, y) - self.cover_thickness_m(x, y)
    }

    fn in_cover(&self, p: [f64; 3]) -> bool {
        let [x0, x1, y0, y1] = self.cover_extent_m;
        (x0..=x1).contains(&p[0])
            && (y0..=y1).contains(&p[1])
            && p[2] <= self.terrain_m(p[0], p[1])
            && p[2] > self.cover_base_m(p[0], p[1])
    }

    /// Whether a point is inside the intrusive body (either fault block).
    pub fn in_body(&self, p: [f64; 3]) -> bool {
        if p[2] > self.cover_base_m(p[0], p[1]) {
            return false;
        }
        if p[1] > self.fault.y_m {
            self.body.contains([
                p[0] - self.fault.shift_east_m,
                p[1],
                p[2] + self.fault.throw_m,
            ])
        } else {
            self.body.contains(p)
        }
    }

    /// Density contrast at a point, g/cm³ (0 in the air).
    pub fn density_at(&self, p: [f64; 3]) -> f64 {
        if self.in_body(p) {
            self.body.density_contrast_g_cc
        } else if self.in_cover(p) {
            self.cover_density_contrast_g_cc
        } else {
            0.0
        }
    }

    /// Susceptibility at a point, SI.
    pub fn susceptibility_at(&self, p: [f64; 3]) -> f64 {
        if self.in_body(p) {
            self.body.susceptibility_si
        } else {
            0.0
        }
    }

    /// Cell averages on `mesh` of a property (from `s`×`s`×`s` samples per
    /// cell); cells where `active` is false get 0.
    pub fn on_mesh(
        &self,
        mesh: &TensorMesh,
        active: &[bool],
        s: usize,
        f: impl Fn(&TrueModel, [f64; 3]) -> f64 + Sync,
    ) -> Vec<f64> {
        use rayon::prelude::*;
        let [nx, ny, _] = mesh.shape();
        (0..mesh.n_cells())
            .into_par_iter()
            .map(|c| {
                if !active[c] {
                    return 0.0;
                }
                let (i, j, k) = (c % nx, (c / nx) % ny, c / (nx * ny));
                let mut sum = 0.0;
                for a in 0..s {
                    for b in 0..s {
                        for d in 0..s {
                            let t = |lo: f64, hi: f64, q: usize| {
                                lo + (hi - lo) * (q as f64 + 0.5) / s as f64
                            };
                            sum += f(
                                self,
                                [
                                    t(mesh.x[i], mesh.x[i + 1], a),
                                    t(mesh.y[j], mesh.y[j + 1], b),
                                    t(mesh.z[k], mesh.z[k + 1], d),
                                ],
                            );
                        }
                    }
                }
                sum / (s * s * s) as f64
            })
            .collect()
    }

    /// Regional gravity at a point, mGal.
    pub fn regional_at(&self, x: f64, y: f64) -> f64 {
        let [c, gx, gy] = self.regional_mgal;
        c + gx * (x - self.origin_m[0]) / 1000.0 + gy * (y - self.origin_m[1]) / 1000.0
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn the_demo_truth_has_the_shape_it_claims() {
        let t = TrueModel::demo([0.0, 0.0]);
        let mut thick = (f64::INFINITY, f64::NEG_INFINITY);
        for i in 0..=60 {
            for j in 0..=40 {
                let c = t.cover_thickness_m(25.0 * i as f64, 25.0 * j as f64);
                thick = (thick.0.min(c), thick.1.max(c));
            }
        }
        assert!(thick.0 >= 20.0 && thick.1 <= 40.0, "{thick:?}");
        // The body's top edge is inside; the fault shifts it east and down.
        assert!(t.in_body([601.0, 300.0, 239.0]));
        assert!(!t.in_body([601.0, 700.0, 239.0]));
        assert!(t.in_body([681.0, 700.0, 199.0]));
        // Down dip 200 m at 55°: 114.7 m east, 163.8 m down.
        assert!(t.in_body([600.0 + 114.7, 300.0, 240.0 - 163.8]));
        assert!(!t.in_body([600.0 - 114.7, 300.0, 240.0 - 163.8]));
        assert_eq!(
            t.density_at([100.0, 100.0, t.terrain_m(100.0, 100.0) - 5.0]),
            -0.5
        );
        assert_eq!(
            t.density_at([100.0, 100.0, t.terrain_m(100.0, 100.0) + 5.0]),
            0.0
        );
    }
}
