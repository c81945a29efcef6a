//! Grid benchmarks: minimum-curvature gridding of 1 million line-data points
//! onto a 1,000 × 1,000 grid, and a 2,048 × 2,048 upward continuation.
//!
//! `cargo bench -p fieldstone-core --bench grids`

use fieldstone_core::filter::spectral::{apply, Filter};
use fieldstone_core::grid::blank::blank_by_distance;
use fieldstone_core::grid::mincurv::{min_curvature, MinCurvSettings};
use fieldstone_core::grid::Grid2;
use fieldstone_core::progress::Silent;
use std::time::Instant;

fn field(x: f64, y: f64) -> f64 {
    let b = |cx: f64, cy: f64, d: f64, a: f64| {
        a * d / ((x - cx).powi(2) + (y - cy).powi(2) + d * d).powf(1.5)
    };
    b(3000.0, 4000.0, 400.0, 4.0e7) + b(7000.0, 6500.0, 800.0, 1.5e8) + 0.002 * x
}

fn main() {
    println!("{:<62} {:>10}", "grid step", "seconds");
    // 100 lines 100 m apart, 10 000 readings each at 1 m: 1 000 000 points.
    let (mut x, mut y, mut v) = (Vec::new(), Vec::new(), Vec::new());
    for l in 0..100 {
        for k in 0..10_000 {
            let (xx, yy) = (k as f64, 50.0 + 100.0 * l as f64);
            x.push(xx);
            y.push(yy);
            v.push(field(xx, yy));
        }
    }
    let template = Grid2::new_empty(0.0, 0.0, 10.0, 10.0, 1000, 1000).unwrap();
    let t = Instant::now();
    let mut g = min_curvature(&x, &y, &v, &template, &MinCurvSettings::default(), &Silent).unwrap();
    blank_by_distance(&mut g, &x, &y, 100.0);
    println!(
        "{:<62} {:>10.2}",
        "min curvature: 1,000,000 points -> 1,000 x 1,000, tension 0.25",
        t.elapsed().as_secs_f64()
    );
    let mut err: f64 = 0.0;
    for j in 100..900 {
        for i in 100..900 {
            err = err.max((g.get(i, j) - field(g.x_of(i), g.y_of(j))).abs());
        }
    }
    println!(
        "  (worst interior error {err:.3e} of a field with range ~{:.1})",
        v.iter().copied().fold(f64::NEG_INFINITY, f64::max)
            - v.iter().copied().fold(f64::INFINITY, f64::min)
    );

    let n = 2048;
    let mut big = Grid2::new_empty(0.0, 0.0, 10.0, 10.0, n, n).unwrap();
    for j in 0..n {
        for i in 0..n {
            big.values[i + n * j] = field(big.x_of(i) * 0.5, big.y_of(j) * 0.5);
        }
    }
    let t = Instant::now();
    let up = apply(
        &big,
        &Filter::UpwardContinuation { height_m: 200.0 },
        &Silent,
    )
    .unwrap();
    println!(
        "{:<62} {:>10.2}",
        "upward continuation 2,048 x 2,048",
        t.elapsed().as_secs_f64()
    );
    std::hint::black_box(up);
}
