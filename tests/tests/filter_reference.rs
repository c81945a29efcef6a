//! Wavenumber filters against closed-form fields (Blakely 1995): a point
//! mass continued upward, the vertical derivative of a sphere's gravity, and
//! the reduction to the pole of an induced dipole.

use fieldstone_core::filter::spectral::{apply, Filter};
use fieldstone_core::grid::Grid2;
use fieldstone_core::progress::Silent;
use fieldstone_tests::G;

fn grid_of(f: impl Fn(f64, f64) -> f64, n: usize, cell: f64) -> Grid2 {
    let half = (n - 1) as f64 * cell / 2.0;
    let mut g = Grid2::new_empty(-half, -half, cell, cell, n, n).unwrap();
    for j in 0..n {
        for i in 0..n {
            g.values[i + n * j] = f(g.x_of(i), g.y_of(j));
        }
    }
    g
}

/// Worst difference over the central half of the grid, relative to the peak
/// of `want`.
fn interior_error(got: &Grid2, want: impl Fn(f64, f64) -> f64) -> f64 {
    let n = got.nx;
    let peak = (0..n * n)
        .map(|k| want(got.x_of(k % n), got.y_of(k / n)).abs())
        .fold(0.0, f64::max);
    let mut worst: f64 = 0.0;
    for j in n / 4..3 * n / 4 {
        for i in n / 4..3 * n / 4 {
            worst = worst.max((got.get(i, j) - want(got.x_of(i), got.y_of(j))).abs());
        }
    }
    worst / peak
}

const MASS: f64 = 2.0e11; // kg
const DEPTH: f64 = 400.0; // m

fn gz_at(x: f64, y: f64, z_up: f64) -> f64 {
    let d = DEPTH + z_up;
    G * MASS * d / (x * x + y * y + d * d).powf(1.5) * 1e5
}

#[test]
fn a_point_mass_continued_upward_matches_its_field_at_the_new_height() {
    let g = grid_of(|x, y| gz_at(x, y, 0.0), 257, 25.0);
    let up = apply(&g, &Filter::UpwardContinuation { height_m: 150.0 }, &Silent).unwrap();
    let e = interior_error(&up, |x, y| gz_at(x, y, 150.0));
    eprintln!(
        "upward continuation: worst interior error {:.3} % of the peak",
        100.0 * e
    );
    assert!(e < 0.01, "{e}");
}

#[test]
fn the_vertical_derivative_of_a_sphere_matches_the_analytic_derivative() {
    // ∂g_z/∂z (z down) at the surface = G M (2d² − ρ²)/r⁵ for a point mass
    // (a uniform sphere outside itself) at depth d, ρ the horizontal distance.
    let g = grid_of(|x, y| gz_at(x, y, 0.0), 257, 25.0);
    let vd = apply(&g, &Filter::VerticalDerivative, &Silent).unwrap();
    let want = |x: f64, y: f64| {
        let rho2 = x * x + y * y;
        G * MASS * (2.0 * DEPTH * DEPTH - rho2) / (rho2 + DEPTH * DEPTH).powf(2.5) * 1e5
    };
    let e = interior_error(&vd, want);
    eprintln!(
        "vertical derivative: worst interior error {:.3} % of the peak",
        100.0 * e
    );
    assert!(e < 0.01, "{e}");
}

/// TMI (nT) of an induced dipole of moment `moment` (A·m²) at depth `d` in a
/// field of inclination `inc`, declination `dec` (dipole formula, Blakely
/// 1995 eq. 4.13), x east, y north.
fn dipole_tmi(x: f64, y: f64, inc: f64, dec: f64) -> f64 {
    let (i, dd) = (inc.to_radians(), dec.to_radians());
    let f = [i.cos() * dd.sin(), i.cos() * dd.cos(), -i.sin()]; // z up
    let moment = 1.0e8;
    let r = [x, y, DEPTH];
    let rn = (x * x + y * y + DEPTH * DEPTH).sqrt();
    let mr = moment * (f[0] * r[0] + f[1] * r[1] + f[2] * r[2]) / rn;
    let b: Vec<f64> = (0..3)
        .map(|a| 100.0 * (3.0 * mr * r[a] / rn - moment * f[a]) / rn.powi(3))
        .collect();
    b[0] * f[0] + b[1] * f[1] + b[2] * f[2]
}

#[test]
fn reduction_to_the_pole_of_a_dipole_at_60_degrees_matches_the_dipole_at_the_pole() {
    let g = grid_of(|x, y| dipole_tmi(x, y, 60.0, 10.0), 257, 25.0);
    let rtp = apply(
        &g,
        &Filter::ReductionToPole {
            inclination_deg: 60.0,
            declination_deg: 10.0,
            min_inclination_deg: 20.0,
        },
        &Silent,
    )
    .unwrap();
    let e = interior_error(&rtp, |x, y| dipole_tmi(x, y, 90.0, 0.0));
    eprintln!(
        "reduction to the pole: worst interior error {:.3} % of the peak",
        100.0 * e
    );
    assert!(e < 0.01, "{e}");
}
