//! Large-file import benchmark: writes a 5-million-row, 8-column line-data
//! file (once, in the system temp folder), then times reading it and reports
//! peak memory against the file size.
//!
//! `cargo bench -p fieldstone-core --bench import`
//! FIELDSTONE_BENCH_ROWS=N changes the row count.

use fieldstone_core::survey::import::{import_survey, ImportSpec};
use fieldstone_core::table::{read::read_table, TextOptions};
use std::io::Write;
use std::time::Instant;

fn peak_rss_bytes() -> Option<u64> {
    let s = std::fs::read_to_string("/proc/self/status").ok()?;
    let line = s.lines().find(|l| l.starts_with("VmHWM:"))?;
    let kb: u64 = line.split_whitespace().nth(1)?.parse().ok()?;
    Some(kb * 1024)
}

fn main() {
    let rows: usize = std::env::var("FIELDSTONE_BENCH_ROWS")
        .ok()
        .and_then(|v| v.parse().ok())
        .unwrap_or(5_000_000);
    let path = std::env::temp_dir().join(format!("fieldstone-bench-lines-{rows}.csv"));
    if !path.exists() {
        let t = Instant::now();
        let mut w = std::io::BufWriter::new(std::fs::File::create(&path).unwrap());
        writeln!(w, "line,fid,x,y,elevation,time,mag,clearance").unwrap();
        let per_line = 10_000;
        for r in 0..rows {
            let line = 1000 + 10 * (r / per_line);
            let k = r % per_line;
            let x = 400_000.0 + 5.0 * k as f64 + 0.01 * (r % 7) as f64;
            let y = 6_500_000.0 + 100.0 * (r / per_line) as f64;
            let z = 250.0 + 10.0 * ((k as f64) * 0.001).sin();
            let t = 3600.0 * 8.0 + 0.01 * r as f64;
            let m = 55_000.0 + 30.0 * ((k as f64) * 0.01).cos() + 0.01 * (r % 13) as f64;
            writeln!(
                w,
                "{line},{k},{x:.2},{y:.2},{z:.2},{t:.2},{m:.3},{:.1}",
                30.0 + (r % 5) as f64
            )
            .unwrap();
        }
        w.flush().unwrap();
        eprintln!(
            "wrote {} ({} rows) in {:.1} s",
            path.display(),
            rows,
            t.elapsed().as_secs_f64()
        );
    }
    let size = std::fs::metadata(&path).unwrap().len();
    let t = Instant::now();
    let table = read_table(&path, &TextOptions::default(), None).unwrap();
    let read_s = t.elapsed().as_secs_f64();
    let n = table.n_rows();
    drop(table);
    let t = Instant::now();
    let spec = ImportSpec::guess_for_file(&path, &TextOptions::default(), Some(32755)).unwrap();
    let survey = import_survey(&path, &spec).unwrap();
    let import_s = t.elapsed().as_secs_f64();
    let peak = peak_rss_bytes();
    println!(
        "Line-data import ({} rows, 8 columns, {:.0} MB file)",
        n,
        size as f64 / 1e6
    );
    println!("{:<40} {:>10}", "step", "seconds");
    println!("{:<40} {:>10.2}", "read delimited table", read_s);
    println!(
        "{:<40} {:>10.2}",
        "import survey (roles, units, lines)", import_s
    );
    println!("rows/s (import): {:.3e}", n as f64 / import_s);
    if let Some(p) = peak {
        println!(
            "peak resident memory: {:.0} MB = {:.2} x file size",
            p as f64 / 1e6,
            p as f64 / size as f64
        );
    }
    println!("lines found: {}", survey.lines.len());
}
