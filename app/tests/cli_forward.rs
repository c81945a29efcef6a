//! `fieldstone forward` end to end: the command reproduces the library values
//! and refuses bad input without leaving an output file.

use fieldstone_core::forward::bodies::parse_body_file;
use std::path::{Path, PathBuf};
use std::process::Command;

fn bin() -> Command {
    Command::new(env!("CARGO_BIN_EXE_fieldstone"))
}

fn scratch(name: &str) -> PathBuf {
    let d = std::env::temp_dir().join(format!("fieldstone-cli-{name}-{}", std::process::id()));
    let _ = std::fs::remove_dir_all(&d);
    std::fs::create_dir_all(&d).unwrap();
    d
}

const BODIES: &str = r#"{
  "inducing_field": {"intensity_nt": 55000, "inclination_deg": 70, "declination_deg": -5},
  "bodies": [
    {"prism": {"x": [100, 300], "y": [-50, 50], "z": [-400, -100]},
     "density_contrast_gcc": 0.25, "susceptibility_si": 0.03},
    {"name": "remanent dyke", "prism": {"x": [-60, -40], "y": [-300, 300], "z": [-200, -20]},
     "density_contrast_gcc": -0.1,
     "magnetization": {"intensity_am": 1.2, "inclination_deg": -30, "declination_deg": 10}}
  ]
}"#;

fn run_forward(dir: &Path, bodies: &str, stations: &[u8]) -> (std::process::Output, PathBuf) {
    std::fs::write(dir.join("bodies.json"), bodies).unwrap();
    std::fs::write(dir.join("stations.csv"), stations).unwrap();
    let out = dir.join("out.csv");
    let o = bin()
        .arg("forward")
        .arg("--bodies")
        .arg(dir.join("bodies.json"))
        .arg("--stations")
        .arg(dir.join("stations.csv"))
        .arg("--out")
        .arg(&out)
        .output()
        .unwrap();
    (o, out)
}

#[test]
fn output_reproduces_the_library_values_and_keeps_input_columns() {
    let dir = scratch("roundtrip");
    let mut st = String::from("station,x,y,z,note\n");
    for i in 0..25 {
        st.push_str(&format!(
            "S{i},{},{},{},line 7\n",
            -200.0 + 25.0 * i as f64,
            10.0 - 3.0 * i as f64,
            5.0 + 0.5 * i as f64
        ));
    }
    let (o, out) = run_forward(&dir, BODIES, st.as_bytes());
    assert!(o.status.success(), "{}", String::from_utf8_lossy(&o.stderr));
    let model = parse_body_file(BODIES.as_bytes(), Path::new("b.json"))
        .unwrap()
        .model;
    let mut rdr = csv::Reader::from_path(&out).unwrap();
    let header: Vec<String> = rdr.headers().unwrap().iter().map(String::from).collect();
    assert_eq!(
        header,
        ["station", "x", "y", "z", "note", "gz_mgal", "bx_nt", "by_nt", "bz_nt", "tmi_nt"]
    );
    let mut n = 0;
    for (i, rec) in rdr.records().enumerate() {
        let rec = rec.unwrap();
        assert_eq!(&rec[0], format!("S{i}"));
        assert_eq!(&rec[4], "line 7");
        let p = [
            rec[1].parse().unwrap(),
            rec[2].parse().unwrap(),
            rec[3].parse().unwrap(),
        ];
        let f = model.field_at(i, p).unwrap();
        let b = f.b_nt.unwrap();
        let got: Vec<f64> = (5..10).map(|c| rec[c].parse().unwrap()).collect();
        // Written in shortest round-trip form, so equality is exact.
        assert_eq!(got, vec![f.gz_mgal, b[0], b[1], b[2], f.tmi_nt.unwrap()]);
        n += 1;
    }
    assert_eq!(n, 25);
}

#[test]
fn without_an_inducing_field_only_gravity_is_written() {
    let dir = scratch("gravity-only");
    let bodies = r#"{"bodies": [{"prism": {"x": [0, 10], "y": [0, 10], "z": [-20, -10]}, "density_contrast_gcc": 1.0}]}"#;
    let (o, out) = run_forward(&dir, bodies, b"x,y,z\n5,5,0\n");
    assert!(o.status.success());
    let text = std::fs::read_to_string(out).unwrap();
    assert!(text.starts_with("x,y,z,gz_mgal\n"), "{text}");
}

fn assert_refused(name: &str, bodies: &str, stations: &[u8], expect: &[&str]) {
    let dir = scratch(name);
    let (o, out) = run_forward(&dir, bodies, stations);
    let err = String::from_utf8_lossy(&o.stderr);
    assert!(!o.status.success(), "{name}: should fail");
    for e in expect {
        assert!(err.contains(e), "{name}: message lacks '{e}': {err}");
    }
    assert!(!out.exists(), "{name}: partial output left behind");
    let left: Vec<_> = std::fs::read_dir(&dir)
        .unwrap()
        .map(|e| e.unwrap().file_name())
        .collect();
    assert_eq!(left.len(), 2, "{name}: stray files {left:?}");
}

#[test]
fn bad_input_is_refused_with_file_and_place_and_no_output() {
    assert_refused(
        "missing-column",
        BODIES,
        b"x,y,note\n1,2,3\n",
        &[
            "stations.csv",
            "heights",
            "'note' (keep)",
            "--column height=HEADER",
        ],
    );
    assert_refused(
        "not-a-number",
        BODIES,
        b"x,y,z\n1,2,3\n1,2,abc\n",
        &["stations.csv", "line 3", "'z'", "abc"],
    );
    assert_refused(
        "reversed-prism",
        r#"{"bodies": [{"prism": {"x": [300, 100], "y": [0, 1], "z": [0, 1]}, "density_contrast_gcc": 1}]}"#,
        b"x,y,z\n0,0,10\n",
        &["bodies.json", "bodies[0].prism.x", "increase"],
    );
    assert_refused(
        "unknown-key",
        r#"{"bodies": [{"prism": {"x": [0, 1], "y": [0, 1], "z": [0, 1]}, "colour": "red"}]}"#,
        b"x,y,z\n0,0,10\n",
        &["bodies.json", "bodies[0]", "colour"],
    );
    assert_refused(
        "station-on-edge",
        BODIES,
        b"x,y,z\n100,-50,-250\n",
        &["stations.csv", "line 2", "edge"],
    );
    assert_refused("empty-stations", BODIES, b"", &["stations.csv", "empty"]);
}

#[test]
fn unreadable_files_and_overwriting_the_input_are_refused() {
    let dir = scratch("unreadable");
    std::fs::write(dir.join("stations.csv"), "x,y,z\n0,0,0\n").unwrap();
    let o = bin()
        .args(["forward", "--bodies"])
        .arg(dir.join("none.json"))
        .arg("--stations")
        .arg(dir.join("stations.csv"))
        .arg("--out")
        .arg(dir.join("o.csv"))
        .output()
        .unwrap();
    assert!(!o.status.success());
    assert!(String::from_utf8_lossy(&o.stderr).contains("none.json"));
    std::fs::write(dir.join("b.json"), BODIES).unwrap();
    let o = bin()
        .args(["forward", "--bodies"])
        .arg(dir.join("b.json"))
        .arg("--stations")
        .arg(dir.join("stations.csv"))
        .arg("--out")
        .arg(dir.join("stations.csv"))
        .output()
        .unwrap();
    assert!(!o.status.success());
    assert_eq!(
        std::fs::read_to_string(dir.join("stations.csv")).unwrap(),
        "x,y,z\n0,0,0\n"
    );
}

#[test]
fn help_lists_the_commands_with_the_cautions() {
    // Without a subcommand the program opens the window, so the help is asked for.
    let o = bin().arg("--help").output().unwrap();
    assert!(o.status.success());
    let s = String::from_utf8_lossy(&o.stdout);
    for c in [
        "forward",
        "run",
        "demo",
        "constraints",
        "export",
        "non-unique",
        "qualified person",
    ] {
        assert!(s.contains(c), "{c} missing from the help:\n{s}");
    }
}

#[test]
fn a_path_that_is_not_a_project_is_refused_before_any_window_opens() {
    let o = bin().arg("no-such-folder").output().unwrap();
    assert!(!o.status.success());
    let e = String::from_utf8_lossy(&o.stderr);
    assert!(
        e.contains("no-such-folder") && e.contains("not a Fieldstone project folder"),
        "{e}"
    );
}

/// Station files are read through the importer: a header in other words and
/// feet, overridden roles and units, give the same field as x, y, z in metres.
#[test]
fn stations_with_their_own_header_are_read_through_the_importer() {
    let bodies = r#"{"bodies": [{"prism": {"x": [-50, 50], "y": [-50, 50], "z": [-300, -100]}, "density_contrast_gcc": 0.5}]}"#;
    let dir = scratch("own-header");
    let (o, out) = run_forward(&dir, bodies, b"x,y,z\n0,0,0\n30,-20,12.192\n");
    assert!(o.status.success(), "{}", String::from_utf8_lossy(&o.stderr));
    let metres = std::fs::read_to_string(out).unwrap();
    let gz = |text: &str| -> Vec<f64> {
        text.lines()
            .skip(1)
            .map(|l| l.rsplit(',').next().unwrap().parse().unwrap())
            .collect()
    };
    // Feet by the header's name; the station id column is carried through.
    let dir = scratch("own-header-ft");
    let (o, out) = run_forward(
        &dir,
        bodies,
        b"Stn,Easting,Northing,Elev_ft\nA,0,0,0\nB,30,-20,40\n",
    );
    assert!(o.status.success(), "{}", String::from_utf8_lossy(&o.stderr));
    let feet = std::fs::read_to_string(out).unwrap();
    assert!(
        feet.starts_with("Stn,Easting,Northing,Elev_ft,gz_mgal\n"),
        "{feet}"
    );
    // 40 ft = 12.192 m exactly (international foot).
    let (a, b) = (gz(&metres), gz(&feet));
    for (p, q) in a.iter().zip(&b) {
        assert!((p - q).abs() < 1e-12, "{p} against {q}");
    }
    // A header the importer does not know, named with --column and --unit.
    let dir = scratch("own-header-override");
    std::fs::write(dir.join("bodies.json"), bodies).unwrap();
    std::fs::write(dir.join("stations.csv"), "P,Q,R\n0,0,0\n30,-20,40\n").unwrap();
    let o = bin()
        .args(["forward", "--bodies"])
        .arg(dir.join("bodies.json"))
        .arg("--stations")
        .arg(dir.join("stations.csv"))
        .args(["--column", "x=P", "--column", "y=Q", "--column", "height=R"])
        .args(["--unit", "R=ft", "--out"])
        .arg(dir.join("o.csv"))
        .output()
        .unwrap();
    assert!(o.status.success(), "{}", String::from_utf8_lossy(&o.stderr));
    let c = gz(&std::fs::read_to_string(dir.join("o.csv")).unwrap());
    for (p, q) in a.iter().zip(&c) {
        assert!((p - q).abs() < 1e-12, "{p} against {q}");
    }
}

/// A station table separated by spaces, with a `/` comment line, keeps its
/// columns in the output (the importer's dialects are the output's).
#[test]
fn a_space_separated_station_table_keeps_its_columns() {
    let dir = scratch("spaces");
    let (o, out) = run_forward(
        &dir,
        BODIES,
        b"/ stations from the crew's notebook\nx   y    z  note\n0   0   10  a\n30 -20   12  b\n",
    );
    assert!(o.status.success(), "{}", String::from_utf8_lossy(&o.stderr));
    let text = std::fs::read_to_string(out).unwrap();
    let mut lines = text.lines();
    assert!(
        lines.next().unwrap().starts_with("x,y,z,note,gz_mgal"),
        "{text}"
    );
    assert!(lines.next().unwrap().starts_with("0,0,10,a,"), "{text}");
}
