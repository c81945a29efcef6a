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

/// Line data with its own header go through the importer: longitude and
/// latitude are projected to the UTM zone of the survey centre (recorded in
/// the GeoTIFF), the value's unit is read from its header, and a value
/// column that does not exist is named with the columns found.
#[test]
fn grids_a_table_with_its_own_header_through_the_importer() {
    let d = scratch("importer");
    let mut s = String::from("Stn,Long,Lat,Elev (m),BA (mGal)\n");
    for j in 0..15 {
        for i in 0..15 {
            let (lon, lat) = (-81.6 + 0.002 * i as f64, 48.75 + 0.002 * j as f64);
            s.push_str(&format!(
                "S{i}_{j},{lon},{lat},300,{}\n",
                2.0 + 0.5 * i as f64
            ));
        }
    }
    std::fs::write(d.join("ba.csv"), s).unwrap();
    let run = |value: &str, out: &str| {
        bin()
            .arg("grid")
            .arg("--in")
            .arg(d.join("ba.csv"))
            .args(["--value", value, "--cell", "50", "--out"])
            .arg(d.join(out))
            .output()
            .unwrap()
    };
    let o = run("BA (mGal)", "ba.tif");
    assert!(o.status.success(), "{}", String::from_utf8_lossy(&o.stderr));
    let g = read_geotiff(&d.join("ba.tif")).unwrap();
    // 81.6° W lies in UTM zone 17 (84° W to 78° W); north: EPSG 32617.
    assert_eq!(g.epsg, Some(32617));
    // 81.6° W is 2.4° west of the zone's 81° W meridian: eastings of about
    // 500 km − 2.4° × 73 km; the values stay within those gridded.
    let x = g.x_of(0);
    assert!((300_000.0..500_000.0).contains(&x), "{x}");
    let mut inside = 0;
    for j in 0..g.ny {
        for i in 0..g.nx {
            let v = g.get(i, j);
            if v.is_finite() {
                // (minimum curvature overshoots a little at the edges)
                assert!((1.5..=9.5).contains(&v), "{v}");
                inside += 1;
            }
        }
    }
    assert!(inside > 100, "{inside}");
    // Blanked outside a survey outline given in longitude/latitude: the
    // nodes kept all lie inside it.
    std::fs::write(
        d.join("area.geojson"),
        r#"{"type": "Polygon", "coordinates": [[[-81.6, 48.75], [-81.58, 48.75], [-81.58, 48.77], [-81.6, 48.77], [-81.6, 48.75]]]}"#,
    )
    .unwrap();
    let o = bin()
        .arg("grid")
        .arg("--in")
        .arg(d.join("ba.csv"))
        .args(["--value", "BA (mGal)", "--cell", "50", "--outline"])
        .arg(d.join("area.geojson"))
        .arg("--out")
        .arg(d.join("cut.tif"))
        .output()
        .unwrap();
    assert!(o.status.success(), "{}", String::from_utf8_lossy(&o.stderr));
    let cut = read_geotiff(&d.join("cut.tif")).unwrap();
    let utm = fieldstone_core::geodesy::crs::Crs::from_epsg(32617).unwrap();
    let (x1, _) = utm.project(48.76, -81.58).unwrap();
    let (kept, total) = (
        cut.values.iter().filter(|v| v.is_finite()).count(),
        g.values.iter().filter(|v| v.is_finite()).count(),
    );
    assert!(kept > 20 && kept < total, "{kept} of {total}");
    for j in 0..cut.ny {
        for i in 0..cut.nx {
            if cut.get(i, j).is_finite() {
                assert!(cut.x_of(i) <= x1 + 60.0, "node {i},{j} east of the outline");
            }
        }
    }
    let o = run("Bouguer", "none.tif");
    let e = String::from_utf8_lossy(&o.stderr);
    assert!(!o.status.success());
    assert!(
        e.contains("ba.csv") && e.contains("'Bouguer'") && e.contains("'Lat' (lat)"),
        "{e}"
    );
    assert!(!d.join("none.tif").exists());
}

/// An ASEG-GDF2 `.dat` with its `.dfn` beside it goes through `inspect`,
/// `grid` and `forward` like a delimited table: roles and units from the
/// definition (UNIT=nT makes "TF" the magnetic reading), nulls as missing.
#[test]
fn aseg_gdf2_line_data_is_inspected_gridded_and_used_as_stations() {
    let d = scratch("gdf");
    std::fs::write(
        d.join("mag.dfn"),
        "DEFN   ST=RECD,RT=COMM;RT:A4;COMMENTS:A76\n\
DEFN 1 ST=RECD,RT=;LINE:I6\n\
DEFN 2 ST=RECD,RT=;EASTING:F10.1:UNIT=m\n\
DEFN 3 ST=RECD,RT=;NORTHING:F11.1:UNIT=m\n\
DEFN 4 ST=RECD,RT=;ELEV:F8.1:UNIT=m\n\
DEFN 5 ST=RECD,RT=;TF:F10.2:UNIT=nT,NULL=-99999.99,NAME=total field\n\
DEFN 6 ST=RECD,RT=;END DEFN\n",
    )
    .unwrap();
    let mut dat = String::from("COMM invented lines for a test\n");
    for l in 0..5 {
        for k in 0..21 {
            let (x, y) = (452_000.0 + 25.0 * k as f64, 5_401_000.0 + 100.0 * l as f64);
            let tf = if (l, k) == (2, 7) {
                -99999.99
            } else {
                54_000.0 + 0.01 * (x - 452_000.0)
            };
            dat.push_str(&format!(
                "{:>6}{x:>10.1}{y:>11.1}{:>8.1}{tf:>10.2}\n",
                10 * (l + 1),
                120.0
            ));
        }
    }
    std::fs::write(d.join("mag.dat"), dat).unwrap();
    let o = bin()
        .arg("inspect")
        .arg(d.join("mag.dat"))
        .output()
        .unwrap();
    let text = String::from_utf8_lossy(&o.stdout);
    assert!(o.status.success(), "{}", String::from_utf8_lossy(&o.stderr));
    assert!(
        text.contains("rows: 105") && text.contains("dummies: 1"),
        "{text}"
    );
    let tf = text.lines().find(|l| l.contains(" TF ")).unwrap();
    assert!(tf.contains("magnetic") && tf.contains("nT"), "{tf}");
    let o = bin()
        .arg("grid")
        .arg("--in")
        .arg(d.join("mag.dat"))
        .args(["--value", "TF", "--cell", "25", "--epsg", "32617", "--out"])
        .arg(d.join("tf.tif"))
        .output()
        .unwrap();
    assert!(o.status.success(), "{}", String::from_utf8_lossy(&o.stderr));
    let g = read_geotiff(&d.join("tf.tif")).unwrap();
    assert_eq!(g.epsg, Some(32617));
    // A plane in x: the gridded values reproduce it, the null left out.
    let (i, j) = (8, 8);
    let want = 54_000.0 + 0.01 * (g.x_of(i) - 452_000.0);
    assert!(
        (g.get(i, j) - want).abs() < 1e-3,
        "{} against {want}",
        g.get(i, j)
    );
    // The same file as forward stations: its columns carried through.
    std::fs::write(
        d.join("b.json"),
        r#"{"bodies": [{"prism": {"x": [452100, 452300], "y": [5401100, 5401300], "z": [-200, -100]}, "density_contrast_gcc": 0.3}]}"#,
    )
    .unwrap();
    let o = bin()
        .args(["forward", "--bodies"])
        .arg(d.join("b.json"))
        .arg("--stations")
        .arg(d.join("mag.dat"))
        .arg("--out")
        .arg(d.join("fwd.csv"))
        .output()
        .unwrap();
    assert!(o.status.success(), "{}", String::from_utf8_lossy(&o.stderr));
    let out = std::fs::read_to_string(d.join("fwd.csv")).unwrap();
    assert!(
        out.starts_with("LINE,EASTING,NORTHING,ELEV,TF,gz_mgal\n"),
        "{out}"
    );
    assert_eq!(out.lines().count(), 106);
    assert!(
        out.contains(",-99999.99,"),
        "the null is carried through as written"
    );
}
