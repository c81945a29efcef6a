//! Property tests run with the normal test suite: every reader, given a
//! valid file with random damage (bytes flipped, cut, inserted, lines
//! repeated) or plain random bytes, returns a value or an error naming the
//! file, and never panics. A short, bounded version of the libFuzzer targets
//! in fuzz/ (the seeds are the same files).

use fieldstone_core::constraint::wireframe::Wireframe;
use fieldstone_core::forward::bodies::parse_body_file;
use fieldstone_core::grid::ascii::read_ascii_grid_bytes;
use fieldstone_core::grid::geotiff::read_geotiff_bytes;
use fieldstone_core::grid::xyz::read_xyz_bytes;
use fieldstone_core::outline::geojson::parse_geojson;
use fieldstone_core::outline::shapefile::{dbf_names, parse_shp};
use fieldstone_core::project::file::ProjectFile;
use fieldstone_core::table::gdf::{parse_definition, read_gdf_bytes};
use fieldstone_core::table::passthrough::parse_passthrough;
use fieldstone_core::table::read::read_table_bytes;
use fieldstone_core::table::TextOptions;
use proptest::prelude::*;
use std::path::Path;

fn seed(rel: &str) -> Vec<u8> {
    let p = Path::new(env!("CARGO_MANIFEST_DIR"))
        .join("../fuzz/corpus")
        .join(rel);
    std::fs::read(&p).unwrap_or_else(|e| panic!("{}: {e}", p.display()))
}

#[derive(Debug, Clone)]
enum Damage {
    Flip(usize, u8),
    Cut(usize),
    Insert(usize, Vec<u8>),
    RepeatLine(usize),
}

fn damage() -> impl Strategy<Value = Damage> {
    prop_oneof![
        (any::<usize>(), any::<u8>()).prop_map(|(k, b)| Damage::Flip(k, b)),
        any::<usize>().prop_map(Damage::Cut),
        (
            any::<usize>(),
            prop::collection::vec(
                prop_oneof![
                    any::<u8>(),
                    Just(b','),
                    Just(b'\n'),
                    Just(b'"'),
                    Just(b'-'),
                    Just(b'e'),
                    Just(b'9')
                ],
                1..12
            )
        )
            .prop_map(|(k, v)| Damage::Insert(k, v)),
        any::<usize>().prop_map(Damage::RepeatLine),
    ]
}

fn apply(mut b: Vec<u8>, ds: &[Damage]) -> Vec<u8> {
    for d in ds {
        let n = b.len().max(1);
        match d {
            Damage::Flip(k, x) => {
                if !b.is_empty() {
                    b[k % n] ^= x | 1;
                }
            }
            Damage::Cut(k) => b.truncate(k % n),
            Damage::Insert(k, v) => {
                let at = (k % n).min(b.len());
                b.splice(at..at, v.iter().copied());
            }
            Damage::RepeatLine(k) => {
                let lines: Vec<&[u8]> = b.split(|&c| c == b'\n').collect();
                if let Some(l) = lines.get(k % lines.len().max(1)) {
                    let mut l = l.to_vec();
                    l.push(b'\n');
                    let at = b.len() / 2;
                    b.splice(at..at, l);
                }
            }
        }
    }
    b
}

/// Every error message names the file it was given.
fn names_file(msg: String, file: &str) -> Result<(), TestCaseError> {
    prop_assert!(msg.contains(file), "{msg}");
    Ok(())
}

proptest! {
    #![proptest_config(ProptestConfig { cases: 150, .. ProptestConfig::default() })]

    #[test]
    fn line_tables(ds in prop::collection::vec(damage(), 1..6), raw in prop::collection::vec(any::<u8>(), 0..300)) {
        for b in [apply(seed("survey_import/gravity.csv"), &ds), apply(seed("survey_import/magnetic.csv"), &ds), raw.clone()] {
            if let Err(e) = read_table_bytes(&b, Path::new("lines.csv"), &TextOptions::default(), None) {
                names_file(e.to_string(), "lines.csv")?;
            }
            if let Err(e) = parse_passthrough(&b, Path::new("lines.csv"), &["x_out"]) {
                names_file(e.to_string(), "lines.csv")?;
            }
        }
    }

    #[test]
    fn geotiffs(ds in prop::collection::vec(damage(), 1..4), raw in prop::collection::vec(any::<u8>(), 0..300)) {
        for name in ["f32_area.tif", "i32_deflate.tif", "written_by_fieldstone.tif"] {
            let b = apply(seed(&format!("geotiff/{name}")), &ds);
            if let Err(e) = read_geotiff_bytes(&b, Path::new("dem.tif")) {
                names_file(e.to_string(), "dem.tif")?;
            }
        }
        if let Err(e) = read_geotiff_bytes(&raw, Path::new("dem.tif")) {
            names_file(e.to_string(), "dem.tif")?;
        }
    }

    #[test]
    fn wireframes(ds in prop::collection::vec(damage(), 1..6)) {
        let obj = apply(seed("wireframe/part.obj"), &ds);
        if let Err(e) = Wireframe::parse_obj(&String::from_utf8_lossy(&obj), Path::new("body.obj")) {
            names_file(e.to_string(), "body.obj")?;
        }
        for stl in ["wireframe/tet.stl", "wireframe/tet_ascii.stl"] {
            let b = apply(seed(stl), &ds);
            if let Err(e) = Wireframe::parse_stl(&b, Path::new("body.stl")) {
                names_file(e.to_string(), "body.stl")?;
            }
        }
    }

    #[test]
    fn project_files(ds in prop::collection::vec(damage(), 1..6)) {
        let b = apply(seed("project_file/demo.json"), &ds);
        match ProjectFile::parse(&b, Path::new("project.json")) {
            Err(e) => names_file(e.to_string(), "project.json")?,
            Ok(l) => {
                // What loads writes back and loads the same.
                let t = serde_json::to_string(&l.project).unwrap();
                let again = ProjectFile::parse(t.as_bytes(), Path::new("project.json")).unwrap();
                prop_assert_eq!(again.project, l.project);
            }
        }
    }

    #[test]
    fn body_files_and_xyz_grids(ds in prop::collection::vec(damage(), 1..6)) {
        let b = apply(seed("body_file/block.json"), &ds);
        if let Err(e) = parse_body_file(&b, Path::new("bodies.json")) {
            names_file(e.to_string(), "bodies.json")?;
        }
        let b = apply(seed("ascii_grid/small.asc"), &ds);
        match read_ascii_grid_bytes(&b, Path::new("dem.asc")) {
            Err(e) => names_file(e.to_string(), "dem.asc")?,
            Ok(g) => prop_assert_eq!(g.values.len(), g.nx * g.ny),
        }
        let b = apply(seed("xyz_grid/small.xyz"), &ds);
        if let Err(e) = read_xyz_bytes(&b, Path::new("grid.xyz"), &TextOptions::default()) {
            names_file(e.to_string(), "grid.xyz")?;
        }
    }

    #[test]
    fn gdf_line_data(ds in prop::collection::vec(damage(), 1..6), raw in prop::collection::vec(any::<u8>(), 0..300)) {
        let seed = seed("gdf/lines.gdf");
        let cut = seed.windows(8).position(|w| w == b"END DEFN").unwrap() + 9;
        let (dfn, dat) = seed.split_at(cut);
        // Damage to the definition, then to the records under a good one.
        match parse_definition(&apply(dfn.to_vec(), &ds), Path::new("lines.dfn")) {
            Err(e) => names_file(e.to_string(), "lines.dfn")?,
            Ok(def) => {
                if let Err(e) = read_gdf_bytes(dat, Path::new("lines.dat"), &def, &TextOptions::default()) {
                    names_file(e.to_string(), "lines.dat")?;
                }
            }
        }
        let def = parse_definition(dfn, Path::new("lines.dfn")).unwrap();
        for b in [apply(dat.to_vec(), &ds), raw.clone()] {
            match read_gdf_bytes(&b, Path::new("lines.dat"), &def, &TextOptions::default()) {
                Err(e) => names_file(e.to_string(), "lines.dat")?,
                Ok(t) => prop_assert!(t.columns.iter().all(|c| c.len() == t.lines.len())),
            }
        }
    }

    #[test]
    fn outlines(ds in prop::collection::vec(damage(), 1..6), raw in prop::collection::vec(any::<u8>(), 0..300)) {
        for b in [apply(seed("outline/areas.geojson"), &ds), raw.clone()] {
            if let Err(e) = parse_geojson(&b, Path::new("areas.geojson")) {
                names_file(e.to_string(), "areas.geojson")?;
            }
        }
        for b in [apply(seed("outline/units.shp"), &ds), raw.clone()] {
            match parse_shp(&b, Path::new("units.shp"), None) {
                Err(e) => names_file(e.to_string(), "units.shp")?,
                Ok(f) => prop_assert!(f.outlines.iter().all(|o| !o.parts.is_empty())),
            }
            if let Err(e) = dbf_names(&b, Path::new("units.dbf")) {
                names_file(e.to_string(), "units.dbf")?;
            }
        }
    }
}
