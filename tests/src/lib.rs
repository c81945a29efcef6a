//! Shared helpers for Fieldstone's reference tests: an independent numerical
//! cubature of the prism fields, written without any code from `core`, so the
//! closed forms there can be checked against something outside them; and
//! the block case several inversion tests share ([`block`]); an invented
//! relative gravity survey of several files ([`field_survey`]).

pub mod block;
pub mod field_survey;

/// Eight-point Gauss–Legendre abscissae (positive half) and weights on
/// [−1, 1], from Abramowitz & Stegun (1964), Table 25.4. The test
/// `gl8_is_exact_to_degree_fifteen` confirms they were copied correctly.
pub const GL8_POS_NODES: [f64; 4] = [
    0.183_434_642_495_649_8,
    0.525_532_409_916_329,
    0.796_666_477_413_626_7,
    0.960_289_856_497_536_3,
];
pub const GL8_POS_WEIGHTS: [f64; 4] = [
    0.362_683_783_378_362,
    0.313_706_645_877_887_3,
    0.222_381_034_453_374_5,
    0.101_228_536_290_376_3,
];

/// The full eight-point rule as (node, weight) pairs.
pub fn gl8() -> [(f64, f64); 8] {
    let mut out = [(0.0, 0.0); 8];
    for i in 0..4 {
        out[i] = (-GL8_POS_NODES[3 - i], GL8_POS_WEIGHTS[3 - i]);
        out[4 + i] = (GL8_POS_NODES[i], GL8_POS_WEIGHTS[i]);
    }
    out
}

/// Composite Gauss–Legendre cubature of `f(u)` over the box `b` = [[x0,x1],[y0,y1],[z0,z1]],
/// with `m` equal sub-intervals per axis and eight points per sub-interval.
/// `u` is the integration point relative to `station`. Returns the sum of
/// `f(u)·w` for vector-valued `f` with `N` components.
pub fn cubature<const N: usize>(
    b: [[f64; 2]; 3],
    station: [f64; 3],
    m: usize,
    f: impl Fn([f64; 3]) -> [f64; N],
) -> [f64; N] {
    let rule = gl8();
    let mut acc = [0.0; N];
    let h = [
        (b[0][1] - b[0][0]) / m as f64,
        (b[1][1] - b[1][0]) / m as f64,
        (b[2][1] - b[2][0]) / m as f64,
    ];
    let jac = h[0] * h[1] * h[2] / 8.0;
    for a in 0..m {
        for bb in 0..m {
            for c in 0..m {
                let lo = [
                    b[0][0] + a as f64 * h[0],
                    b[1][0] + bb as f64 * h[1],
                    b[2][0] + c as f64 * h[2],
                ];
                for &(tx, wx) in &rule {
                    let x = lo[0] + 0.5 * h[0] * (tx + 1.0) - station[0];
                    for &(ty, wy) in &rule {
                        let y = lo[1] + 0.5 * h[1] * (ty + 1.0) - station[1];
                        for &(tz, wz) in &rule {
                            let z = lo[2] + 0.5 * h[2] * (tz + 1.0) - station[2];
                            let v = f([x, y, z]);
                            let w = wx * wy * wz * jac;
                            for k in 0..N {
                                acc[k] += v[k] * w;
                            }
                        }
                    }
                }
            }
        }
    }
    acc
}

/// Number of sub-intervals per axis so that each is no longer than the
/// station's distance to the box: then the nearest singularity lies outside
/// the Bernstein ellipse with ρ ≈ 5.8 and eight-point Gauss–Legendre is
/// accurate to about ρ⁻¹⁶ ≈ 10⁻¹² per sub-interval.
pub fn subdivisions_for(b: [[f64; 2]; 3], station: [f64; 3]) -> usize {
    let mut d2: f64 = 0.0;
    let mut longest: f64 = 0.0;
    for a in 0..3 {
        let [lo, hi] = b[a];
        let v = station[a];
        let d = if v < lo {
            lo - v
        } else if v > hi {
            v - hi
        } else {
            0.0
        };
        d2 += d * d;
        longest = longest.max(hi - lo);
    }
    let dist = d2.sqrt();
    assert!(dist > 0.0, "cubature needs a station outside the box");
    ((longest / dist).ceil() as usize).clamp(2, 40)
}

/// CODATA 2018 G and unit factors, restated here so these tests do not lean
/// on the constants they check.
pub const G: f64 = 6.674_30e-11;

/// g_z (positive down, mGal) of a box of density `rho_gcc` by cubature:
/// −G ρ ∫ u_z/|u|³ dV.
pub fn gz_by_cubature(b: [[f64; 2]; 3], station: [f64; 3], rho_gcc: f64) -> [f64; 3] {
    let m = subdivisions_for(b, station);
    let k = G * rho_gcc * 1000.0 * 1.0e5;
    let s = cubature(b, station, m, |u| {
        let r2 = u[0] * u[0] + u[1] * u[1] + u[2] * u[2];
        let r3 = r2 * r2.sqrt();
        [u[0] / r3, u[1] / r3, u[2] / r3]
    });
    [k * s[0], k * s[1], -k * s[2]]
}

/// Anomalous B (nT, x east, y north, z up) of a box carrying magnetization
/// `m` (A/m) by cubature of the dipole field (μ₀/4π)(3(m·R̂)R̂ − m)/R³.
pub fn b_by_cubature(b: [[f64; 2]; 3], station: [f64; 3], m: [f64; 3]) -> [f64; 3] {
    let sub = subdivisions_for(b, station);
    let s = cubature(b, station, sub, |u| {
        // R = station − source = −u.
        let r2 = u[0] * u[0] + u[1] * u[1] + u[2] * u[2];
        let r = r2.sqrt();
        let mr = -(m[0] * u[0] + m[1] * u[1] + m[2] * u[2]);
        let r5 = r2 * r2 * r;
        [
            (-3.0 * mr * u[0] - r2 * m[0]) / r5,
            (-3.0 * mr * u[1] - r2 * m[1]) / r5,
            (-3.0 * mr * u[2] - r2 * m[2]) / r5,
        ]
    });
    // μ₀/4π = 10⁻⁷ T·m/A = 100 nT·m/A.
    [100.0 * s[0], 100.0 * s[1], 100.0 * s[2]]
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn gl8_is_exact_to_degree_fifteen() {
        for p in 0..=15 {
            let q: f64 = gl8().iter().map(|(t, w)| w * t.powi(p)).sum();
            let exact = if p % 2 == 0 {
                2.0 / (p as f64 + 1.0)
            } else {
                0.0
            };
            assert!((q - exact).abs() < 1e-15, "degree {p}");
        }
        let q16: f64 = gl8().iter().map(|(t, w)| w * t.powi(16)).sum();
        assert!((q16 - 2.0 / 17.0).abs() > 1e-8);
    }

    #[test]
    fn cubature_integrates_a_smooth_function() {
        // ∫∫∫ x² y z over [0,1]×[0,2]×[0,3] = (1/3)(2)(9/2) = 3.
        let v = cubature([[0.0, 1.0], [0.0, 2.0], [0.0, 3.0]], [0.0; 3], 2, |u| {
            [u[0] * u[0] * u[1] * u[2]]
        });
        assert!((v[0] - 3.0).abs() < 1e-13);
    }
}
