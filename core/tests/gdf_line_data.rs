//! ASEG-GDF2 line data (`.dat` with its `.dfn` beside it) read through the
//! importer. The files are written here from the published specification
//! (Pratt 2003, ASEG-GDF2 revision 4): `DEFN` lines with record type,
//! `NAME:FORMAT:UNIT=..,NULL=..,NAME=..` fields, a comment record type
//! `COMM`, fixed-width records, and a multi-value field (`3F8.2`).

use fieldstone_core::survey::columns::{Role, Unit};
use fieldstone_core::survey::import::{import_survey, ImportSpec};
use fieldstone_core::table::file::{read_table_file, sniff_file};
use fieldstone_core::table::gdf::{parse_definition, read_gdf_bytes};
use fieldstone_core::table::passthrough::read_passthrough;
use fieldstone_core::table::{ColumnData, TextOptions};
use std::path::{Path, PathBuf};

fn scratch(name: &str) -> PathBuf {
    let d = std::env::temp_dir().join(format!("fieldstone-gdf-{name}-{}", std::process::id()));
    let _ = std::fs::remove_dir_all(&d);
    std::fs::create_dir_all(&d).unwrap();
    d
}

pub const DFN: &str = "DEFN   ST=RECD,RT=COMM;RT:A4;COMMENTS:A76\r
DEFN 1 ST=RECD,RT=;LINE:I8:NAME=flight line\r
DEFN 2 ST=RECD,RT=;FIDUCIAL:F10.1:NAME=fiducial\r
DEFN 3 ST=RECD,RT=;EASTING:F11.2:UNIT=metres,NULL=-99999.99,NAME=easting WGS 84 UTM 17N\r
DEFN 4 ST=RECD,RT=;NORTHING:F12.2:UNIT=metres,NULL=-99999.99,NAME=northing\r
DEFN 5 ST=RECD,RT=;GPS_HT:F8.1:UNIT=feet,NULL=-999.9,NAME=sensor height above the ellipsoid\r
DEFN 6 ST=RECD,RT=;TF:F11.3:UNIT=nT,NULL=-99999.999,NAME=total field, levelled\r
DEFN 7 ST=RECD,RT=;EM:3F8.2:UNIT=ppm,NULL=-999.99,NAME=in-phase\r
DEFN 8 ST=RECD,RT=;END DEFN\r
";

/// Fixed-width records: (line, fid, e, n, h_ft, tf, em) with a null.
pub fn dat() -> String {
    let mut s = String::new();
    s.push_str(&format!(
        "{:<80}\r\n",
        "COMM invented survey written for the reader's tests"
    ));
    s.push_str(&format!("{:<80}\r\n", "COMM second comment record"));
    for k in 0..6 {
        let tf = if k == 3 {
            -99999.999
        } else {
            54_000.0 + 1.25 * k as f64
        };
        s.push_str(&format!(
            "{:>8}{:>10.1}{:>11.2}{:>12.2}{:>8.1}{:>11.3}{:>8.2}{:>8.2}{:>8.2}\r\n",
            1010,
            100.0 + k as f64,
            452_000.0 + 25.0 * k as f64,
            5_401_000.0,
            1000.0 + k as f64,
            tf,
            1.5,
            -2.25,
            if k == 2 { -999.99 } else { 3.0 },
        ));
    }
    s
}

fn write(dir: &Path, dfn: &str, dat: &str) -> PathBuf {
    std::fs::write(dir.join("survey.dfn"), dfn).unwrap();
    std::fs::write(dir.join("survey.dat"), dat).unwrap();
    dir.join("survey.dat")
}

#[test]
fn a_fixed_width_file_is_imported_with_roles_units_and_nulls_from_its_definition() {
    let d = scratch("fixed");
    let p = write(&d, DFN, &dat());
    let sn = sniff_file(&p, &TextOptions::default()).unwrap();
    assert_eq!(
        sn.names,
        ["LINE", "FIDUCIAL", "EASTING", "NORTHING", "GPS_HT", "TF", "EM[0]", "EM[1]", "EM[2]"]
    );
    let spec = ImportSpec::guess_for_file(&p, &TextOptions::default(), Some(32617)).unwrap();
    let role = |n: &str| spec.columns.iter().find(|c| c.name == n).unwrap();
    assert_eq!(role("LINE").role, Role::Line);
    assert_eq!(role("FIDUCIAL").role, Role::Station);
    assert_eq!(role("EASTING").role, Role::Easting);
    assert_eq!(role("GPS_HT").role, Role::Elevation);
    // UNIT=feet from the definition, not the name.
    assert_eq!(role("GPS_HT").unit, Unit::Foot);
    // "TF" says nothing by its name; UNIT=nT makes it the magnetic reading.
    assert_eq!(role("TF").role, Role::Magnetic);
    let s = import_survey(&p, &spec).unwrap();
    assert_eq!(s.n_rows(), 6);
    // The two comment records are lines 1 and 2: data begin on line 3.
    assert_eq!(s.file_lines, vec![3, 4, 5, 6, 7, 8]);
    assert_eq!(s.x[5], 452_125.0);
    // 1005 ft = 306.324 m (international foot, 0.3048 m exactly: the
    // international yard and pound agreement of 1959, common practice).
    let h = s.elevation_m.as_ref().unwrap();
    assert!((h[5] - 1005.0 * 0.3048).abs() < 1e-9, "{}", h[5]);
    let tf = &s.channel(Role::Magnetic).unwrap().values;
    assert!(tf[3].is_nan(), "NULL=-99999.999 must be a missing value");
    assert_eq!(tf[4], 54_005.0);
    let em2 = s.channels.iter().find(|c| c.name == "EM[2]").unwrap();
    assert!(em2.values[2].is_nan() && em2.values[1] == 3.0);
    assert!(s.dummies.contains(&("TF".to_string(), 1)));
    // The pass-through reader keeps every value as written, nulls too.
    let raw = read_passthrough(&p, &["tmi_anomaly_nt"]).unwrap();
    assert_eq!(raw.lines, s.file_lines);
    let tf_col = raw.column("TF").unwrap();
    assert_eq!(raw.text(3, tf_col), "-99999.999");
    assert_eq!(raw.text(0, raw.column("EM[1]").unwrap()), "-2.25");
}

#[test]
fn records_separated_by_tabs_are_read_by_tokens_with_the_same_values() {
    let d = scratch("tokens");
    let fixed = write(&d, DFN, &dat());
    let a = read_table_file(&fixed, &TextOptions::default(), None).unwrap();
    let d2 = scratch("tokens-tab");
    let tabbed: String = dat()
        .lines()
        .map(|l| {
            if l.starts_with("COMM") {
                format!("{l}\n")
            } else {
                format!("{}\n", l.split_whitespace().collect::<Vec<_>>().join("\t"))
            }
        })
        .collect();
    let p = write(&d2, DFN, &tabbed);
    let b = read_table_file(&p, &TextOptions::default(), None).unwrap();
    assert_eq!(a.names, b.names);
    assert_eq!(a.lines, b.lines);
    for (x, y) in a.columns.iter().zip(&b.columns) {
        match (x, y) {
            (ColumnData::Number(u), ColumnData::Number(v)) => {
                for (p, q) in u.iter().zip(v) {
                    assert!(p == q || (p.is_nan() && q.is_nan()), "{p} against {q}");
                }
            }
            (x, y) => assert_eq!(x, y),
        }
    }
}

#[test]
fn a_record_that_fits_neither_widths_nor_tokens_is_refused_with_its_line() {
    let def = parse_definition(DFN.as_bytes(), Path::new("survey.dfn")).unwrap();
    let mut text = dat();
    text.push_str("    1010     106.0  452150.00  5401000.00  1006.0\r\n");
    let e = read_gdf_bytes(
        text.as_bytes(),
        Path::new("survey.dat"),
        &def,
        &TextOptions::default(),
    )
    .unwrap_err()
    .to_string();
    assert!(
        e.contains("survey.dat") && e.contains("line 9") && e.contains("survey.dfn"),
        "{e}"
    );
    // A value that is not a number: file, line and column.
    let bad = dat().replace("54001.250", "54x01.250");
    let e = read_gdf_bytes(
        bad.as_bytes(),
        Path::new("survey.dat"),
        &def,
        &TextOptions::default(),
    )
    .unwrap_err()
    .to_string();
    assert!(
        e.contains("line 4") && e.contains("'TF'") && e.contains("54x01.250"),
        "{e}"
    );
}

/// The same file read by the aseg_gdf2 package (an independent reader;
/// tests/fixtures/gdf/make_gdf.py, version in expected.json): names,
/// values and nulls agree exactly.
#[test]
fn a_file_reads_as_an_independent_reader_reads_it() {
    let dir = Path::new(env!("CARGO_MANIFEST_DIR")).join("../tests/fixtures/gdf");
    let e: serde_json::Value =
        serde_json::from_str(&std::fs::read_to_string(dir.join("expected.json")).unwrap()).unwrap();
    let t = read_table_file(&dir.join("invented_mag.dat"), &TextOptions::default(), None).unwrap();
    let names: Vec<&str> = e["columns"]
        .as_array()
        .unwrap()
        .iter()
        .map(|c| c.as_str().unwrap())
        .collect();
    assert_eq!(t.names, names);
    let rows = e["values"].as_array().unwrap();
    assert_eq!(t.n_rows(), rows.len());
    let mut nulls = 0;
    for (r, row) in rows.iter().enumerate() {
        for (c, v) in row.as_array().unwrap().iter().enumerate() {
            let ours = t.columns[c].as_numbers().unwrap()[r];
            match v.as_f64() {
                Some(x) => assert_eq!(ours, x, "row {r}, column {}", names[c]),
                None => {
                    assert!(ours.is_nan(), "row {r}, column {}: {ours}", names[c]);
                    nulls += 1;
                }
            }
        }
    }
    assert_eq!(nulls, 3);
}
