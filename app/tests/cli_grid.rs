//! `fieldstone grid` and `fieldstone filter` end to end.

use fieldstone_core::grid::geotiff::read_geotiff;
use std::path::PathBuf;
use std::process::Command;

fn bin() -> Command {
    Command::new(env!("CARGO_BIN_EXE_fieldstone"))
}

fn scratch(name: &str) -> PathBuf {
    let d = std::env::temp_dir().join(format!("fieldstone-cli-grid-{name}-{}", std::process::id()));
    let _ = std::fs::remove_dir_all(&d);
    std::fs::create_dir_all(&d).unwrap();
    d
}

fn line_data(f: impl Fn(f64, f64) -> f64) -> String {
    let mut s = String::from("line,easting,northing,value\n");
    for l in 0..11 {
        for k in 0..101 {
            let (x, y) = (500_000.0 + 10.0 * k as f64, 7_000_000.0 + 100.0 * l as f64);
            s.push_str(&format!("{l},{x},{y},{}\n", f(x, y)));
        }
    }
    s
}

#[test]
fn grids_filters_and_separates_a_regional() {
    let d = scratch("chain");
    let plane = |x: f64, y: f64| 3.0 + 0.001 * (x - 500_000.0) - 0.002 * (y - 7_000_000.0);
    std::fs::write(d.join("lines.csv"), line_data(plane)).unwrap();
    let o = bin()
        .arg("grid")
        .arg("--in")
        .arg(d.join("lines.csv"))
        .args([
            "--x", "easting", "--y", "northing", "--value", "value", "--cell", "25", "--epsg",
            "32755", "--units", "mGal", "--out",
        ])
        .arg(d.join("g.tif"))
        .output()
        .unwrap();
    assert!(o.status.success(), "{}", String::from_utf8_lossy(&o.stderr));
    assert!(String::from_utf8_lossy(&o.stderr).contains("suggested cell: 25.0 m"));
    let g = read_geotiff(&d.join("g.tif")).unwrap();
    assert_eq!((g.nx, g.ny, g.epsg), (41, 41, Some(32755)));
    for j in 0..41 {
        for i in 0..41 {
            assert!(
                (g.get(i, j) - plane(g.x_of(i), g.y_of(j))).abs() < 1e-4,
                "({i},{j})"
            );
        }
    }
    // CSV output with nodata rows omitted.
    let o = bin()
        .arg("grid")
        .arg("--in")
        .arg(d.join("lines.csv"))
        .args([
            "--x",
            "easting",
            "--y",
            "northing",
            "--value",
            "value",
            "--cell",
            "25",
            "--method",
            "biharmonic",
            "--blank-m",
            "30",
            "--out",
        ])
        .arg(d.join("g.csv"))
        .output()
        .unwrap();
    assert!(o.status.success(), "{}", String::from_utf8_lossy(&o.stderr));
    let text = std::fs::read_to_string(d.join("g.csv")).unwrap();
    assert!(text.starts_with("x,y,value\n"));
    let rows = text.lines().count() - 1;
    assert!(
        rows > 11 * 41 && rows < 41 * 41,
        "blanking between lines: {rows} rows"
    );
    // Filter: a plane's residual after a first-order trend is zero; upward
    // continuation keeps it; the regional plus residual is the data.
    let run = |args: &[&str], out: &str| {
        let o = bin()
            .arg("filter")
            .arg("--in")
            .arg(d.join("g.tif"))
            .args(args)
            .arg("--out")
            .arg(d.join(out))
            .output()
            .unwrap();
        assert!(
            o.status.success(),
            "{args:?}: {}",
            String::from_utf8_lossy(&o.stderr)
        );
        read_geotiff(&d.join(out)).unwrap()
    };
    let res = run(&["--trend", "1"], "res.tif");
    assert!(res.values.iter().all(|v| v.abs() < 1e-4));
    let up = run(&["--upward-m", "100"], "up.tif");
    assert!(up
        .values
        .iter()
        .zip(&g.values)
        .all(|(a, b)| (a - b).abs() < 1e-3));
    let dx = run(&["--x-derivative"], "dx.tif");
    assert!(dx.values.iter().all(|v| (v - 0.001).abs() < 1e-6));
    let sub = bin()
        .arg("filter")
        .arg("--in")
        .arg(d.join("g.tif"))
        .arg("--subtract")
        .arg(d.join("up.tif"))
        .arg("--out")
        .arg(d.join("diff.tif"))
        .output()
        .unwrap();
    assert!(sub.status.success());
}

#[test]
fn bad_grid_and_filter_requests_are_refused_with_reasons() {
    let d = scratch("bad");
    std::fs::write(d.join("lines.csv"), line_data(|x, _| x)).unwrap();
    let grid = |extra: &[&str]| {
        bin()
            .arg("grid")
            .arg("--in")
            .arg(d.join("lines.csv"))
            .args(["--x", "easting", "--y", "northing", "--value", "value"])
            .args(extra)
            .output()
            .unwrap()
    };
    let o = grid(&[
        "--cell",
        "0.01",
        "--out",
        d.join("big.tif").to_str().unwrap(),
    ]);
    let e = String::from_utf8_lossy(&o.stderr);
    assert!(
        !o.status.success() && e.contains("MB") && e.contains("limit"),
        "{e}"
    );
    assert!(!d.join("big.tif").exists());
    let o = grid(&["--cell", "25", "--out", d.join("g.png").to_str().unwrap()]);
    assert!(!o.status.success() && String::from_utf8_lossy(&o.stderr).contains(".tif or .csv"));
    // Collinear data.
    std::fs::write(
        d.join("line.csv"),
        "easting,northing,value\n0,0,1\n10,10,2\n20,20,3\n30,30,4\n",
    )
    .unwrap();
    let o = bin()
        .arg("grid")
        .arg("--in")
        .arg(d.join("line.csv"))
        .args([
            "--x", "easting", "--y", "northing", "--value", "value", "--cell", "5", "--out",
        ])
        .arg(d.join("c.tif"))
        .output()
        .unwrap();
    assert!(
        !o.status.success() && String::from_utf8_lossy(&o.stderr).contains("line"),
        "{}",
        String::from_utf8_lossy(&o.stderr)
    );
    // Filters: parameters out of range, grids that do not match.
    let o = grid(&[
        "--cell",
        "25",
        "--epsg",
        "32755",
        "--out",
        d.join("g.tif").to_str().unwrap(),
    ]);
    assert!(o.status.success());
    let o = grid(&[
        "--cell",
        "25",
        "--epsg",
        "32756",
        "--out",
        d.join("h.tif").to_str().unwrap(),
    ]);
    assert!(o.status.success());
    let filter = |extra: &[&str]| {
        bin()
            .arg("filter")
            .arg("--in")
            .arg(d.join("g.tif"))
            .args(extra)
            .arg("--out")
            .arg(d.join("f.tif"))
            .output()
            .unwrap()
    };
    for (args, want) in [
        (vec!["--upward-m", "-10"], "positive"),
        (vec!["--band-pass", "100,500"], "long > short"),
        (vec!["--trend", "5"], "0 to 3"),
        (
            vec![
                "--reduce-to-pole",
                "--inclination-deg",
                "95",
                "--declination-deg",
                "0",
            ],
            "inclination",
        ),
        (
            vec!["--subtract", d.join("h.tif").to_str().unwrap()],
            "different coordinate references",
        ),
    ] {
        let o = filter(&args);
        let e = String::from_utf8_lossy(&o.stderr);
        assert!(!o.status.success() && e.contains(want), "{args:?}: {e}");
    }
    assert!(!d.join("f.tif").exists());
}
