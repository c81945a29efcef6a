//! Large input end to end: a 10-million-reading line file through import and
//! gridding, and a 2-million-cell mesh through the size estimate, its active
//! cells and its constraint arrays. Prints each stage's time, the memory the
//! program's own refusals estimate for it, and the peak resident memory.
//!
//! `cargo bench -p fieldstone-core --bench large`
//! FIELDSTONE_BENCH_ROWS=N changes the reading count (default 10 000 000).

use fieldstone_core::constraint::build::{build, Defaults};
use fieldstone_core::constraint::region::Inputs;
use fieldstone_core::grid::mincurv::{memory_needed, min_curvature, MinCurvSettings};
use fieldstone_core::grid::Grid2;
use fieldstone_core::mesh::recipe::{MeshRecipe, BYTES_PER_CELL};
use fieldstone_core::mesh::size::estimate;
use fieldstone_core::mesh::topo::active_cells;
use fieldstone_core::progress::Silent;
use fieldstone_core::survey::columns::Role;
use fieldstone_core::survey::import::{import_memory_needed, import_survey, ImportSpec};
use fieldstone_core::table::{ColumnKind, TextOptions};
use std::io::Write;
use std::time::Instant;

fn rss(field: &str) -> f64 {
    let s = std::fs::read_to_string("/proc/self/status").unwrap_or_default();
    s.lines()
        .find(|l| l.starts_with(field))
        .and_then(|l| l.split_whitespace().nth(1))
        .and_then(|v| v.parse::<f64>().ok())
        .map_or(f64::NAN, |kb| kb * 1024.0 / 1e6)
}

fn main() {
    let rows: usize = std::env::var("FIELDSTONE_BENCH_ROWS")
        .ok()
        .and_then(|v| v.parse().ok())
        .unwrap_or(10_000_000);
    // 2 000 lines 5 m apart, readings every 2 m along 10 km lines.
    let per_line = rows.div_ceil(2000);
    let path = std::env::temp_dir().join(format!("fieldstone-bench-large-{rows}.csv"));
    if !path.exists() {
        let t = Instant::now();
        let mut w = std::io::BufWriter::new(std::fs::File::create(&path).unwrap());
        writeln!(w, "line,x,y,height_m,mag_nt").unwrap();
        for r in 0..rows {
            let (l, k) = (r / per_line, r % per_line);
            let x = 500_000.0 + 2.0 * k as f64 * 5000.0 / per_line as f64;
            let y = 6_500_000.0 + 5.0 * l as f64;
            let m = 55_000.0 + 40.0 * (x * 0.002).sin() * (y * 0.001).cos();
            writeln!(
                w,
                "{},{x:.2},{y:.2},{:.1},{m:.3}",
                1000 + l,
                300.0 + (k % 7) as f64
            )
            .unwrap();
        }
        w.flush().unwrap();
        eprintln!(
            "wrote {} in {:.1} s",
            path.display(),
            t.elapsed().as_secs_f64()
        );
    }
    let size_mb = std::fs::metadata(&path).unwrap().len() as f64 / 1e6;
    println!("Large input ({rows} readings, {size_mb:.0} MB file)");
    println!(
        "{:<52} {:>8} {:>12} {:>12} {:>12}",
        "stage", "seconds", "estimate MB", "RSS before", "peak after"
    );
    let row = |stage: &str, secs: f64, est_mb: f64, before: f64| {
        println!(
            "{stage:<52} {secs:>8.2} {est_mb:>12.0} {before:>12.0} {:>12.0}",
            rss("VmHWM:")
        )
    };

    let before = rss("VmRSS:");
    let t = Instant::now();
    let recipe = MeshRecipe::uniform(25.0, 25.0, [0.0, 5000.0], [0.0, 5000.0], 0.0, 1250.0);
    let mesh = recipe.build().unwrap();
    let act = active_cells(&mesh, None, false, false).unwrap();
    let e = estimate(mesh.n_cells(), mesh.n_cells(), 2500, None);
    let c = build(&mesh, &act, &[], Defaults::density(), &Inputs::default()).unwrap();
    row(
        &format!(
            "mesh of {} cells, active cells, constraints",
            mesh.n_cells()
        ),
        t.elapsed().as_secs_f64(),
        (mesh.n_cells() as u64 * BYTES_PER_CELL) as f64 / 1e6,
        before,
    );
    println!(
        "size estimate for 2 500 data: dense sensitivity {:.0} MB, working vectors {:.0} MB, fits in 8 GB: {}",
        e.dense_bytes as f64 / 1e6,
        e.model_bytes as f64 / 1e6,
        estimate(mesh.n_cells(), mesh.n_cells(), 2500, Some(8 << 30)).fits
    );
    drop(c);
    drop(act);
    drop(mesh);
    let before = rss("VmRSS:");
    let t = Instant::now();
    let spec = ImportSpec::guess_for_file(&path, &TextOptions::default(), Some(32755)).unwrap();
    let survey = import_survey(&path, &spec).unwrap();
    let est = import_memory_needed(
        &path,
        &{
            use std::io::Read;
            let mut head = vec![0u8; 256 * 1024];
            let n = std::fs::File::open(&path).unwrap().read(&mut head).unwrap();
            head.truncate(n);
            head
        },
        &[ColumnKind::Number; 5],
    ) as f64
        / 1e6;
    row(
        "import (roles, units, projection, lines)",
        t.elapsed().as_secs_f64(),
        est,
        before,
    );

    let before = rss("VmRSS:");
    let t = Instant::now();
    let mag = survey
        .channels
        .iter()
        .find(|c| c.role == Role::Magnetic)
        .expect("a magnetic channel");
    let template = Grid2::new_empty(500_000.0, 6_500_000.0, 10.0, 10.0, 1001, 1001).unwrap();
    let g = min_curvature(
        &survey.x,
        &survey.y,
        &mag.values,
        &template,
        &MinCurvSettings::default(),
        &Silent,
    )
    .unwrap();
    row(
        "minimum curvature onto 1001 × 1001 at 10 m",
        t.elapsed().as_secs_f64(),
        memory_needed(rows, g.nx * g.ny) as f64 / 1e6,
        before,
    );
    drop(g);
    drop(survey);
}
