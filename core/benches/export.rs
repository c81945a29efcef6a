//! Export benchmark: a 1,000,000-cell model written as binary VTK, NumPy,
//! an active-cell CSV table, a section and a plan slice with PNG figures.
//!
//! `cargo bench -p fieldstone-core --bench export`

use fieldstone_core::export::figure::{grid_figure, section_figure};
use fieldstone_core::export::section::{plan_slice, section, SliceLevel};
use fieldstone_core::export::voxel::{
    write_cell_table, write_npy, write_vtr, CellArray, Provenance,
};
use fieldstone_core::mesh::recipe::MeshRecipe;
use std::time::Instant;

fn main() {
    let mesh = MeshRecipe::uniform(10.0, 10.0, [0.0, 1000.0], [0.0, 1000.0], 500.0, 1000.0)
        .build()
        .unwrap();
    let n = mesh.n_cells();
    assert_eq!(n, 1_000_000);
    let [nx, ny, _] = mesh.shape();
    let values: Vec<f64> = (0..n)
        .map(|c| ((c % nx) as f64 * 0.05).sin() * (((c / nx) % ny) as f64 * 0.03).cos())
        .collect();
    let active = vec![true; n];
    let prov = Provenance {
        program: "bench".into(),
        source: "synthetic".into(),
        units: "g/cm³".into(),
        background: "2.67".into(),
        epsg: Some(32617),
    };
    let dir = std::env::temp_dir().join(format!("fieldstone-bench-export-{}", std::process::id()));
    std::fs::create_dir_all(&dir).unwrap();
    let time = |label: &str, f: &mut dyn FnMut() -> u64| {
        let t = Instant::now();
        let bytes = f();
        let s = t.elapsed().as_secs_f64();
        println!(
            "{label:<34} {s:>7.3} s  {:>8.1} MB  {:>7.0} MB/s",
            bytes as f64 / 1e6,
            bytes as f64 / 1e6 / s
        );
    };
    let size = |p: &std::path::Path| std::fs::metadata(p).map(|m| m.len()).unwrap_or(0);
    println!(
        "export of a {n}-cell model ({nx} × {ny} × {}):",
        mesh.shape()[2]
    );
    let arrays = [CellArray {
        name: "model",
        values: &values,
    }];
    for (label, file, binary) in [
        ("VTK RectilinearGrid (binary)", "m.vtr", true),
        ("VTK RectilinearGrid (ASCII)", "m_ascii.vtr", false),
    ] {
        time(label, &mut || {
            let p = dir.join(file);
            write_vtr(&p, &mesh, &arrays, &prov, binary).unwrap();
            size(&p)
        });
    }
    time("NumPy .npy", &mut || {
        let p = dir.join("m.npy");
        write_npy(&p, &mesh, &values).unwrap();
        size(&p)
    });
    time("cell table CSV (active cells)", &mut || {
        let p = dir.join("m.csv");
        write_cell_table(
            &p,
            &mesh,
            &active,
            &[CellArray {
                name: "model",
                values: &values,
            }],
            &prov,
        )
        .unwrap();
        size(&p)
    });
    time("section + PNG figure", &mut || {
        let s = section(&mesh, &values, &[[0.0, 500.0], [1000.0, 500.0]], 10.0).unwrap();
        let png = section_figure(&s, &mesh.z, &[], "bench", "g/cm³").png();
        png.len() as u64
    });
    time("plan slice + PNG figure", &mut || {
        let g = plan_slice(&mesh, &values, SliceLevel::Elevation(0.0), None).unwrap();
        let png = grid_figure(&g, "bench", "g/cm³").png();
        png.len() as u64
    });
    std::fs::remove_dir_all(&dir).ok();
}
