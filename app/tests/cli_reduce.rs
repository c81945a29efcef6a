//! `fieldstone igrf` and `fieldstone reduce` end to end.

use fieldstone_core::geodesy::igrf::{decimal_year_of_date, IgrfModel};
use fieldstone_core::reduce::gravity::{reduce_station, GravitySettings};
use std::path::{Path, PathBuf};
use std::process::Command;

fn bin() -> Command {
    Command::new(env!("CARGO_BIN_EXE_fieldstone"))
}

/// Runs `fieldstone reduce KIND --in INPUT ARGS... [FLAG PATH]... --out OUT`.
fn reduce(
    kind: &str,
    input: &Path,
    args: &[&str],
    paths: &[(&str, &Path)],
    out: &Path,
) -> std::process::Output {
    let mut c = bin();
    c.arg("reduce").arg(kind).arg("--in").arg(input).args(args);
    for (flag, p) in paths {
        c.arg(flag).arg(p);
    }
    c.arg("--out").arg(out).output().unwrap()
}

fn scratch(name: &str) -> PathBuf {
    let d = std::env::temp_dir().join(format!("fieldstone-cli-red-{name}-{}", std::process::id()));
    let _ = std::fs::remove_dir_all(&d);
    std::fs::create_dir_all(&d).unwrap();
    d
}

fn column(text: &str, name: &str) -> Vec<f64> {
    let mut lines = text.lines();
    let header: Vec<&str> = lines.next().unwrap().split(',').collect();
    let i = header
        .iter()
        .position(|h| *h == name)
        .unwrap_or_else(|| panic!("no column {name} in {header:?}"));
    lines
        .map(|l| l.split(',').nth(i).unwrap().parse().unwrap())
        .collect()
}

#[test]
fn igrf_prints_the_library_value_as_csv() {
    let o = bin()
        .args([
            "igrf",
            "--lat",
            "-33.5",
            "--lon",
            "151.2",
            "--height-m",
            "100",
            "--date",
            "2026-06-01",
        ])
        .output()
        .unwrap();
    assert!(o.status.success());
    let s = String::from_utf8_lossy(&o.stdout);
    let mut l = s.lines();
    assert_eq!(
        l.next().unwrap(),
        "x_nt,y_nt,z_nt,h_nt,f_nt,inclination_deg,declination_deg"
    );
    let v: Vec<f64> = l
        .next()
        .unwrap()
        .split(',')
        .map(|x| x.parse().unwrap())
        .collect();
    let f = IgrfModel::igrf14()
        .field(
            -33.5,
            151.2,
            100.0,
            decimal_year_of_date("2026-06-01").unwrap(),
        )
        .unwrap();
    assert!((v[4] - f.f_nt).abs() < 1e-3 && (v[5] - f.inclination_deg).abs() < 1e-5);
    let o = bin()
        .args([
            "igrf",
            "--lat",
            "10",
            "--lon",
            "0",
            "--height-m",
            "0",
            "--date",
            "2031-01-01",
        ])
        .output()
        .unwrap();
    assert!(!o.status.success() && String::from_utf8_lossy(&o.stderr).contains("2030"));
}

#[test]
fn reduce_gravity_writes_every_correction_and_matches_the_library() {
    let d = scratch("grav");
    std::fs::write(d.join("in.csv"), "station,lat,lon,height_m,gravity_mgal\nA,-33.5,151.2,50,979700.5\nB,-33.6,151.3,250.5,979650.25\n").unwrap();
    let o = reduce(
        "gravity",
        &d.join("in.csv"),
        &["--density", "2.67"],
        &[],
        &d.join("out.csv"),
    );
    assert!(o.status.success(), "{}", String::from_utf8_lossy(&o.stderr));
    assert!(String::from_utf8_lossy(&o.stderr).contains("2.67 g/cm³"));
    let text = std::fs::read_to_string(d.join("out.csv")).unwrap();
    assert!(text.starts_with("station,lat,lon,height_m,gravity_mgal,source_file,normal_gravity_mgal,free_air_correction_mgal,atmospheric_correction_mgal,bouguer_slab_mgal,curvature_correction_mgal,terrain_correction_mgal,free_air_anomaly_mgal,bouguer_anomaly_mgal,complete_bouguer_anomaly_mgal\n"), "{text}");
    let cba = column(&text, "complete_bouguer_anomaly_mgal");
    let want = reduce_station(&GravitySettings::default(), 979_650.25, -33.6, 250.5, 0.0);
    assert_eq!(cba[1], want.complete_bouguer_anomaly);
    // Switched off corrections are zero in their columns.
    let o = reduce(
        "gravity",
        &d.join("in.csv"),
        &[
            "--density",
            "2.67",
            "--no-atmospheric",
            "--no-curvature",
            "--free-air",
            "first-order",
        ],
        &[],
        &d.join("out2.csv"),
    );
    assert!(o.status.success());
    let text = std::fs::read_to_string(d.join("out2.csv")).unwrap();
    assert_eq!(column(&text, "atmospheric_correction_mgal"), vec![0.0, 0.0]);
    assert!((column(&text, "free_air_correction_mgal")[1] - 0.3086 * 250.5).abs() < 1e-9);
}

#[test]
fn relative_readings_are_tied_to_the_base_through_drift_loops() {
    let d = scratch("drift");
    // No tide, drift +0.03 mGal/h; station S1 is 5.5 mGal below the base.
    std::fs::write(d.join("in.csv"), "station,lat,lon,height_m,gravity_mgal,time\nB,-33.5,151.2,50,2000.000,08:00:00\nS1,-33.5,151.21,50,1994.515,08:30:00\nB,-33.5,151.2,50,2000.030,09:00:00\n").unwrap();
    let o = reduce(
        "gravity",
        &d.join("in.csv"),
        &[
            "--density",
            "2.67",
            "--base-value",
            "979600.0",
            "--base-station",
            "B",
            "--no-tide",
            "--date",
            "2026-03-01",
        ],
        &[],
        &d.join("out.csv"),
    );
    assert!(o.status.success(), "{}", String::from_utf8_lossy(&o.stderr));
    let text = std::fs::read_to_string(d.join("out.csv")).unwrap();
    let g = column(&text, "observed_gravity_mgal");
    assert!((g[1] - (979_600.0 - 5.5)).abs() < 1e-9, "{g:?}");
    assert!(String::from_utf8_lossy(&o.stderr).contains("+0.0300 mGal/h"));
}

#[test]
fn bad_reduction_input_is_refused_and_nothing_is_written() {
    let d = scratch("bad");
    let cases: [(&str, &str, &[&str], &str); 5] = [
        ("noheight.csv", "lat,lon,gravity_mgal\n1,2,979000\n", &["gravity", "--density", "2.67"], "height_m"),
        ("lat.csv", "lat,lon,height_m,gravity_mgal\n151,-33,10,979000\n", &["gravity", "--density", "2.67"], "swapped"),
        ("order.csv", "station,lat,lon,height_m,gravity_mgal,time\nB,1,2,0,1,09:00\nS,1,2,0,1,08:00\nB,1,2,0,1,10:00\n", &["gravity", "--density", "2.67", "--base-value", "1", "--base-station", "B", "--date", "2026-01-01"], "time goes backwards"),
        ("date.csv", "lat,lon,height_m,mag_nt\n1,2,0,50000\n", &["magnetic", "--date", "2035-01-01"], "2030"),
        ("density.csv", "lat,lon,height_m,gravity_mgal\n1,2,0,979000\n", &["gravity", "--density", "2670"], "g/cm³"),
    ];
    for (file, text, args, want) in cases {
        std::fs::write(d.join(file), text).unwrap();
        let out = d.join(format!("{file}.out"));
        let o = reduce(args[0], &d.join(file), &args[1..], &[], &out);
        let e = String::from_utf8_lossy(&o.stderr);
        assert!(!o.status.success() && e.contains(want), "{file}: {e}");
        assert!(!out.exists(), "{file}: output written");
    }
}

#[test]
fn reduce_magnetic_removes_diurnal_and_main_field() {
    let d = scratch("mag");
    std::fs::write(d.join("in.csv"), "lat,lon,height_m,mag_nt,time\n-33.5,151.2,30,57000.0,10:00:30\n-33.5,151.201,30,57010.0,10:01:30\n").unwrap();
    std::fs::write(
        d.join("base.csv"),
        "time,mag_nt\n10:00:00,56800\n10:01:00,56802\n10:02:00,56806\n",
    )
    .unwrap();
    let o = reduce(
        "magnetic",
        &d.join("in.csv"),
        &["--date", "2026-05-10", "--datum-nt", "56800"],
        &[("--base", d.join("base.csv").as_path())],
        &d.join("out.csv"),
    );
    assert!(o.status.success(), "{}", String::from_utf8_lossy(&o.stderr));
    let text = std::fs::read_to_string(d.join("out.csv")).unwrap();
    assert_eq!(column(&text, "diurnal_nt"), vec![1.0, 4.0]);
    let f = IgrfModel::igrf14()
        .field(
            -33.5,
            151.2,
            30.0,
            decimal_year_of_date("2026-05-10").unwrap(),
        )
        .unwrap();
    let tmi = column(&text, "tmi_anomaly_nt");
    assert!((tmi[0] - (57_000.0 - 1.0 - f.f_nt)).abs() < 1e-6);
    assert!(String::from_utf8_lossy(&o.stderr).contains("inducing field"));
    // A base record that does not overlap the survey is refused.
    std::fs::write(
        d.join("late.csv"),
        "time,mag_nt\n12:00:00,56800\n12:01:00,56802\n",
    )
    .unwrap();
    let o = reduce(
        "magnetic",
        &d.join("in.csv"),
        &["--date", "2026-05-10"],
        &[("--base", d.join("late.csv").as_path())],
        &d.join("out3.csv"),
    );
    assert!(!o.status.success() && String::from_utf8_lossy(&o.stderr).contains("does not overlap"));
    assert!(!d.join("out3.csv").exists());
}

/// The field survey contract: several files with their own headers, elapsed
/// minutes, readings in counter units through the meter's table, a base
/// network with one unknown base. Every reading comes back to within
/// 0.01 mGal RMS of the absolute gravity it was made from.
#[test]
fn a_survey_of_several_files_with_a_base_network_and_a_meter_table() {
    use fieldstone_tests::field_survey::write_field_survey;
    let d = scratch("network");
    let s = write_field_survey(&d);
    let out = d.join("reduced.csv");
    let mut c = bin();
    c.args(["reduce", "gravity"]);
    for f in &s.days {
        c.arg("--in").arg(f);
    }
    let o = c
        .args(["--density", "2.67", "--no-tide"])
        .arg("--bases")
        .arg(&s.bases)
        .arg("--meter-table")
        .arg(&s.meter)
        .arg("--out")
        .arg(&out)
        .output()
        .unwrap();
    let err = String::from_utf8_lossy(&o.stderr);
    assert!(o.status.success(), "{err}");
    // Each loop with its file and bases; each base with its value and residual.
    assert!(err.contains("day1.csv: loop 1: A → C"), "{err}");
    assert!(err.contains("day2.csv: loop 2: B → B"), "{err}");
    assert!(
        err.contains("base C: 980401.7") && err.contains("(adjusted, ±"),
        "{err}"
    );
    assert!(
        err.contains("base A: 980412.3450 mGal (known, held)"),
        "{err}"
    );
    let text = std::fs::read_to_string(&out).unwrap();
    let header = text.lines().next().unwrap();
    assert!(header.starts_with("station_id,longitude,latitude,elevation,time_minutes,reading,source_file,normal_gravity_mgal,"), "{header}");
    for c in [
        "observed_gravity_mgal",
        "drift_correction_mgal",
        "tide_correction_mgal",
        "complete_bouguer_anomaly_mgal",
    ] {
        assert!(header.contains(c), "{c}");
    }
    let g = column(&text, "observed_gravity_mgal");
    assert_eq!(g.len(), s.visits.len());
    let mut rdr = csv::Reader::from_reader(text.as_bytes());
    let mut sq = 0.0;
    for (k, row) in rdr.records().enumerate() {
        let row = row.unwrap();
        // File order, then row order, with each row's file named.
        assert_eq!(&row[0], s.visits[k].as_str());
        let day = if k < 12 {
            "day1.csv"
        } else if k < 24 {
            "day2.csv"
        } else {
            "day3.csv"
        };
        assert!(row[6].ends_with(day), "{}", &row[6]);
        let e = g[k] - s.truth[&s.visits[k]];
        assert!(e.abs() < 0.02, "{}: {e}", s.visits[k]);
        sq += e * e;
    }
    let rms = (sq / g.len() as f64).sqrt();
    eprintln!(
        "field survey through the command: RMS {rms:.4} mGal over {} readings",
        g.len()
    );
    assert!(rms < 0.01, "{rms}");
}

/// Field-survey mistakes are refused with the file and line, and nothing
/// is written.
#[test]
fn network_and_meter_mistakes_are_refused_with_file_and_line() {
    use fieldstone_tests::field_survey::write_field_survey;
    let d = scratch("network-bad");
    let s = write_field_survey(&d);
    let run = |days: &[PathBuf], extra: &[&str], name: &str| {
        let out = d.join(format!("{name}-reduced.csv"));
        let mut c = bin();
        c.args(["reduce", "gravity", "--density", "2.67", "--no-tide"]);
        for f in days {
            c.arg("--in").arg(f);
        }
        let o = c.args(extra).arg("--out").arg(&out).output().unwrap();
        assert!(!o.status.success(), "{name} was accepted");
        assert!(!out.exists(), "{name}: an output was written");
        String::from_utf8_lossy(&o.stderr).to_string()
    };
    let bases = s.bases.display().to_string();
    let meter = s.meter.display().to_string();
    // A meter table with a row missing.
    let table = std::fs::read_to_string(&s.meter).unwrap();
    let gap: Vec<&str> = table
        .lines()
        .enumerate()
        .filter(|(k, _)| *k != 30)
        .map(|(_, l)| l)
        .collect();
    std::fs::write(d.join("gap.csv"), gap.join("\n")).unwrap();
    let e = run(
        &s.days,
        &[
            "--bases",
            &bases,
            "--meter-table",
            d.join("gap.csv").to_str().unwrap(),
        ],
        "gap",
    );
    assert!(
        e.contains("gap.csv") && e.contains("line 31") && e.contains("a row is missing"),
        "{e}"
    );
    // A reading outside the table.
    let day1 = std::fs::read_to_string(&s.days[0]).unwrap();
    let mut lines: Vec<String> = day1.lines().map(String::from).collect();
    let f: Vec<&str> = lines[3].split(',').collect();
    lines[3] = format!("{},{},{},{},{},9999.99", f[0], f[1], f[2], f[3], f[4]);
    std::fs::write(d.join("outside.csv"), lines.join("\n")).unwrap();
    let days = [d.join("outside.csv"), s.days[1].clone(), s.days[2].clone()];
    let e = run(
        &days,
        &["--bases", &bases, "--meter-table", &meter],
        "outside",
    );
    assert!(
        e.contains("outside.csv: line 4, column 'reading'")
            && e.contains("outside the calibration table"),
        "{e}"
    );
    // A day that ends away from any base: the last loop has no closing base.
    let open: Vec<&str> = day1.lines().take(11).collect();
    std::fs::write(d.join("open.csv"), open.join("\n")).unwrap();
    let days = [d.join("open.csv"), s.days[1].clone(), s.days[2].clone()];
    let e = run(&days, &["--bases", &bases, "--meter-table", &meter], "open");
    assert!(
        e.contains("open.csv: line 10") && e.contains("outside every base loop"),
        "{e}"
    );
    // A base listed twice with different values.
    std::fs::write(
        d.join("twice.csv"),
        "station,gravity_mgal\nA,980412.345\nB,980390.12\nA,980412.5\n",
    )
    .unwrap();
    let e = run(
        &s.days,
        &[
            "--bases",
            d.join("twice.csv").to_str().unwrap(),
            "--meter-table",
            &meter,
        ],
        "twice",
    );
    assert!(
        e.contains("twice.csv: line 4") && e.contains("listed twice"),
        "{e}"
    );
    // Time going backwards.
    let mut back: Vec<String> = day1.lines().map(String::from).collect();
    let f: Vec<&str> = back[5].split(',').collect();
    back[5] = format!("{},{},{},{},1.0,{}", f[0], f[1], f[2], f[3], f[5]);
    std::fs::write(d.join("back.csv"), back.join("\n")).unwrap();
    let days = [d.join("back.csv"), s.days[1].clone(), s.days[2].clone()];
    let e = run(&days, &["--bases", &bases, "--meter-table", &meter], "back");
    assert!(
        e.contains("back.csv: line 6") && e.contains("time goes backwards"),
        "{e}"
    );
    // No reading column the guesser knows: the message lists the columns
    // and the option that fixes it.
    std::fs::write(d.join("odd.csv"), day1.replacen("reading", "dial_value", 1)).unwrap();
    let days = [d.join("odd.csv")];
    let e = run(&days, &["--bases", &bases, "--meter-table", &meter], "odd");
    assert!(
        e.contains("'dial_value' (keep)") && e.contains("--column gravity=HEADER"),
        "{e}"
    );
}
