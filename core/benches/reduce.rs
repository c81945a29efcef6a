//! Reduction benchmarks: the terrain correction of 2,000 stations over a
//! 1,000 × 1,000 DEM to 20 km, and the full magnetic reduction (read, main
//! field, diurnal, write) of a 1-million-reading file.
//!
//! `cargo bench -p fieldstone-core --bench reduce`

use fieldstone_core::geodesy::igrf::IgrfModel;
use fieldstone_core::grid::Grid2;
use fieldstone_core::progress::Silent;
use fieldstone_core::reduce::magnetic::{diurnal, BaseRecord};
use fieldstone_core::reduce::terrain::{terrain_corrections, TerrainSettings};
use fieldstone_core::table::passthrough::{read_passthrough, write_with_columns};
use rayon::prelude::*;
use std::io::Write;
use std::time::Instant;

fn main() {
    println!("{:<58} {:>10}", "reduction", "seconds");
    // Terrain: 40 m cells, 40 km square, rolling hills.
    let n = 1000;
    let cell = 40.0;
    let mut dem = Grid2::new_empty(0.0, 0.0, cell, cell, n, n).unwrap();
    for j in 0..n {
        for i in 0..n {
            let (x, y) = (i as f64 * cell, j as f64 * cell);
            dem.values[i + n * j] = 400.0
                + 120.0 * (x / 3100.0).sin() * (y / 4700.0).cos()
                + 35.0 * (x / 610.0 + y / 830.0).sin();
        }
    }
    let stations: Vec<[f64; 3]> = (0..2000)
        .map(|k| {
            let (x, y) = (
                15_000.0 + 10_000.0 * ((k % 50) as f64 / 50.0),
                15_000.0 + 10_000.0 * ((k / 50) as f64 / 40.0),
            );
            [x, y, dem.sample(x, y).unwrap() + 1.0]
        })
        .collect();
    let s = TerrainSettings {
        outer_radius_m: 20_000.0,
        ..Default::default()
    };
    let t = Instant::now();
    let tc = terrain_corrections(&dem, None, &stations, &s, &Silent).unwrap();
    println!(
        "{:<58} {:>10.2}",
        format!(
            "terrain: {} stations, {}x{} DEM, 20 km ({} threads)",
            stations.len(),
            n,
            n,
            rayon::current_num_threads()
        ),
        t.elapsed().as_secs_f64()
    );
    println!(
        "  (mean correction {:.3} mGal)",
        tc.iter().sum::<f64>() / tc.len() as f64
    );

    // Magnetic: 1 M readings, 1 s base record.
    let rows = 1_000_000;
    let dir = std::env::temp_dir();
    let input = dir.join("fieldstone-bench-mag.csv");
    let base_t0 = 1_780_000_000.0;
    {
        let mut w = std::io::BufWriter::new(std::fs::File::create(&input).unwrap());
        writeln!(w, "line,lat,lon,height_m,mag_nt,time").unwrap();
        for r in 0..rows {
            let lat = -33.5 - 0.001 * (r / 10_000) as f64;
            let lon = 151.2 + 0.000_05 * (r % 10_000) as f64;
            writeln!(
                w,
                "{},{lat:.6},{lon:.6},35.0,{:.2},{:.1}",
                r / 10_000,
                57_000.0 + 20.0 * ((r % 997) as f64 / 997.0),
                base_t0 + 0.2 * r as f64
            )
            .unwrap();
        }
    }
    let t = Instant::now();
    let tab = read_passthrough(
        &input,
        &[
            "igrf_f_nt",
            "igrf_inclination_deg",
            "igrf_declination_deg",
            "diurnal_nt",
            "tmi_anomaly_nt",
        ],
    )
    .unwrap();
    let lat = tab.numbers(tab.column("lat").unwrap(), true).unwrap();
    let lon = tab.numbers(tab.column("lon").unwrap(), true).unwrap();
    let h = tab.numbers(tab.column("height_m").unwrap(), true).unwrap();
    let mag = tab.numbers(tab.column("mag_nt").unwrap(), true).unwrap();
    let times = tab.numbers(tab.column("time").unwrap(), true).unwrap();
    let read_s = t.elapsed().as_secs_f64();
    let model = IgrfModel::igrf14().at_date(2026.4).unwrap();
    let t1 = Instant::now();
    let fields: Vec<_> = (0..rows)
        .into_par_iter()
        .map(|k| model.field(lat[k], lon[k], h[k]).unwrap())
        .collect();
    let igrf_s = t1.elapsed().as_secs_f64();
    let bt: Vec<f64> = (0..(rows / 5 + 10))
        .map(|k| base_t0 - 5.0 + k as f64)
        .collect();
    let bv: Vec<f64> = bt
        .iter()
        .map(|t| 56_800.0 + 10.0 * ((t - base_t0) / 3600.0).sin())
        .collect();
    let d = diurnal(&BaseRecord::new(bt, bv).unwrap(), &times, None, 60.0)
        .unwrap()
        .0;
    let out = dir.join("fieldstone-bench-mag-out.csv");
    let mut w = std::io::BufWriter::new(std::fs::File::create(&out).unwrap());
    write_with_columns(
        &tab,
        &[
            "igrf_f_nt",
            "igrf_inclination_deg",
            "igrf_declination_deg",
            "diurnal_nt",
            "tmi_anomaly_nt",
        ],
        |k| {
            vec![
                fields[k].f_nt,
                fields[k].inclination_deg,
                fields[k].declination_deg,
                d[k],
                mag[k] - d[k] - fields[k].f_nt,
            ]
        },
        &mut w,
    )
    .unwrap();
    drop(w);
    let total = t.elapsed().as_secs_f64();
    println!(
        "{:<58} {:>10.2}",
        "magnetic: 1,000,000 readings, read + IGRF + diurnal + write", total
    );
    println!("  (read {read_s:.2} s, IGRF synthesis {igrf_s:.2} s)");
    let _ = std::fs::remove_file(&input);
    let _ = std::fs::remove_file(&out);
}
