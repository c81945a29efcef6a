//! Inversion benchmark: sizes, times, iterations, CG iterations and the
//! dense matrix–vector product rate.
//!
//! `cargo bench -p fieldstone-core --bench invert`
//! FIELDSTONE_BENCH_LARGE=1 adds 2,500 data × 50,000 cells (dense);
//! FIELDSTONE_BENCH_FFT=1 runs the FFT case (2,500 data × 100,000 cells).

use fieldstone_core::constraint::build::{build, Assignments, Defaults, Layer};
use fieldstone_core::constraint::region::{Inputs, Region};
use fieldstone_core::invert::solver::{invert, Problem, RunResult};
use fieldstone_core::invert::InversionSettings;
use fieldstone_core::mesh::recipe::MeshRecipe;
use fieldstone_core::mesh::topo::active_cells;
use fieldstone_core::mesh::TensorMesh;
use fieldstone_core::operator::dense::{DenseOperator, Survey};
use fieldstone_core::operator::fft::FftOperator;
use fieldstone_core::operator::Operator;
use fieldstone_core::progress::Silent;
use std::ops::Range;
use std::time::Instant;

/// A block of 0.25 g/cm³ over the given column and layer ranges.
fn block(mesh: &TensorMesh, i: Range<usize>, j: Range<usize>, k: Range<usize>) -> Vec<f64> {
    let [nx, ny, _] = mesh.shape();
    (0..mesh.n_cells())
        .map(|c| {
            let (a, b, d) = (c % nx, (c / nx) % ny, c / (nx * ny));
            if i.contains(&a) && j.contains(&b) && k.contains(&d) {
                0.25
            } else {
                0.0
            }
        })
        .collect()
}

/// Synthetic data from `truth` with uniform noise of standard deviation
/// 0.002 mGal, then bounds [0, 0.5] + a weighted zero reference in the top
/// 60 m + focusing (p = 0). Returns the run and its time in seconds.
fn synthetic_run<O: Operator>(
    op: &O,
    mesh: &TensorMesh,
    active: &[usize],
    truth: &[f64],
    span: f64,
    seed: u64,
) -> (RunResult, f64) {
    let mut data = vec![0.0; op.n_data()];
    op.apply(truth, &mut data);
    let mut s = seed;
    for d in &mut data {
        s = s
            .wrapping_mul(6364136223846793005)
            .wrapping_add(1442695040888963407);
        *d += 0.002 * (((s >> 11) as f64 / (1u64 << 53) as f64) - 0.5) * 3.46;
    }
    let act = active_cells(mesh, None, false, false).unwrap();
    let layers = [
        Layer {
            name: "bounds".into(),
            enabled: true,
            region: Region::Whole,
            assign: Assignments {
                lower: Some(0.0),
                upper: Some(0.5),
                ..Default::default()
            },
        },
        Layer {
            name: "reference".into(),
            enabled: true,
            region: Region::Box {
                x: [0.0, span],
                y: [0.0, span],
                z: [-60.0, 0.0],
            },
            assign: Assignments {
                reference: Some(0.0),
                reference_weight: Some(100.0),
                ..Default::default()
            },
        },
    ];
    let k = build(mesh, &act, &layers, Defaults::density(), &Inputs::default())
        .unwrap()
        .0;
    let unc = vec![0.002; data.len()];
    let pb = Problem {
        mesh,
        constraints: &k,
        active,
        data: &data,
        uncertainty: &unc,
        reference_elevation_m: 1.0,
    };
    let t = Instant::now();
    let r = invert(
        op,
        &pb,
        &InversionSettings {
            norms: [0.0, 2.0, 2.0, 2.0],
            alpha_s: 1e-2,
            ..Default::default()
        },
        &Silent,
    )
    .unwrap();
    (r, t.elapsed().as_secs_f64())
}

fn cg_total(r: &RunResult) -> usize {
    r.log.iter().map(|l| l.cg_iterations).sum()
}

/// The FFT case: 2,500 gridded data over 50 × 50 × 40 = 100,000 cells.
fn fft_case() {
    let mesh = MeshRecipe::uniform(20.0, 20.0, [0.0, 1000.0], [0.0, 1000.0], 0.0, 800.0)
        .build()
        .unwrap();
    let active: Vec<usize> = (0..mesh.n_cells()).collect();
    let [nx, ny, nz] = mesh.shape();
    let t = Instant::now();
    let op =
        FftOperator::build(&mesh, &active, 1.0, &vec![true; nx * ny], Survey::Gravity).unwrap();
    let build_s = t.elapsed().as_secs_f64();
    let truth = block(&mesh, 18..26, 20..30, 24..32);
    let (r, inv_s) = synthetic_run(&op, &mesh, &active, &truth, 1000.0, 5);
    println!(
        "FFT: {} data, {} cells ({nz} layers): kernels {build_s:.2} s, inversion {inv_s:.1} s, {} iterations, {} CG, chi {:.3}, {}",
        op.n_data(),
        op.n_cells(),
        r.log.len(),
        cg_total(&r),
        r.summary.chi_factor,
        r.summary.stopped_because
    );
}

fn main() {
    if std::env::var("FIELDSTONE_BENCH_FFT").is_ok() {
        fft_case();
        return;
    }
    // Memory bandwidth: stream-read a 1 GB f32 buffer.
    let big = vec![1.0f32; 250_000_000];
    let t = Instant::now();
    let s: f64 = big.iter().map(|v| *v as f64).sum();
    let bw = 1.0e9 / t.elapsed().as_secs_f64();
    std::hint::black_box(s);
    drop(big);
    println!("single-thread read bandwidth: {:.1} GB/s", bw / 1e9);
    println!(
        "{:>6} {:>8} {:>9} {:>9} {:>6} {:>6} {:>10} {:>10}",
        "data", "cells", "build s", "invert s", "iters", "CG", "chi", "product GB/s"
    );
    let cases: Vec<(usize, usize, usize)> = match std::env::var("FIELDSTONE_BENCH_LARGE") {
        Ok(_) => vec![(30, 15, 30), (50, 20, 50)],
        Err(_) => vec![(30, 15, 30)],
    };
    for (n_side, nz, st_side) in cases {
        let cell = 20.0;
        let span = cell * n_side as f64;
        let mesh = MeshRecipe::uniform(cell, cell, [0.0, span], [0.0, span], 0.0, cell * nz as f64)
            .build()
            .unwrap();
        let active: Vec<usize> = (0..mesh.n_cells()).collect();
        let stations: Vec<[f64; 3]> = (0..st_side * st_side)
            .map(|s| {
                [
                    span * ((s % st_side) as f64 + 0.5) / st_side as f64,
                    span * ((s / st_side) as f64 + 0.5) / st_side as f64,
                    1.0,
                ]
            })
            .collect();
        let t = Instant::now();
        let op = DenseOperator::build(&mesh, &active, &stations, Survey::Gravity, 8 << 30, &Silent)
            .unwrap();
        let build_s = t.elapsed().as_secs_f64();
        let [nx, ny, _] = mesh.shape();
        let truth = block(&mesh, nx / 3..nx / 2, ny / 3..ny / 2, nz / 2..3 * nz / 4);
        let (r, inv_s) = synthetic_run(&op, &mesh, &active, &truth, span, 11);
        // Product rate.
        let m = vec![0.1; op.n_cells()];
        let mut out = vec![0.0; op.n_data()];
        let t = Instant::now();
        for _ in 0..10 {
            op.apply(&m, &mut out);
        }
        let gbs = 10.0 * (op.n_cells() * op.n_data() * 4) as f64 / t.elapsed().as_secs_f64() / 1e9;
        println!(
            "{:>6} {:>8} {:>9.2} {:>9.2} {:>6} {:>6} {:>10.3} {:>10.1}",
            op.n_data(),
            op.n_cells(),
            build_s,
            inv_s,
            r.log.len(),
            cg_total(&r),
            r.summary.chi_factor,
            gbs
        );
    }
}
