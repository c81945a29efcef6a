//! Gauss–Legendre cubature over a prism, for stations far from it.
//!
//! The closed-form corner sums subtract eight terms of size ~ r·ln r to leave a
//! result of size ~ V/r², so in f64 they keep roughly 16 − 3·log₁₀(r/L)
//! significant digits at distance r from a prism of size L. Gauss–Legendre
//! cubature with n points per axis has a truncation error that falls like
//! (L/2r)^(2n). With the switch at r = [`FAR_FIELD_RATIO`] · L (L the space
//! diagonal) and n = 4, both errors are below about 10⁻¹¹ relative there, and
//! the cubature only gets better farther out (it is exact for the point-mass
//! and dipole limits).

/// Distance from the prism centre, in units of its space diagonal, beyond
/// which cubature replaces the closed form.
pub const FAR_FIELD_RATIO: f64 = 32.0;

/// Four-point Gauss–Legendre abscissae on [−1, 1] (Abramowitz & Stegun 1964,
/// Table 25.4; checked by the exactness test below).
pub const GL4_NODES: [f64; 4] = [
    -0.861_136_311_594_052_6,
    -0.339_981_043_584_856_3,
    0.339_981_043_584_856_3,
    0.861_136_311_594_052_6,
];
/// The matching weights (same source).
pub const GL4_WEIGHTS: [f64; 4] = [
    0.347_854_845_137_453_9,
    0.652_145_154_862_546_1,
    0.652_145_154_862_546_1,
    0.347_854_845_137_453_9,
];

/// Calls `f(u, w)` at each of the 64 cubature points of `prism`, with `u` the
/// point relative to `station` (metres) and `w` its weight (m³; the weights sum
/// to the prism's volume).
#[inline]
pub fn for_each_point(prism: &super::Prism, station: [f64; 3], mut f: impl FnMut([f64; 3], f64)) {
    let half = [
        0.5 * (prism.x[1] - prism.x[0]),
        0.5 * (prism.y[1] - prism.y[0]),
        0.5 * (prism.z[1] - prism.z[0]),
    ];
    let c = prism.centre();
    let jac = half[0] * half[1] * half[2];
    for (i, &ni) in GL4_NODES.iter().enumerate() {
        let ux = c[0] + half[0] * ni - station[0];
        for (j, &nj) in GL4_NODES.iter().enumerate() {
            let uy = c[1] + half[1] * nj - station[1];
            let wij = GL4_WEIGHTS[i] * GL4_WEIGHTS[j];
            for (k, &nk) in GL4_NODES.iter().enumerate() {
                let uz = c[2] + half[2] * nk - station[2];
                f([ux, uy, uz], wij * GL4_WEIGHTS[k] * jac);
            }
        }
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn four_point_rule_is_exact_to_degree_seven() {
        // ∫_{-1}^{1} t^p dt = 2/(p+1) for even p, 0 for odd p.
        for p in 0..=7 {
            let q: f64 = GL4_NODES
                .iter()
                .zip(GL4_WEIGHTS)
                .map(|(t, w)| w * t.powi(p))
                .sum();
            let exact = if p % 2 == 0 {
                2.0 / (p as f64 + 1.0)
            } else {
                0.0
            };
            assert!((q - exact).abs() < 1e-15, "degree {p}: {q} vs {exact}");
        }
        // And not exact at degree 8 (so the nodes are really the 4-point rule).
        let q8: f64 = GL4_NODES
            .iter()
            .zip(GL4_WEIGHTS)
            .map(|(t, w)| w * t.powi(8))
            .sum();
        assert!((q8 - 2.0 / 9.0).abs() > 1e-4);
    }

    #[test]
    fn weights_sum_to_the_volume() {
        let p = super::super::Prism::new([0.0, 2.0], [1.0, 4.0], [-5.0, -1.0]).unwrap();
        let mut s = 0.0;
        for_each_point(&p, [0.0; 3], |_, w| s += w);
        assert!((s - p.volume_m3()).abs() < 1e-12);
    }
}
