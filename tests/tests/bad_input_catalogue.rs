//! The catalogue of bad inputs: one test per reader and case, named
//! `<reader>_<case>`. Each asserts that the reader refuses (or, where the
//! input is readable but suspicious, warns) with a message naming the file
//! and the line, column or field, and never panics. That the project stays
//! unchanged when a step meets such a file is tested with the pipeline
//! (app/tests/bad_input_in_a_project.rs).

use fieldstone_core::constraint::wireframe::Wireframe;
use fieldstone_core::drillhole::tables::{load_holes, DrillholeSpec};
use fieldstone_core::drillhole::DipConvention;
use fieldstone_core::forward::bodies::read_body_file;
use fieldstone_core::grid::geotiff::{read_geotiff, write_geotiff};
use fieldstone_core::grid::Grid2;
use fieldstone_core::project::file::{ProjectFile, PROJECT_FILE, SCHEMA_VERSION};
use fieldstone_core::survey::import::{import_survey, ImportSpec, Survey};
use fieldstone_core::table::{Delimiter, TextOptions};
use std::path::{Path, PathBuf};

fn scratch(case: &str) -> PathBuf {
    // Tests run in parallel and several share a case name: a counter keeps
    // their folders apart.
    static NEXT: std::sync::atomic::AtomicUsize = std::sync::atomic::AtomicUsize::new(0);
    let n = NEXT.fetch_add(1, std::sync::atomic::Ordering::Relaxed);
    let d = std::env::temp_dir().join(format!("fieldstone-bad-{case}-{}-{n}", std::process::id()));
    let _ = std::fs::remove_dir_all(&d);
    std::fs::create_dir_all(&d).unwrap();
    d
}

fn put(dir: &Path, name: &str, bytes: &[u8]) -> PathBuf {
    let p = dir.join(name);
    std::fs::write(&p, bytes).unwrap();
    p
}

/// Asserts that `msg` names the file and contains every one of `parts`.
fn names(msg: &str, file: &str, parts: &[&str]) {
    assert!(
        msg.contains(file),
        "the message does not name {file}: {msg}"
    );
    for p in parts {
        assert!(msg.contains(p), "the message does not say '{p}': {msg}");
    }
}

// ---------------------------------------------------------------- line data

const GOOD_LINE: &str = "station,line,x,y,height_m,gravity_mgal\nA1,10,452000,5401000,312.0,4320.15\nA2,10,452050,5401000,313.5,4320.40\nA3,10,452100,5401000,314.1,4320.62\n";

fn survey(case: &str, bytes: &[u8], text: TextOptions) -> Result<Survey, String> {
    let d = scratch(&format!("line-{case}"));
    let p = put(&d, "lines.csv", bytes);
    let spec = ImportSpec::guess_for_file(&p, &text, Some(32617)).map_err(|e| e.to_string())?;
    import_survey(&p, &spec).map_err(|e| e.to_string())
}

fn survey_err(case: &str, bytes: &[u8]) -> String {
    survey(case, bytes, TextOptions::default()).expect_err("the reader accepted bad line data")
}

#[test]
fn line_data_empty() {
    names(&survey_err("empty", b""), "lines.csv", &["empty"]);
}

#[test]
fn line_data_only_comments_and_a_header() {
    names(
        &survey_err("header", b"# crew notes\nstation,x,y,gravity_mgal\n"),
        "lines.csv",
        &["no data rows"],
    );
}

#[test]
fn line_data_truncated() {
    let cut = &GOOD_LINE[..GOOD_LINE.len() - 14];
    names(
        &survey_err("truncated", cut.as_bytes()),
        "lines.csv",
        &["line 4"],
    );
}

#[test]
fn line_data_binary_garbage() {
    let junk: Vec<u8> = (0..4096u64)
        .map(|k| (k * 2_654_435_761 % 251) as u8)
        .collect();
    names(&survey_err("garbage", &junk), "lines.csv", &["binary"]);
}

#[test]
fn line_data_wrong_delimiter() {
    let text = TextOptions {
        delimiter: Some(Delimiter::Semicolon),
        ..TextOptions::default()
    };
    let e = survey("delimiter", GOOD_LINE.as_bytes(), text).unwrap_err();
    names(&e, "lines.csv", &["coordinates"]);
}

#[test]
fn line_data_ragged_rows() {
    let t = GOOD_LINE.replace(
        "A2,10,452050,5401000,313.5,4320.40",
        "A2,10,452050,5401000,313.5",
    );
    names(
        &survey_err("ragged", t.as_bytes()),
        "lines.csv",
        &["line 3", "expected 6 fields", "found 5"],
    );
}

#[test]
fn line_data_non_utf8_text_is_read_as_windows_1252() {
    let mut b = GOOD_LINE.as_bytes().to_vec();
    // "A2" becomes "Ä2" in Windows-1252 (0xC4), invalid as UTF-8.
    let k = b.windows(2).position(|w| w == b"A2").unwrap();
    b[k] = 0xC4;
    let s = survey("cp1252", &b, TextOptions::default()).unwrap();
    let st = s.station.as_ref().unwrap();
    assert_eq!(st.text_at(1), "Ä2");
}

#[test]
fn line_data_non_utf8_bytes_in_a_number() {
    let t = GOOD_LINE.replace("4320.40", "4320.4\u{0}0");
    names(
        &survey_err("nul", t.as_bytes()),
        "lines.csv",
        &["line 3", "byte 34"],
    );
}

#[test]
fn line_data_huge_numbers() {
    let t = GOOD_LINE.replace("4320.40", "1e400");
    names(
        &survey_err("huge", t.as_bytes()),
        "lines.csv",
        &["line 3", "gravity_mgal", "1e400"],
    );
}

#[test]
fn line_data_nan_and_inf() {
    // NaN is a missing reading (counted as a dummy); inf is an error.
    let t = GOOD_LINE.replace("4320.40", "NaN");
    let s = survey("nan", t.as_bytes(), TextOptions::default()).unwrap();
    assert!(s
        .dummies
        .iter()
        .any(|(c, n)| c == "gravity_mgal" && *n == 1));
    let t = GOOD_LINE.replace("4320.40", "inf");
    names(
        &survey_err("inf", t.as_bytes()),
        "lines.csv",
        &["line 3", "gravity_mgal"],
    );
}

#[test]
fn line_data_dummy_values() {
    let t = GOOD_LINE.replace("4320.40", "-99999");
    let text = TextOptions {
        dummy_value: Some(-99999.0),
        ..TextOptions::default()
    };
    let s = survey("dummy", t.as_bytes(), text).unwrap();
    assert!(s
        .dummies
        .iter()
        .any(|(c, n)| c == "gravity_mgal" && *n == 1));
    let g = s
        .channels
        .iter()
        .find(|c| c.name == "gravity_mgal")
        .unwrap();
    assert!(g.values[1].is_nan(), "a dummy became a number");
}

#[test]
fn line_data_duplicate_column_names() {
    let t = GOOD_LINE.replace("height_m", "x");
    names(
        &survey_err("dupcol", t.as_bytes()),
        "lines.csv",
        &["line 1", "'x'", "twice"],
    );
}

#[test]
fn line_data_missing_coordinates() {
    let t = "station,gravity_mgal\nA1,4320.15\nA2,4320.40\n";
    names(
        &survey_err("nocoord", t.as_bytes()),
        "lines.csv",
        &["no coordinates"],
    );
}

#[test]
fn line_data_heights_that_look_like_feet() {
    let t = GOOD_LINE
        .replace("312.0", "9800.0")
        .replace("313.5", "9805.0")
        .replace("314.1", "9810.0");
    let s = survey("feet", t.as_bytes(), TextOptions::default()).unwrap();
    assert!(
        s.warnings
            .iter()
            .any(|w| w.contains("height_m") && w.contains("feet")),
        "{:?}",
        s.warnings
    );
}

#[test]
fn line_data_easting_and_northing_swapped() {
    let t = "station,y,x,gravity_mgal\nA1,452000,5401000,4320.15\nA2,452050,5401000,4320.40\nA3,452100,5401000,4320.62\n";
    let r = survey("swapped", t.as_bytes(), TextOptions::default());
    let msg = match r {
        Ok(s) => s.warnings.join("; "),
        Err(e) => e,
    };
    assert!(
        msg.contains("swapped"),
        "no word about swapped coordinates: {msg}"
    );
}

#[test]
fn line_data_latitude_and_longitude_swapped() {
    // Longitudes of 121° W written in the latitude column are out of range.
    let t = "station,lat,lon,gravity_mgal\nA1,-121.6,48.75,4320.15\nA2,-121.6,48.76,4320.40\n";
    let d = scratch("line-latlon");
    let p = put(&d, "lines.csv", t.as_bytes());
    let spec = ImportSpec::guess_for_file(&p, &TextOptions::default(), Some(4326)).unwrap();
    let e = import_survey(&p, &spec).unwrap_err().to_string();
    names(&e, "lines.csv", &["line 2", "lat"]);
}

// -------------------------------------------------------------- drill holes

const COLLARS: &str =
    "hole_id,x,y,z,total_depth\nH1,452650,5401300,316,160\nH2,452900,5401250,318,200\n";
const SURVEYS: &str =
    "hole_id,depth,azimuth,dip\nH1,0,0,-90\nH1,160,0,-90\nH2,0,270,-60\nH2,200,270,-60\n";
const INTERVALS: &str = "hole_id,from,to,density\nH1,0,50,2.2\nH1,50,160,2.7\nH2,0,200,2.6\n";

fn holes(
    case: &str,
    collars: &[u8],
    surveys: &[u8],
    intervals: &[u8],
) -> Result<(fieldstone_core::drillhole::HoleSet, Vec<String>), String> {
    let d = scratch(&format!("holes-{case}"));
    let spec = DrillholeSpec {
        collars: put(&d, "collars.csv", collars),
        surveys: Some(put(&d, "surveys.csv", surveys)),
        intervals: Some(put(&d, "intervals.csv", intervals)),
        dip_convention: DipConvention::NegativeDown,
        text: TextOptions::default(),
    };
    load_holes(&spec)
        .map(|(h, i)| (h, i.iter().map(|x| x.to_string()).collect()))
        .map_err(|e| e.to_string())
}

/// The message of a refusal, or the issues of a load that went through.
fn holes_msg(case: &str, c: &str, s: &str, i: &str) -> String {
    match holes(case, c.as_bytes(), s.as_bytes(), i.as_bytes()) {
        Ok((_, issues)) => issues.join("; "),
        Err(e) => e,
    }
}

#[test]
fn drill_holes_good_tables_load() {
    let (h, issues) = holes(
        "good",
        COLLARS.as_bytes(),
        SURVEYS.as_bytes(),
        INTERVALS.as_bytes(),
    )
    .unwrap();
    assert_eq!(h.holes.len(), 2);
    assert!(issues.is_empty(), "{issues:?}");
}

#[test]
fn drill_holes_empty_collars() {
    names(
        &holes_msg("empty", "", SURVEYS, INTERVALS),
        "collars.csv",
        &["empty"],
    );
}

#[test]
fn drill_holes_truncated_intervals() {
    let cut = &INTERVALS[..INTERVALS.len() - 6];
    names(
        &holes_msg("trunc", COLLARS, SURVEYS, cut),
        "intervals.csv",
        &["line 4"],
    );
}

#[test]
fn drill_holes_binary_garbage() {
    let junk: Vec<u8> = (0..2048u32).map(|k| (k * 40_503 % 256) as u8).collect();
    let e = holes("garbage", &junk, SURVEYS.as_bytes(), INTERVALS.as_bytes()).unwrap_err();
    names(&e, "collars.csv", &["binary"]);
}

#[test]
fn drill_holes_ragged_rows() {
    let s = SURVEYS.replace("H2,0,270,-60", "H2,0,270");
    names(
        &holes_msg("ragged", COLLARS, &s, INTERVALS),
        "surveys.csv",
        &["line 4"],
    );
}

#[test]
fn drill_holes_missing_columns() {
    let i = INTERVALS.replace(",to,", ",until,");
    names(
        &holes_msg("missing", COLLARS, SURVEYS, &i),
        "intervals.csv",
        &["to"],
    );
    let c = COLLARS.replace("hole_id", "remark");
    names(
        &holes_msg("missing-id", &c, SURVEYS, INTERVALS),
        "collars.csv",
        &["hole"],
    );
}

#[test]
fn drill_holes_duplicate_ids() {
    let c = format!("{COLLARS}H1,452700,5401300,316,160\n");
    names(
        &holes_msg("dup", &c, SURVEYS, INTERVALS),
        "collars.csv",
        &["line 4", "H1"],
    );
}

#[test]
fn drill_holes_nan_and_inf() {
    let i = INTERVALS.replace("H1,50,160,2.7", "H1,50,inf,2.7");
    names(
        &holes_msg("inf", COLLARS, SURVEYS, &i),
        "intervals.csv",
        &["line 3"],
    );
    let c = COLLARS.replace("452900", "NaN");
    names(
        &holes_msg("nan", &c, SURVEYS, INTERVALS),
        "collars.csv",
        &["line 3", "H2"],
    );
}

#[test]
fn drill_holes_huge_numbers() {
    let s = SURVEYS.replace("H1,160,0,-90", "H1,1e300,0,-90");
    names(
        &holes_msg("huge", COLLARS, &s, INTERVALS),
        "surveys.csv",
        &["line 3", "H1"],
    );
}

#[test]
fn drill_holes_intervals_in_the_wrong_order() {
    let i = INTERVALS.replace("H1,50,160,2.7", "H1,160,50,2.7");
    names(
        &holes_msg("order", COLLARS, SURVEYS, &i),
        "intervals.csv",
        &["line 3", "H1"],
    );
}

#[test]
fn drill_holes_dips_that_look_like_the_other_convention() {
    let s = SURVEYS.replace(",-90", ",90").replace(",-60", ",60");
    let m = holes_msg("dips", COLLARS, &s, INTERVALS);
    assert!(
        m.contains("surveys.csv") && m.contains("positive down"),
        "{m}"
    );
}

#[test]
fn drill_holes_unknown_hole_in_intervals() {
    let i = format!("{INTERVALS}H9,0,10,2.5\n");
    names(
        &holes_msg("unknown", COLLARS, SURVEYS, &i),
        "intervals.csv",
        &["line 5", "H9"],
    );
}

// ----------------------------------------------------------------- GeoTIFF

fn good_tiff(dir: &Path) -> Vec<u8> {
    let mut g = Grid2::new_empty(452_000.0, 5_400_000.0, 25.0, 25.0, 8, 6).unwrap();
    for (k, v) in g.values.iter_mut().enumerate() {
        *v = 300.0 + k as f64;
    }
    g.epsg = Some(32617);
    let p = dir.join("good.tif");
    write_geotiff(&p, &g).unwrap();
    std::fs::read(&p).unwrap()
}

fn tiff_err(case: &str, bytes: &[u8]) -> String {
    let d = scratch(&format!("tif-{case}"));
    let p = put(&d, "terrain.tif", bytes);
    read_geotiff(&p)
        .expect_err("a bad GeoTIFF was accepted")
        .to_string()
}

#[test]
fn geotiff_empty() {
    names(
        &tiff_err("empty", b""),
        "terrain.tif",
        &["not a readable TIFF"],
    );
}

#[test]
fn geotiff_truncated() {
    let d = scratch("tif-trunc-src");
    let b = good_tiff(&d);
    for cut in [8, b.len() / 3, b.len() - 10] {
        names(&tiff_err("truncated", &b[..cut]), "terrain.tif", &[]);
    }
}

#[test]
fn geotiff_binary_garbage() {
    let mut junk: Vec<u8> = b"II*\0".to_vec();
    junk.extend((0..1000u32).map(|k| (k * 7919 % 256) as u8));
    names(
        &tiff_err("garbage", &junk),
        "terrain.tif",
        &["not a readable TIFF"],
    );
}

#[test]
fn geotiff_a_text_file_named_tif() {
    names(
        &tiff_err("text", GOOD_LINE.as_bytes()),
        "terrain.tif",
        &["not a readable TIFF"],
    );
}

/// Found by the `geotiff` fuzz target: a SampleFormat tag with no values made
/// the TIFF decoder index an empty list and panic.
#[test]
fn geotiff_empty_sample_format_tag() {
    let b = std::fs::read(concat!(
        env!("CARGO_MANIFEST_DIR"),
        "/fixtures/geotiff/fuzz_crash_empty_sample_format.tif"
    ))
    .unwrap();
    // tiff 0.10 panicked on this file (the reader caught the panic and
    // called the file damaged); tiff 0.11 reports a format error. Either
    // way the file is refused with its name and no panic.
    let msg = tiff_err("fuzz", &b);
    names(&msg, "terrain.tif", &[]);
    assert!(
        msg.contains("damaged") || msg.contains("not a readable TIFF"),
        "{msg}"
    );
}

#[test]
fn geotiff_every_byte_flipped_somewhere_never_panics() {
    let d = scratch("tif-flip-src");
    let b = good_tiff(&d);
    let p = d.join("terrain.tif");
    for k in (0..b.len()).step_by(7) {
        let mut c = b.clone();
        c[k] ^= 0xA5;
        std::fs::write(&p, &c).unwrap();
        if let Err(e) = read_geotiff(&p) {
            assert!(e.to_string().contains("terrain.tif"), "{e}");
        }
    }
}

// --------------------------------------------------------------- XYZ grids

/// Found by the `xyz_grid` fuzz target: a coordinate of about 2 × 10³⁰ made
/// the node count wrap around to zero and the reader index an empty grid.
#[test]
fn xyz_grid_huge_coordinate() {
    let b = std::fs::read(concat!(
        env!("CARGO_MANIFEST_DIR"),
        "/fixtures/fuzz_crash_xyz_huge_coordinate.xyz"
    ))
    .unwrap();
    let d = scratch("xyz-huge");
    let p = put(&d, "grid.xyz", &b);
    let e = fieldstone_core::grid::xyz::read_xyz(&p, &TextOptions::default())
        .expect_err("a grid of 10³⁰ nodes was accepted")
        .to_string();
    names(&e, "grid.xyz", &["larger than"]);
}

// ------------------------------------------------- ASEG-GDF2 line data

const GDF_DFN: &str = "DEFN   ST=RECD,RT=COMM;RT:A4;COMMENTS:A76\n\
DEFN 1 ST=RECD,RT=;LINE:I6\n\
DEFN 2 ST=RECD,RT=;EASTING:F10.1:UNIT=m\n\
DEFN 3 ST=RECD,RT=;NORTHING:F11.1:UNIT=m\n\
DEFN 4 ST=RECD,RT=;MAG:F10.2:UNIT=nT,NULL=-99999.99\n\
DEFN 5 ST=RECD,RT=;END DEFN\n";
const GDF_DAT: &str = "    10  452000.0  5401000.0  54001.25\n    10  452025.0  5401000.0  54001.50\n    10  452050.0  5401000.0 -99999.99\n";

fn gdf_err(case: &str, dfn: &str, dat: &[u8]) -> String {
    let d = scratch(&format!("gdf-{case}"));
    put(&d, "lines.dfn", dfn.as_bytes());
    let p = put(&d, "lines.dat", dat);
    let r = ImportSpec::guess_for_file(&p, &TextOptions::default(), Some(32617))
        .map_err(|e| e.to_string())
        .and_then(|spec| import_survey(&p, &spec).map_err(|e| e.to_string()));
    r.expect_err("the reader accepted bad ASEG-GDF2 data")
}

#[test]
fn gdf_good_files_load() {
    let d = scratch("gdf-good");
    put(&d, "lines.dfn", GDF_DFN.as_bytes());
    let p = put(&d, "lines.dat", GDF_DAT.as_bytes());
    let spec = ImportSpec::guess_for_file(&p, &TextOptions::default(), Some(32617)).unwrap();
    let s = import_survey(&p, &spec).unwrap();
    assert_eq!(s.n_rows(), 3);
}

#[test]
fn gdf_definition_with_a_bad_format() {
    let dfn = GDF_DFN.replace("F10.2", "Q10.2");
    names(
        &gdf_err("format", &dfn, GDF_DAT.as_bytes()),
        "lines.dfn",
        &["line 5", "'MAG'", "Q10.2"],
    );
}

#[test]
fn gdf_definition_that_is_not_one() {
    names(
        &gdf_err("notdfn", "station,x,y\n1,2,3\n", GDF_DAT.as_bytes()),
        "lines.dfn",
        &["line 1", "DEFN"],
    );
}

#[test]
fn gdf_definition_with_two_data_record_types() {
    let dfn = GDF_DFN.replace("DEFN 4 ST=RECD,RT=;", "DEFN 4 ST=RECD,RT=MAGS;");
    names(
        &gdf_err("types", &dfn, GDF_DAT.as_bytes()),
        "lines.dfn",
        &["several data record types", "MAGS"],
    );
}

#[test]
fn gdf_field_defined_twice() {
    let dfn = GDF_DFN.replace("NORTHING:F11.1", "EASTING:F11.1");
    names(
        &gdf_err("twice", &dfn, GDF_DAT.as_bytes()),
        "lines.dfn",
        &["'EASTING'", "twice", "lines 3 and 4"],
    );
}

#[test]
fn gdf_record_that_follows_neither_widths_nor_tokens() {
    let dat = format!("{GDF_DAT}    10  452075.0  5401000.0\n");
    names(
        &gdf_err("short", GDF_DFN, dat.as_bytes()),
        "lines.dat",
        &["line 4", "lines.dfn"],
    );
}

#[test]
fn gdf_value_that_is_not_a_number() {
    let dat = GDF_DAT.replace("54001.50", "54OO1.50");
    names(
        &gdf_err("nan", GDF_DFN, dat.as_bytes()),
        "lines.dat",
        &["line 2", "'MAG'", "54OO1.50"],
    );
}

#[test]
fn gdf_no_records() {
    names(
        &gdf_err("empty", GDF_DFN, b"COMM only a comment\n\n"),
        "lines.dat",
        &["no data rows"],
    );
}

#[test]
fn gdf_binary_garbage() {
    names(
        &gdf_err(
            "binary",
            GDF_DFN,
            &[0x1f, 0x8b, 0x08, 0x00, 0xff, 0x10, b'\n'],
        ),
        "lines.dat",
        &["binary", "line 1"],
    );
}

/// Found by the `gdf` fuzz target: a record-type field (RT:A4) that was not
/// the first field of the data record became a column in the names but
/// was skipped by the record splitter, and the reader indexed past the end.
#[test]
fn gdf_record_type_field_not_first() {
    let b = std::fs::read(concat!(
        env!("CARGO_MANIFEST_DIR"),
        "/fixtures/fuzz_crash_gdf_record_type_field.gdf"
    ))
    .unwrap();
    let cut = b.windows(8).position(|w| w == b"END DEFN").unwrap() + 8;
    let (dfn, dat) = b.split_at(cut);
    match fieldstone_core::table::gdf::parse_definition(dfn, Path::new("lines.dfn")) {
        Err(e) => names(&e.to_string(), "lines.dfn", &[]),
        Ok(def) => {
            if let Err(e) = fieldstone_core::table::gdf::read_gdf_bytes(
                dat,
                Path::new("lines.dat"),
                &def,
                &TextOptions::default(),
            ) {
                names(&e.to_string(), "lines.dat", &[]);
            }
        }
    }
}

// ------------------------------------------------------ ESRI ASCII grids

const GOOD_ASC: &str = "ncols 3\nnrows 2\nxllcorner 451000\nyllcorner 5400000\ncellsize 50\nNODATA_value -9999\n1 2 3\n4 5 6\n";

fn asc_err(case: &str, text: &str) -> String {
    let d = scratch(&format!("asc-{case}"));
    let p = put(&d, "dem.asc", text.as_bytes());
    fieldstone_core::grid::read::read_grid(&p)
        .expect_err("the reader accepted a bad ASCII grid")
        .to_string()
}

#[test]
fn ascii_grid_good_file_loads() {
    let d = scratch("asc-good");
    let p = put(&d, "dem.asc", GOOD_ASC.as_bytes());
    let g = fieldstone_core::grid::read::read_grid(&p).unwrap();
    assert_eq!((g.nx, g.ny), (3, 2));
}

#[test]
fn ascii_grid_empty() {
    names(&asc_err("empty", ""), "dem.asc", &["no ncols"]);
}

#[test]
fn ascii_grid_too_few_values() {
    let t = GOOD_ASC.replace("4 5 6\n", "4 5\n");
    names(&asc_err("few", &t), "dem.asc", &["3 × 2 = 6", "holds 5"]);
}

#[test]
fn ascii_grid_too_many_values() {
    let t = format!("{GOOD_ASC}7\n");
    names(&asc_err("many", &t), "dem.asc", &["holds 7"]);
}

#[test]
fn ascii_grid_not_a_number() {
    let t = GOOD_ASC.replace("4 5 6", "4 5,0 6");
    names(&asc_err("nan", &t), "dem.asc", &["line 8", "'5,0'"]);
}

#[test]
fn ascii_grid_unknown_keyword() {
    let t = GOOD_ASC.replace("cellsize 50", "cell_size 50");
    names(&asc_err("key", &t), "dem.asc", &["line 5", "'cell_size'"]);
}

#[test]
fn ascii_grid_negative_cell() {
    let t = GOOD_ASC.replace("cellsize 50", "cellsize -50");
    names(&asc_err("neg", &t), "dem.asc", &["positive"]);
}

#[test]
fn ascii_grid_huge_size() {
    let t = GOOD_ASC.replace("ncols 3", "ncols 4000000000");
    names(&asc_err("huge", &t), "dem.asc", &["nodes"]);
}

#[test]
fn ascii_grid_binary_garbage() {
    let d = scratch("asc-binary");
    let p = put(
        &d,
        "dem.asc",
        &[0x89, b'P', b'N', b'G', 0, 0, 0xff, b'\n', 1, 2],
    );
    let e = fieldstone_core::grid::read::read_grid(&p)
        .unwrap_err()
        .to_string();
    names(&e, "dem.asc", &["line 1"]);
}

// ------------------------------------------------ outlines (GeoJSON, shp)

fn outline_err(case: &str, name: &str, bytes: &[u8]) -> String {
    let d = scratch(&format!("outline-{case}"));
    let p = put(&d, name, bytes);
    fieldstone_core::outline::read_outlines(&p)
        .expect_err("the reader accepted a bad outline file")
        .to_string()
}

#[test]
fn geojson_not_json() {
    names(
        &outline_err(
            "notjson",
            "a.geojson",
            b"{\"type\": \"Polygon\",\n \"coordinates\": [[[0,0],[1,0]]\n",
        ),
        "a.geojson",
        &["line 3", "not JSON"],
    );
}

#[test]
fn geojson_empty() {
    names(
        &outline_err("empty", "a.geojson", b""),
        "a.geojson",
        &["not JSON"],
    );
}

#[test]
fn geojson_ring_of_two_vertices() {
    names(
        &outline_err(
            "short",
            "a.geojson",
            br#"{"type": "Feature", "geometry": {"type": "Polygon", "coordinates": [[[0,0],[1,0],[0,0]]]}}"#,
        ),
        "a.geojson",
        &["feature", "coordinates: [0]", "three distinct vertices"],
    );
}

#[test]
fn geojson_a_line_among_outlines() {
    names(
        &outline_err(
            "line",
            "a.geojson",
            br#"{"type": "FeatureCollection", "features": [{"type": "Feature", "geometry": {"type": "Polygon", "coordinates": [[[0,0],[1,0],[1,1]]]}}, {"type": "Feature", "geometry": {"type": "LineString", "coordinates": [[0,0],[1,1]]}}]}"#,
        ),
        "a.geojson",
        &["features[1]", "LineString"],
    );
}

#[test]
fn geojson_position_that_is_not_a_number() {
    names(
        &outline_err(
            "nan",
            "a.geojson",
            br#"{"type": "Polygon", "coordinates": [[[0,0],[1,"east"],[1,1]]]}"#,
        ),
        "a.geojson",
        &["[0][1]", "not a position"],
    );
}

#[test]
fn geojson_unknown_crs_name() {
    names(
        &outline_err(
            "crs",
            "a.geojson",
            br#"{"type": "Polygon", "crs": {"type": "name", "properties": {"name": "local grid"}}, "coordinates": [[[0,0],[1,0],[1,1]]]}"#,
        ),
        "a.geojson",
        &["local grid", "EPSG"],
    );
}

fn good_shp() -> Vec<u8> {
    std::fs::read(concat!(
        env!("CARGO_MANIFEST_DIR"),
        "/../fuzz/corpus/outline/units.shp"
    ))
    .unwrap()
}

#[test]
fn shapefile_good_file_loads() {
    let d = scratch("shp-good");
    let p = put(&d, "units.shp", &good_shp());
    let f = fieldstone_core::outline::read_outlines(&p).unwrap();
    assert_eq!(f.outlines.len(), 2);
}

#[test]
fn shapefile_not_a_shapefile() {
    names(
        &outline_err("notshp", "units.shp", b"station,x,y\n1,2,3\n"),
        "units.shp",
        &["9994"],
    );
}

#[test]
fn shapefile_truncated() {
    let b = good_shp();
    names(
        &outline_err("cut", "units.shp", &b[..b.len() - 20]),
        "units.shp",
        &["record 2", "past the end"],
    );
}

#[test]
fn shapefile_of_points() {
    let mut b = good_shp();
    b[32..36].copy_from_slice(&1i32.to_le_bytes());
    names(
        &outline_err("points", "units.shp", &b),
        "units.shp",
        &["type 1", "point", "polygons"],
    );
}

#[test]
fn shapefile_part_index_out_of_range() {
    let mut b = good_shp();
    // Record 1's second part starts at point 5 (byte 100 + 8 + 48): 99.
    b[100 + 8 + 48..100 + 8 + 52].copy_from_slice(&99i32.to_le_bytes());
    names(
        &outline_err("parts", "units.shp", &b),
        "units.shp",
        &["record 1", "part 1", "99"],
    );
}

#[test]
fn shapefile_table_shorter_than_it_says() {
    let d = scratch("shp-dbf");
    let p = put(&d, "units.shp", &good_shp());
    let mut dbf = vec![0u8; 32];
    dbf[0] = 3;
    dbf[4..8].copy_from_slice(&5u32.to_le_bytes());
    dbf[8..10].copy_from_slice(&65u16.to_le_bytes());
    dbf[10..12].copy_from_slice(&11u16.to_le_bytes());
    let mut f = [0u8; 32];
    f[..4].copy_from_slice(b"NAME");
    f[11] = b'C';
    f[16] = 10;
    dbf.extend(f);
    dbf.push(0x0D);
    dbf.extend(b" sandstone ");
    put(&d, "units.dbf", &dbf);
    let e = fieldstone_core::outline::read_outlines(&p)
        .unwrap_err()
        .to_string();
    names(&e, "units.dbf", &["5 records", "record 2"]);
}

// -------------------------------------------------------------- wireframes

const CUBE_OBJ: &str = "v 0 0 0\nv 1 0 0\nv 1 1 0\nv 0 1 0\nv 0 0 1\nv 1 0 1\nv 1 1 1\nv 0 1 1\nf 1 3 2\nf 1 4 3\nf 5 6 7\nf 5 7 8\nf 1 2 6\nf 1 6 5\nf 2 3 7\nf 2 7 6\nf 3 4 8\nf 3 8 7\nf 4 1 5\nf 4 5 8\n";

fn wire_err(name: &str, bytes: &[u8]) -> String {
    let d = scratch(&format!("wire-{name}"));
    let p = put(&d, name, bytes);
    Wireframe::read(&p)
        .expect_err("a bad wireframe was accepted")
        .to_string()
}

#[test]
fn wireframe_good_cube_reads() {
    let d = scratch("wire-good");
    let w = Wireframe::read(&put(&d, "cube.obj", CUBE_OBJ.as_bytes())).unwrap();
    assert_eq!((w.vertices.len(), w.triangles.len()), (8, 12));
}

#[test]
fn wireframe_empty() {
    names(&wire_err("body.obj", b""), "body.obj", &["no triangles"]);
    names(&wire_err("body.stl", b""), "body.stl", &[]);
}

#[test]
fn wireframe_truncated() {
    names(
        &wire_err("body.obj", &CUBE_OBJ.as_bytes()[..CUBE_OBJ.len() - 3]),
        "body.obj",
        &["line 20"],
    );
    // A binary STL that promises 12 triangles and holds 3.
    let mut stl = vec![0u8; 80];
    stl.extend(12u32.to_le_bytes());
    stl.extend(vec![0u8; 50 * 3]);
    names(&wire_err("body.stl", &stl), "body.stl", &["12"]);
}

#[test]
fn wireframe_binary_garbage() {
    let junk: Vec<u8> = (0..3000u32).map(|k| (k * 97 % 256) as u8).collect();
    names(&wire_err("body.obj", &junk), "body.obj", &[]);
    names(&wire_err("body.stl", &junk), "body.stl", &[]);
}

#[test]
fn wireframe_face_index_out_of_range() {
    let t = CUBE_OBJ.replace("f 5 7 8", "f 5 7 80");
    names(
        &wire_err("body.obj", t.as_bytes()),
        "body.obj",
        &["line 12", "80"],
    );
}

#[test]
fn wireframe_nan_and_huge_coordinates() {
    let t = CUBE_OBJ.replace("v 1 1 1", "v 1 NaN 1");
    names(&wire_err("body.obj", t.as_bytes()), "body.obj", &["line 7"]);
    let t = CUBE_OBJ.replace("v 1 1 1", "v 1 1e400 1");
    names(&wire_err("body.obj", t.as_bytes()), "body.obj", &["line 7"]);
}

#[test]
fn wireframe_non_utf8_bytes() {
    let mut b = CUBE_OBJ.as_bytes().to_vec();
    b.splice(0..0, b"# d\xe9coupage\n".iter().copied());
    let d = scratch("wire-utf");
    let w = Wireframe::read(&put(&d, "body.obj", &b)).unwrap();
    assert_eq!(w.triangles.len(), 12);
    let t = CUBE_OBJ.replace("v 1 1 1", "v 1 \u{ff}1 1");
    names(&wire_err("body.obj", t.as_bytes()), "body.obj", &["line 7"]);
}

#[test]
fn wireframe_wrong_extension() {
    names(
        &wire_err("body.dxf", CUBE_OBJ.as_bytes()),
        "body.dxf",
        &[".obj or .stl"],
    );
}

// ----------------------------------------------------------- project files

fn project_err(case: &str, bytes: &[u8]) -> String {
    let d = scratch(&format!("proj-{case}"));
    put(&d, PROJECT_FILE, bytes);
    ProjectFile::load(&d)
        .expect_err("a bad project file was accepted")
        .to_string()
}

fn good_project_text() -> String {
    serde_json::to_string_pretty(&ProjectFile::new("catalogue")).unwrap()
}

#[test]
fn project_file_empty() {
    names(&project_err("empty", b""), PROJECT_FILE, &["line 1"]);
}

#[test]
fn project_file_truncated() {
    let t = good_project_text();
    names(
        &project_err("trunc", &t.as_bytes()[..t.len() / 2]),
        PROJECT_FILE,
        &["line"],
    );
}

#[test]
fn project_file_binary_garbage() {
    let junk: Vec<u8> = (0..500u32).map(|k| (k * 31 % 256) as u8).collect();
    names(&project_err("garbage", &junk), PROJECT_FILE, &[]);
}

#[test]
fn project_file_wrong_type() {
    let t = good_project_text().replace("\"catalogue\"", "17");
    names(
        &project_err("type", t.as_bytes()),
        PROJECT_FILE,
        &["name", "line 3"],
    );
}

#[test]
fn project_file_missing_schema_version() {
    names(
        &project_err("schema", b"{\"name\": \"x\"}"),
        PROJECT_FILE,
        &["schema_version"],
    );
}

#[test]
fn project_file_huge_numbers_and_nan() {
    let t = good_project_text().replace(
        &format!("\"schema_version\": {SCHEMA_VERSION}"),
        "\"schema_version\": 1e400",
    );
    names(&project_err("huge", t.as_bytes()), PROJECT_FILE, &["line"]);
    let t = good_project_text().replace(
        &format!("\"schema_version\": {SCHEMA_VERSION}"),
        "\"schema_version\": NaN",
    );
    names(&project_err("nan", t.as_bytes()), PROJECT_FILE, &["line"]);
}

#[test]
fn project_file_non_utf8_bytes() {
    let t = good_project_text().replace("catalogue", "cat\u{1}alogue");
    let mut b = t.into_bytes();
    let k = b.iter().position(|c| *c == 1).unwrap();
    b[k] = 0xFF;
    names(&project_err("utf8", &b), PROJECT_FILE, &["line"]);
}

#[test]
fn project_file_duplicate_scenario_names() {
    let mut p = ProjectFile::new("dups");
    p.scenarios = fieldstone_core::demo::generate::demo_scenarios();
    let name = p.scenarios[0].name.clone();
    p.scenarios[1].name = name.clone();
    let t = serde_json::to_string_pretty(&p).unwrap();
    names(
        &project_err("dupscen", t.as_bytes()),
        PROJECT_FILE,
        &[&name, "twice"],
    );
}

/// Appraisal settings the program cannot use are refused with the JSON path:
/// a zero block side, a cut-off outside 0–1, two feature tests of one name.
#[test]
fn project_file_bad_appraisal_settings() {
    use fieldstone_core::invert::appraise::DoiPattern;
    let base = || {
        let mut p = ProjectFile::new("appraise");
        p.scenarios = fieldstone_core::demo::generate::demo_scenarios();
        p
    };
    let mut p = base();
    let a = p.scenarios[0].appraisal.as_mut().unwrap();
    a.doi_pattern = DoiPattern::Checkerboard { block_m: Some(0.0) };
    let t = serde_json::to_string_pretty(&p).unwrap();
    names(
        &project_err("block", t.as_bytes()),
        PROJECT_FILE,
        &["scenarios[0].appraisal.doi_pattern.block_m", "positive"],
    );
    let mut p = base();
    p.scenarios[0].appraisal.as_mut().unwrap().doi_cutoff = 1.5;
    let t = serde_json::to_string_pretty(&p).unwrap();
    names(
        &project_err("cutoff", t.as_bytes()),
        PROJECT_FILE,
        &["scenarios[0].appraisal.doi_cutoff", "between 0 and 1"],
    );
    let mut p = base();
    let a = p.scenarios[0].appraisal.as_mut().unwrap();
    a.feature_tests.push(a.feature_tests[0].clone());
    let t = serde_json::to_string_pretty(&p).unwrap();
    names(
        &project_err("tests", t.as_bytes()),
        PROJECT_FILE,
        &["feature_tests[1].name", "twice"],
    );
}

#[test]
fn project_file_paths_that_leave_the_project() {
    let mut v: serde_json::Value = serde_json::from_str(&good_project_text()).unwrap();
    v["dem"] = serde_json::json!("../../etc/passwd");
    let t = serde_json::to_string_pretty(&v).unwrap();
    names(
        &project_err("escape", t.as_bytes()),
        PROJECT_FILE,
        &["dem", "leaves the project folder"],
    );
    v["dem"] = serde_json::json!("/etc/passwd");
    let t = serde_json::to_string_pretty(&v).unwrap();
    names(
        &project_err("absolute", t.as_bytes()),
        PROJECT_FILE,
        &["dem", "absolute"],
    );
}

#[test]
fn project_file_from_a_newer_program_opens_read_only() {
    let t = good_project_text().replace(
        &format!("\"schema_version\": {SCHEMA_VERSION}"),
        "\"schema_version\": 99",
    );
    let d = scratch("proj-newer");
    put(&d, PROJECT_FILE, t.as_bytes());
    let l = ProjectFile::load(&d).unwrap();
    assert!(l.read_only_because.unwrap().contains("99"));
}

// -------------------------------------------------------------- body files

const BODIES: &str = r#"{
  "inducing_field": {"intensity_nt": 55000, "inclination_deg": 70, "declination_deg": -5},
  "bodies": [
    {"name": "block", "prism": {"x": [100, 300], "y": [-50, 50], "z": [-400, -100]},
     "density_contrast_gcc": 0.25, "susceptibility_si": 0.03}
  ]
}"#;

fn body_err(case: &str, bytes: &[u8]) -> String {
    let d = scratch(&format!("body-{case}"));
    let p = put(&d, "bodies.json", bytes);
    read_body_file(&p)
        .expect_err("a bad body file was accepted")
        .to_string()
}

#[test]
fn body_file_good_reads() {
    let d = scratch("body-good");
    assert!(read_body_file(&put(&d, "bodies.json", BODIES.as_bytes())).is_ok());
}

#[test]
fn body_file_empty() {
    names(&body_err("empty", b""), "bodies.json", &["line 1"]);
}

#[test]
fn body_file_truncated() {
    names(
        &body_err("trunc", &BODIES.as_bytes()[..BODIES.len() - 20]),
        "bodies.json",
        &["line"],
    );
}

#[test]
fn body_file_binary_garbage() {
    let junk: Vec<u8> = (0..500u32).map(|k| (k * 131 % 256) as u8).collect();
    names(&body_err("garbage", &junk), "bodies.json", &[]);
}

#[test]
fn body_file_huge_numbers() {
    let t = BODIES.replace("0.25", "1e400");
    names(&body_err("huge", t.as_bytes()), "bodies.json", &["line"]);
    let t = BODIES.replace("0.25", "2500");
    names(
        &body_err("kgm3", t.as_bytes()),
        "bodies.json",
        &["density_contrast_gcc"],
    );
}

#[test]
fn body_file_corners_in_the_wrong_order() {
    let t = BODIES.replace("[100, 300]", "[300, 100]");
    names(
        &body_err("order", t.as_bytes()),
        "bodies.json",
        &["bodies[0]", "x"],
    );
}

#[test]
fn body_file_missing_field() {
    let t = BODIES.replace("\"prism\"", "\"shape\"");
    names(
        &body_err("missing", t.as_bytes()),
        "bodies.json",
        &["bodies[0]"],
    );
}

#[test]
fn body_file_duplicate_names() {
    let t = BODIES.replace(
        "\"susceptibility_si\": 0.03}",
        "\"susceptibility_si\": 0.03},\n    {\"name\": \"block\", \"prism\": {\"x\": [400, 500], \"y\": [-50, 50], \"z\": [-400, -100]}, \"density_contrast_gcc\": 0.1}",
    );
    names(
        &body_err("dupname", t.as_bytes()),
        "bodies.json",
        &["block", "twice"],
    );
}
