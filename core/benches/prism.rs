//! Prism kernel benchmark: prints a table of evaluation rates.
//!
//! `cargo bench -p fieldstone-core --bench prism`
//!
//! Set FIELDSTONE_BENCH_MESH_STATIONS to change the station count of the
//! tensor-mesh row test (default 2,500, the full 100 × 100 × 50 case).

use fieldstone_core::physics::gravity::prism_gz_mgal;
use fieldstone_core::physics::magnetic::{prism_field_nt, tmi_nt, InducingField};
use fieldstone_core::physics::tensor::{gz_row, induced_tmi_scale, tmi_row, MeshNodes, RowScratch};
use fieldstone_core::physics::Prism;
use rayon::prelude::*;
use std::hint::black_box;
use std::time::Instant;

fn prisms(n: usize) -> Vec<Prism> {
    // A 10 × 10 × n/100 block of 20 m cells under the stations.
    let per = 10;
    (0..n)
        .map(|c| {
            let (i, j, k) = (c % per, (c / per) % per, c / (per * per));
            let x = -100.0 + 20.0 * i as f64;
            let y = -100.0 + 20.0 * j as f64;
            let z = -20.0 - 20.0 * k as f64;
            Prism::new([x, x + 20.0], [y, y + 20.0], [z - 20.0, z]).unwrap()
        })
        .collect()
}

fn stations(n: usize) -> Vec<[f64; 3]> {
    let side = (n as f64).sqrt().ceil() as usize;
    (0..n)
        .map(|s| {
            [
                -250.0 + 500.0 * (s % side) as f64 / side as f64,
                -250.0 + 500.0 * (s / side) as f64 / side as f64,
                1.0,
            ]
        })
        .collect()
}

fn rate<F: Fn(&[f64; 3]) -> f64 + Sync>(
    st: &[[f64; 3]],
    per_station: usize,
    threads: usize,
    f: F,
) -> f64 {
    let pool = rayon::ThreadPoolBuilder::new()
        .num_threads(threads)
        .build()
        .unwrap();
    let t = Instant::now();
    let s: f64 = pool.install(|| st.par_iter().map(&f).sum());
    black_box(s);
    (st.len() * per_station) as f64 / t.elapsed().as_secs_f64()
}

fn main() {
    let all = rayon::current_num_threads();
    let bodies = prisms(1000);
    let st = stations(2000);
    let field = InducingField {
        intensity_nt: 55_000.0,
        inclination_deg: 65.0,
        declination_deg: 3.0,
    };
    let m = field.induced_magnetization(0.01);
    let f = field.unit();
    println!("Prism kernels ({} threads available)", all);
    println!(
        "{:<44} {:>14} {:>14}",
        "evaluation",
        "1 thread /s",
        format!("{all} threads /s")
    );
    let grav = |p: &[f64; 3]| {
        bodies
            .iter()
            .map(|b| prism_gz_mgal(b, *p, 1.0))
            .sum::<f64>()
    };
    let mag = |p: &[f64; 3]| {
        bodies
            .iter()
            .map(|b| tmi_nt(prism_field_nt(b, *p, m).unwrap_or([0.0; 3]), f))
            .sum::<f64>()
    };
    println!(
        "{:<44} {:>14.3e} {:>14.3e}",
        "prism-station g_z (single prism calls)",
        rate(&st, bodies.len(), 1, grav),
        rate(&st, bodies.len(), all, grav)
    );
    println!(
        "{:<44} {:>14.3e} {:>14.3e}",
        "prism-station TMI (single prism calls)",
        rate(&st, bodies.len(), 1, mag),
        rate(&st, bodies.len(), all, mag)
    );

    // Tensor-mesh rows: 100 × 100 × 50 cells of 20 m × 20 m × 10 m.
    let nodes = MeshNodes::uniform(
        [-1000.0, -1000.0, -500.0],
        [20.0, 20.0, 10.0],
        [100, 100, 50],
    )
    .unwrap();
    let n_cells = nodes.n_cells();
    let n_st: usize = std::env::var("FIELDSTONE_BENCH_MESH_STATIONS")
        .ok()
        .and_then(|v| v.parse().ok())
        .unwrap_or(2500);
    let mesh_st: Vec<[f64; 3]> = (0..n_st)
        .map(|s| {
            let side = (n_st as f64).sqrt().ceil() as usize;
            [
                -990.0 + 1980.0 * (s % side) as f64 / side as f64 + 3.3,
                -990.0 + 1980.0 * (s / side) as f64 / side as f64 + 3.7,
                2.0,
            ]
        })
        .collect();
    let mesh_rate = |threads: usize, stations: &[[f64; 3]], tmi: bool| {
        let pool = rayon::ThreadPoolBuilder::new()
            .num_threads(threads)
            .build()
            .unwrap();
        let t = Instant::now();
        let s: f64 = pool.install(|| {
            stations
                .par_iter()
                .map_init(
                    || (vec![0.0; n_cells], RowScratch::default()),
                    |(row, scratch), p| {
                        if tmi {
                            tmi_row(
                                &nodes,
                                *p,
                                f,
                                f,
                                induced_tmi_scale(field.intensity_nt),
                                row,
                                scratch,
                            )
                            .unwrap();
                        } else {
                            gz_row(&nodes, *p, row, scratch).unwrap();
                        }
                        row[n_cells / 2]
                    },
                )
                .sum()
        });
        black_box(s);
        let secs = t.elapsed().as_secs_f64();
        (secs, (stations.len() * n_cells) as f64 / secs)
    };
    let few = &mesh_st[..mesh_st.len().min(40)];
    let (_, g1) = mesh_rate(1, few, false);
    let (_, m1) = mesh_rate(1, few, true);
    let (_, mall_small) = mesh_rate(all, few, true);
    let (secs, gall) = mesh_rate(all, &mesh_st, false);
    println!(
        "{:<44} {:>14.3e} {:>14.3e}",
        "mesh cell-station g_z (shared corners)", g1, gall
    );
    println!(
        "{:<44} {:>14.3e} {:>14.3e}",
        "mesh cell-station TMI (shared corners)", m1, mall_small
    );
    println!();
    println!(
        "100 x 100 x 50 mesh ({} cells) at {} stations, g_z, {} threads: {:.1} s ({:.2e} entries/s)",
        n_cells,
        mesh_st.len(),
        all,
        secs,
        gall
    );
}
