//! Reductions against checks outside their formulas: the curvature
//! correction against a numerical integration of the spherical cap, and the
//! terrain correction against Hammer's (1939) ring formula.

use fieldstone_core::grid::Grid2;
use fieldstone_core::progress::Silent;
use fieldstone_core::reduce::gravity::{
    bouguer_slab_mgal, curvature_correction_mgal, CAP_RADIUS_M, EARTH_RADIUS_M,
};
use fieldstone_core::reduce::terrain::{terrain_corrections, TerrainSettings};
use fieldstone_tests::{gl8, G};
use std::f64::consts::PI;

/// Vertical attraction (mGal) at the top of a spherical cap shell of angular
/// radius S/R₀ between radii R₀ and R₀ + h, for density ρ (g/cm³), by
/// integrating in radius the closed-form attraction of a thin spherical cap
/// at a point on its axis (derived in the test: for a shell of radius r seen
/// from radius R, ∫ (R − r cos ψ) / L³ d(cos ψ) = [L − (R² − r²)/L] / (R·2Rr)).
fn cap_by_integration(h: f64, rho_g_cc: f64) -> f64 {
    let rs = EARTH_RADIUS_M + h;
    let alpha = CAP_RADIUS_M / EARTH_RADIUS_M;
    let shell = |r: f64| {
        let b = 2.0 * rs * r;
        let la = (rs * rs + r * r - b * alpha.cos()).sqrt();
        let fa = -(la - (rs * rs - r * r) / la) / (rs * b);
        let f1 = 1.0 / (rs * rs);
        2.0 * PI * r * r * (f1 - fa)
    };
    // Composite 8-point Gauss–Legendre in radius (A&S Table 25.4 nodes).
    let m = 64;
    let step = h / m as f64;
    let mut s = 0.0;
    for k in 0..m {
        let a = EARTH_RADIUS_M + k as f64 * step;
        for (t, w) in gl8() {
            s += w * 0.5 * step * shell(a + 0.5 * step * (t + 1.0));
        }
    }
    G * rho_g_cc * 1000.0 * s * 1e5
}

#[test]
fn curvature_correction_equals_slab_minus_integrated_cap() {
    for h in [10.0, 250.0, 1000.0, 2500.0, 4000.0] {
        let want = bouguer_slab_mgal(h, 2.67) - cap_by_integration(h, 2.67);
        let got = curvature_correction_mgal(h, 2.67);
        assert!((got - want).abs() < 1e-6, "h = {h}: {got} vs {want}");
    }
    // The familiar size of the effect: about −1.11 mGal at 1000 m for 2.67 g/cm³
    // (the cap attracts more than the slab); common practice figure.
    assert!((curvature_correction_mgal(1000.0, 2.67) + 1.11).abs() < 0.01);
}

#[test]
fn a_ring_of_terrain_matches_hammers_formula() {
    // Hammer (1939): a ring of height h between radii r₁ and r₂ around the
    // station attracts 2πGρ(r₂ − r₁ + √(r₁² + h²) − √(r₂² + h²)).
    let (r1, r2, h, rho) = (100.0, 300.0, 50.0, 2.67);
    let cell = 2.0;
    let n = 340;
    let half = n as f64 * cell / 2.0;
    let mut g = Grid2::new_empty(-half + cell / 2.0, -half + cell / 2.0, cell, cell, n, n).unwrap();
    for j in 0..n {
        for i in 0..n {
            let r = g.x_of(i).hypot(g.y_of(j));
            g.values[i + n * j] = if (r1..r2).contains(&r) { h } else { 0.0 };
        }
    }
    let s = TerrainSettings {
        density_g_cc: rho,
        inner_radius_m: 0.0,
        outer_radius_m: 330.0,
        exact_cells: 8.0,
    };
    let tc = terrain_corrections(&g, None, &[[0.0, 0.0, 0.0]], &s, &Silent).unwrap()[0];
    let hammer = 2.0
        * PI
        * G
        * rho
        * 1000.0
        * (r2 - r1 + (r1 * r1 + h * h).sqrt() - (r2 * r2 + h * h).sqrt())
        * 1e5;
    eprintln!(
        "terrain {tc:.5} mGal, Hammer {hammer:.5} mGal, relative difference {:.2e}",
        (tc - hammer) / hammer
    );
    assert!(
        ((tc - hammer) / hammer).abs() < 0.005,
        "terrain {tc} vs Hammer {hammer}"
    );
}
