//! Inversion benchmark (dense operator): sizes, times, iterations, CG
//! iterations and the matrix–vector product rate against memory bandwidth.
//!
//! `cargo bench -p fieldstone-core --bench invert`

use fieldstone_core::constraint::build::{build, Assignments, Defaults, Layer};
use fieldstone_core::constraint::region::{Inputs, Region};
use fieldstone_core::invert::solver::{invert, Problem};
use fieldstone_core::invert::InversionSettings;
use fieldstone_core::mesh::recipe::MeshRecipe;
use fieldstone_core::mesh::topo::active_cells;
use fieldstone_core::operator::dense::{DenseOperator, Survey};
use fieldstone_core::operator::Operator;
use fieldstone_core::progress::Silent;
use std::time::Instant;

/// The FFT case: 2,500 gridded data over 50 × 50 × 40 = 100,000 cells,
/// bounds + reference + focusing.
fn fft_case() {
    use fieldstone_core::operator::fft::FftOperator;
    let cell = 20.0;
    let mesh = MeshRecipe::uniform(cell, cell, [0.0, 1000.0], [0.0, 1000.0], 0.0, 800.0)
        .build()
        .unwrap();
    let active: Vec<usize> = (0..mesh.n_cells()).collect();
    let [nx, ny, nz] = mesh.shape();
    let t = Instant::now();
    let op =
        FftOperator::build(&mesh, &active, 1.0, &vec![true; nx * ny], Survey::Gravity).unwrap();
    let build_s = t.elapsed().as_secs_f64();
    let truth: Vec<f64> = (0..mesh.n_cells())
        .map(|c| {
            let (i, j, k) = (c % nx, (c / nx) % ny, c / (nx * ny));
            if (18..26).contains(&i) && (20..30).contains(&j) && (24..32).contains(&k) {
                0.25
            } else {
                0.0
            }
        })
        .collect();
    let mut data = vec![0.0; op.n_data()];
    op.apply(&truth, &mut data);
    let mut seed = 5u64;
    for d in &mut data {
        seed = seed
            .wrapping_mul(6364136223846793005)
            .wrapping_add(1442695040888963407);
        *d += 0.002 * (((seed >> 11) as f64 / (1u64 << 53) as f64) - 0.5) * 3.46;
    }
    let act = active_cells(&mesh, None, false, false).unwrap();
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
                x: [0.0, 1000.0],
                y: [0.0, 1000.0],
                z: [-60.0, 0.0],
            },
            assign: Assignments {
                reference: Some(0.0),
                reference_weight: Some(100.0),
                ..Default::default()
            },
        },
    ];
    let k = build(
        &mesh,
        &act,
        &layers,
        Defaults::density(),
        &Inputs::default(),
    )
    .unwrap()
    .0;
    let unc = vec![0.002; data.len()];
    let pb = Problem {
        mesh: &mesh,
        constraints: &k,
        active: &active,
        data: &data,
        uncertainty: &unc,
        reference_elevation_m: 1.0,
    };
    let t = Instant::now();
    let r = invert(
        &op,
        &pb,
        &InversionSettings {
            norms: [0.0, 2.0, 2.0, 2.0],
            alpha_s: 1e-2,
            ..Default::default()
        },
        &Silent,
    )
    .unwrap();
    let cg: usize = r.log.iter().map(|l| l.cg_iterations).sum();
    println!("FFT: {} data, {} cells ({nz} layers): kernels {:.2} s, inversion {:.1} s, {} iterations, {} CG, chi {:.3}, {}", data.len(), op.n_cells(), build_s, t.elapsed().as_secs_f64(), r.log.len(), cg, r.summary.chi_factor, r.summary.stopped_because);
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
        let mesh = MeshRecipe::uniform(
            cell,
            cell,
            [0.0, cell * n_side as f64],
            [0.0, cell * n_side as f64],
            0.0,
            cell * nz as f64,
        )
        .build()
        .unwrap();
        let active: Vec<usize> = (0..mesh.n_cells()).collect();
        let span = cell * n_side as f64;
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
        let truth: Vec<f64> = (0..mesh.n_cells())
            .map(|c| {
                let (i, j, k) = (c % nx, (c / nx) % ny, c / (nx * ny));
                if (nx / 3..nx / 2).contains(&i)
                    && (ny / 3..ny / 2).contains(&j)
                    && (nz / 2..3 * nz / 4).contains(&k)
                {
                    0.25
                } else {
                    0.0
                }
            })
            .collect();
        let mut data = vec![0.0; stations.len()];
        op.apply(&truth, &mut data);
        let mut seed = 11u64;
        for d in &mut data {
            seed = seed
                .wrapping_mul(6364136223846793005)
                .wrapping_add(1442695040888963407);
            *d += 0.002 * (((seed >> 11) as f64 / (1u64 << 53) as f64) - 0.5) * 3.46;
        }
        let act = active_cells(&mesh, None, false, false).unwrap();
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
                    z: [-3.0 * cell, 0.0],
                },
                assign: Assignments {
                    reference: Some(0.0),
                    reference_weight: Some(100.0),
                    ..Default::default()
                },
            },
        ];
        let k = build(
            &mesh,
            &act,
            &layers,
            Defaults::density(),
            &Inputs::default(),
        )
        .unwrap()
        .0;
        let unc = vec![0.002; data.len()];
        let pb = Problem {
            mesh: &mesh,
            constraints: &k,
            active: &active,
            data: &data,
            uncertainty: &unc,
            reference_elevation_m: 1.0,
        };
        let t = Instant::now();
        let r = invert(
            &op,
            &pb,
            &InversionSettings {
                norms: [0.0, 2.0, 2.0, 2.0],
                alpha_s: 1e-2,
                ..Default::default()
            },
            &Silent,
        )
        .unwrap();
        let inv_s = t.elapsed().as_secs_f64();
        let cg: usize = r.log.iter().map(|l| l.cg_iterations).sum();
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
            data.len(),
            op.n_cells(),
            build_s,
            inv_s,
            r.log.len(),
            cg,
            r.summary.chi_factor,
            gbs
        );
    }
}
