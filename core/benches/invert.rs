//! Inversion benchmark: one table of sizes, times, iterations, CG
//! iterations, chi-factor and peak resident memory per case, the machine's
//! memory bandwidth and the dense product rate against it.
//!
//! `cargo bench -p fieldstone-core --bench invert` runs the dense
//! 900 × 13,500 case and the FFT 2,500 × 100,000 case;
//! FIELDSTONE_BENCH_LARGE=1 adds dense 2,500 × 50,000 (a 500 MB matrix);
//! FIELDSTONE_BENCH_HUGE=1 adds FFT 10,000 × 1,000,000;
//! FIELDSTONE_BENCH_ONLY=dense|fft|huge runs one case;
//! FIELDSTONE_BENCH_PARTS=N times the pieces of one CG step on an N³ mesh.

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

/// An n × n × nz mesh of 20 m cells with every cell active, and `side`²
/// stations 1 m above it at the centres of a regular grid.
fn square_case(n: usize, nz: usize, side: usize) -> (TensorMesh, Vec<usize>, Vec<[f64; 3]>) {
    let span = 20.0 * n as f64;
    let mesh = MeshRecipe::uniform(20.0, 20.0, [0.0, span], [0.0, span], 0.0, 20.0 * nz as f64)
        .build()
        .unwrap();
    let active: Vec<usize> = (0..mesh.n_cells()).collect();
    let stations: Vec<[f64; 3]> = (0..side * side)
        .map(|s| {
            [
                span * ((s % side) as f64 + 0.5) / side as f64,
                span * ((s / side) as f64 + 0.5) / side as f64,
                1.0,
            ]
        })
        .collect();
    (mesh, active, stations)
}

/// Peak resident memory since the last reset, MB (Linux; None elsewhere).
fn peak_mb() -> Option<f64> {
    let s = std::fs::read_to_string("/proc/self/status").ok()?;
    let line = s.lines().find(|l| l.starts_with("VmHWM:"))?;
    let kb: f64 = line.split_whitespace().nth(1)?.parse().ok()?;
    Some(kb / 1024.0)
}

/// Resets the peak to the current resident size (Linux ≥ 4.0).
fn reset_peak() {
    let _ = std::fs::write("/proc/self/clear_refs", "5");
}

/// One row of the table.
struct Row {
    case: String,
    data: usize,
    cells: usize,
    build_s: f64,
    run: RunResult,
    invert_s: f64,
    peak_mb: Option<f64>,
}

impl Row {
    /// The row of a finished case; the peak memory is read now.
    fn of<O: Operator>(label: &str, op: &O, build_s: f64, run: RunResult, invert_s: f64) -> Row {
        Row {
            case: label.into(),
            data: op.n_data(),
            cells: op.n_cells(),
            build_s,
            run,
            invert_s,
            peak_mb: peak_mb(),
        }
    }
}

fn print_row(r: &Row) {
    println!(
        "{:<34} {:>7} {:>9} {:>8.2} {:>9.1} {:>6} {:>6} {:>7.3} {:>9}",
        r.case,
        r.data,
        r.cells,
        r.build_s,
        r.invert_s,
        r.run.log.len(),
        cg_total(&r.run),
        r.run.summary.chi_factor,
        r.peak_mb
            .map(|m| format!("{m:.0}"))
            .unwrap_or_else(|| "n/a".into())
    );
}

/// Gridded data over an n × n × nz mesh of 20 m cells (FFT operator): a
/// block of 0.25 g/cm³ in the middle.
fn fft_case(n: usize, nz: usize, label: &str) -> Row {
    reset_peak();
    let span = 20.0 * n as f64;
    let (mesh, active, _) = square_case(n, nz, 0);
    let [nx, ny, _] = mesh.shape();
    let t = Instant::now();
    let op =
        FftOperator::build(&mesh, &active, 1.0, &vec![true; nx * ny], Survey::Gravity).unwrap();
    let build_s = t.elapsed().as_secs_f64();
    let truth = block(
        &mesh,
        (9 * n) / 25..(13 * n) / 25,
        (2 * n) / 5..(3 * n) / 5,
        (3 * nz) / 5..(4 * nz) / 5,
    );
    let (run, invert_s) = synthetic_run(&op, &mesh, &active, &truth, span, 5);
    Row::of(label, &op, build_s, run, invert_s)
}

/// Scattered stations over an n × n × nz mesh (dense operator); returns the
/// row and the product rate in GB/s of matrix read.
fn dense_case(n_side: usize, nz: usize, st_side: usize, label: &str) -> (Row, f64) {
    reset_peak();
    let span = 20.0 * n_side as f64;
    let (mesh, active, stations) = square_case(n_side, nz, st_side);
    let t = Instant::now();
    let op =
        DenseOperator::build(&mesh, &active, &stations, Survey::Gravity, 8 << 30, &Silent).unwrap();
    let build_s = t.elapsed().as_secs_f64();
    let [nx, ny, _] = mesh.shape();
    let truth = block(&mesh, nx / 3..nx / 2, ny / 3..ny / 2, nz / 2..3 * nz / 4);
    let (run, invert_s) = synthetic_run(&op, &mesh, &active, &truth, span, 11);
    let m = vec![0.1; op.n_cells()];
    let mut out = vec![0.0; op.n_data()];
    let t = Instant::now();
    for _ in 0..10 {
        op.apply(&m, &mut out);
    }
    let gbs = 10.0 * (op.n_cells() * op.n_data() * 4) as f64 / t.elapsed().as_secs_f64() / 1e9;
    let entries_per_s = (op.n_cells() * op.n_data()) as f64 / build_s;
    println!(
        "  ({label}: build {:.1e} sensitivities/s; G m reads the {:.0} MB matrix at {gbs:.1} GB/s)",
        entries_per_s,
        (op.n_cells() * op.n_data() * 4) as f64 / 1e6
    );
    (Row::of(label, &op, build_s, run, invert_s), gbs)
}

/// Build rate and product rates of a dense operator too big for any cache:
/// `side`² stations over an n × n × nz mesh, no inversion.
fn dense_products(n: usize, nz: usize, side: usize, bw: f64) {
    let (mesh, active, stations) = square_case(n, nz, side);
    let t = Instant::now();
    let op =
        DenseOperator::build(&mesh, &active, &stations, Survey::Gravity, 8 << 30, &Silent).unwrap();
    let build_s = t.elapsed().as_secs_f64();
    let entries = (op.n_cells() * op.n_data()) as f64;
    let m = vec![0.1; op.n_cells()];
    let r = vec![0.1; op.n_data()];
    let mut d = vec![0.0; op.n_data()];
    let mut g = vec![0.0; op.n_cells()];
    op.apply(&m, &mut d);
    let t = Instant::now();
    for _ in 0..5 {
        op.apply(&m, &mut d);
    }
    let fwd = 5.0 * entries * 4.0 / t.elapsed().as_secs_f64() / 1e9;
    let t = Instant::now();
    for _ in 0..5 {
        op.apply_t(&r, &mut g);
    }
    let adj = 5.0 * entries * 4.0 / t.elapsed().as_secs_f64() / 1e9;
    println!(
        "dense {} data × {} cells ({:.0} MB): build {build_s:.2} s = {:.2e} sensitivities/s; G m {fwd:.1} GB/s ({:.0} % of the read bandwidth), Gᵀ r {adj:.1} GB/s ({:.0} %)",
        op.n_data(),
        op.n_cells(),
        entries * 4.0 / 1e6,
        entries / build_s,
        100.0 * fwd / bw,
        100.0 * adj / bw
    );
}

/// Memory read bandwidth with every thread streaming its share of a 1 GB
/// f32 buffer into eight accumulators (what a matrix–vector product needs).
fn read_bandwidth_gbs() -> f64 {
    use rayon::prelude::*;
    let big = vec![1.0f32; 250_000_000];
    let sum = |b: &[f32]| -> f64 {
        b.par_chunks(1 << 20)
            .map(|c| {
                let mut acc = [0.0f32; 8];
                for v in c.chunks_exact(8) {
                    for k in 0..8 {
                        acc[k] += v[k];
                    }
                }
                acc.iter().map(|a| *a as f64).sum::<f64>()
            })
            .sum()
    };
    std::hint::black_box(sum(&big));
    let t = Instant::now();
    for _ in 0..3 {
        std::hint::black_box(sum(&big));
    }
    3.0e9 / t.elapsed().as_secs_f64() / 1e9
}

/// Time per call of the pieces of one CG iteration on an n³ mesh with n²
/// gridded data (FFT operator, smooth objective).
fn parts(n: usize) {
    use fieldstone_core::invert::solver::model_objective;
    let mesh = MeshRecipe::uniform(
        20.0,
        20.0,
        [0.0, 20.0 * n as f64],
        [0.0, 20.0 * n as f64],
        0.0,
        20.0 * n as f64,
    )
    .build()
    .unwrap();
    let active: Vec<usize> = (0..mesh.n_cells()).collect();
    let [nx, ny, _] = mesh.shape();
    let op =
        FftOperator::build(&mesh, &active, 1.0, &vec![true; nx * ny], Survey::Gravity).unwrap();
    let act = active_cells(&mesh, None, false, false).unwrap();
    let k = build(&mesh, &act, &[], Defaults::density(), &Inputs::default())
        .unwrap()
        .0;
    let data = vec![0.0; op.n_data()];
    let unc = vec![1.0; op.n_data()];
    let pb = Problem {
        mesh: &mesh,
        constraints: &k,
        active: &active,
        data: &data,
        uncertainty: &unc,
        reference_elevation_m: 1.0,
    };
    let (obj, _, _) = model_objective(&op, &pb, &InversionSettings::default()).unwrap();
    let m: Vec<f64> = (0..op.n_cells()).map(|j| (j % 17) as f64 * 0.01).collect();
    let mut d = vec![0.0; op.n_data()];
    let mut out = vec![0.0; op.n_cells()];
    let time = |f: &mut dyn FnMut()| {
        f();
        let t = Instant::now();
        for _ in 0..10 {
            f();
        }
        t.elapsed().as_secs_f64() / 10.0 * 1e3
    };
    let ta = time(&mut || op.apply(&m, &mut d));
    let tt = time(&mut || op.apply_t(&d, &mut out));
    let th = time(&mut || obj.add_hessian(&m, 1.0, &mut out));
    let tv = time(&mut || {
        std::hint::black_box(obj.value(&m));
    });
    println!(
        "{} cells, {} data: G m {ta:.1} ms, Gᵀ r {tt:.1} ms, model Hessian product {th:.1} ms, φ_m {tv:.1} ms",
        op.n_cells(),
        op.n_data()
    );
}

fn main() {
    if let Ok(n) = std::env::var("FIELDSTONE_BENCH_PARTS") {
        parts(n.parse().unwrap_or(50));
        return;
    }
    let only = std::env::var("FIELDSTONE_BENCH_ONLY").ok();
    let want = |c: &str| only.as_deref().map(|o| o == c).unwrap_or(true);
    let bw = read_bandwidth_gbs();
    println!(
        "memory read bandwidth ({} threads, 1 GB buffer): {bw:.1} GB/s",
        rayon::current_num_threads()
    );
    let mut rows = Vec::new();
    if want("product") {
        dense_products(50, 40, 50, bw);
    }
    if want("dense") {
        let (r, gbs) = dense_case(30, 15, 30, "dense, bounds+ref+focusing");
        println!(
            "  (product at {:.0} % of the read bandwidth; the 54 MB matrix is partly cached)",
            100.0 * gbs / bw
        );
        rows.push(r);
        if std::env::var("FIELDSTONE_BENCH_LARGE").is_ok() {
            let (r, gbs) = dense_case(50, 20, 50, "dense, bounds+ref+focusing");
            println!(
                "  (product at {:.0} % of the read bandwidth)",
                100.0 * gbs / bw
            );
            rows.push(r);
        }
    }
    if want("fft") {
        rows.push(fft_case(50, 40, "fft, bounds+ref+focusing"));
    }
    if want("huge") && (std::env::var("FIELDSTONE_BENCH_HUGE").is_ok() || only.is_some()) {
        rows.push(fft_case(100, 100, "fft, bounds+ref+focusing"));
    }
    println!(
        "{:<34} {:>7} {:>9} {:>8} {:>9} {:>6} {:>6} {:>7} {:>9}",
        "case", "data", "cells", "build s", "invert s", "iters", "CG", "chi", "peak MB"
    );
    for r in &rows {
        print_row(r);
        println!("    stopped: {}", r.run.summary.stopped_because);
    }
}
