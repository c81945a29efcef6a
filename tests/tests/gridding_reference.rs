//! Gridding checks against closed-form surfaces: planes and quadratics are
//! biharmonic, so minimum curvature (T = 0) through their samples reproduces
//! them away from the edges; a buried sphere's anomaly (Blakely 1995, eq.
//! 3.18: g_z = G M z / r³) sampled on 100 m lines is recovered to 1 % of its
//! peak.

use fieldstone_core::grid::mincurv::{min_curvature, MinCurvSettings};
use fieldstone_core::grid::Grid2;
use fieldstone_core::progress::Silent;
use fieldstone_tests::G;

fn lines(
    f: impl Fn(f64, f64) -> f64,
    line_spacing: f64,
    step: f64,
    extent: f64,
) -> (Vec<f64>, Vec<f64>, Vec<f64>) {
    let (mut x, mut y, mut v) = (vec![], vec![], vec![]);
    let mut yy = 0.0;
    while yy <= extent + 1e-9 {
        let mut xx = 0.0;
        while xx <= extent + 1e-9 {
            x.push(xx);
            y.push(yy);
            v.push(f(xx, yy));
            xx += step;
        }
        yy += line_spacing;
    }
    (x, y, v)
}

#[test]
fn planes_and_quadratics_sampled_on_lines_are_reproduced() {
    let extent = 2000.0;
    let cell = 25.0;
    let n = (extent / cell) as usize + 1;
    let template = Grid2::new_empty(0.0, 0.0, cell, cell, n, n).unwrap();
    let s = MinCurvSettings {
        tension: 0.0,
        convergence: 1e-10,
        max_iterations: 200_000,
    };
    for (name, f) in [
        (
            "plane",
            Box::new(|x: f64, y: f64| 12.0 + 0.03 * x - 0.02 * y) as Box<dyn Fn(f64, f64) -> f64>,
        ),
        (
            "quadratic",
            Box::new(|x: f64, y: f64| {
                5.0 + 2e-5 * (x - 900.0).powi(2) - 1e-5 * (y - 1100.0).powi(2) + 3e-6 * x * y
            }),
        ),
    ] {
        let (x, y, v) = lines(&f, 100.0, 25.0, extent);
        let g = min_curvature(&x, &y, &v, &template, &s, &Silent).unwrap();
        let range = v.iter().copied().fold(f64::NEG_INFINITY, f64::max)
            - v.iter().copied().fold(f64::INFINITY, f64::min);
        let mut worst: f64 = 0.0;
        // Nodes inside the data, away from the edges (where the natural
        // boundary conditions of the method bend any curved surface).
        for j in 20..n - 20 {
            for i in 20..n - 20 {
                worst = worst.max((g.get(i, j) - f(g.x_of(i), g.y_of(j))).abs() / range);
            }
        }
        eprintln!("{name}: worst interior error {worst:.2e} of the range");
        assert!(worst < 1e-6, "{name}: {worst}");
    }
}

#[test]
fn a_sphere_anomaly_on_lines_is_recovered_within_one_percent_of_its_peak() {
    // Sphere of radius 150 m, contrast 0.3 g/cm³, centre 300 m deep under (1000, 1000).
    let mass = 4.0 / 3.0 * std::f64::consts::PI * 150.0f64.powi(3) * 300.0;
    let gz = |x: f64, y: f64| {
        let (dx, dy, dz) = (x - 1000.0, y - 1000.0, 300.0);
        G * mass * dz / (dx * dx + dy * dy + dz * dz).powf(1.5) * 1e5
    };
    let (x, y, v) = lines(gz, 100.0, 10.0, 2000.0);
    let cell = 25.0;
    let n = 81;
    let template = Grid2::new_empty(0.0, 0.0, cell, cell, n, n).unwrap();
    let g = min_curvature(&x, &y, &v, &template, &MinCurvSettings::default(), &Silent).unwrap();
    let peak = gz(1000.0, 1000.0);
    let (mut ss, mut k) = (0.0, 0usize);
    for j in 4..n - 4 {
        for i in 4..n - 4 {
            ss += (g.get(i, j) - gz(g.x_of(i), g.y_of(j))).powi(2);
            k += 1;
        }
    }
    let rms = (ss / k as f64).sqrt();
    eprintln!(
        "sphere: RMS error {:.3e} mGal = {:.3} % of the peak {peak:.3} mGal",
        rms,
        100.0 * rms / peak
    );
    assert!(rms < 0.01 * peak, "RMS {rms} vs peak {peak}");
    // Data that coincide with nodes are honoured.
    for (xx, yy) in [(1000.0, 1000.0), (500.0, 300.0), (1500.0, 1700.0)] {
        let (i, j) = ((xx / cell) as usize, (yy / cell) as usize);
        assert!((g.get(i, j) - gz(xx, yy)).abs() < 1e-9, "node ({i},{j})");
    }
}
