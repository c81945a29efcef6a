//! Map outlines from GeoJSON (RFC 7946) and ESRI shapefiles (ESRI
//! Shapefile Technical Description, July 1998), written here byte by byte
//! from those texts: rings, holes, several parts, names, the reference and
//! its conversion to the project's, and the cells an outline region holds.

use fieldstone_core::constraint::build::{build, Assignments, Defaults, Layer};
use fieldstone_core::constraint::region::{Inputs, Level, Region};
use fieldstone_core::geodesy::crs::Crs;
use fieldstone_core::mesh::recipe::MeshRecipe;
use fieldstone_core::mesh::topo::active_cells;
use fieldstone_core::outline::{read_outlines, MapPolygon};
use std::path::PathBuf;

fn scratch(name: &str) -> PathBuf {
    let d = std::env::temp_dir().join(format!("fieldstone-outline-{name}-{}", std::process::id()));
    let _ = std::fs::remove_dir_all(&d);
    std::fs::create_dir_all(&d).unwrap();
    d
}

const GEOJSON: &str = r#"{
  "type": "FeatureCollection",
  "features": [
    {"type": "Feature", "properties": {"name": "quarry lease"},
     "geometry": {"type": "Polygon", "coordinates": [
        [[-81.0, 48.75], [-80.99, 48.75], [-80.99, 48.76], [-81.0, 48.76], [-81.0, 48.75]],
        [[-80.997, 48.753], [-80.997, 48.757], [-80.993, 48.757], [-80.993, 48.753], [-80.997, 48.753]]
     ]}},
    {"type": "Feature", "properties": {"NAME": "two outcrops"},
     "geometry": {"type": "MultiPolygon", "coordinates": [
        [[[-81.02, 48.74], [-81.01, 48.74], [-81.01, 48.745], [-81.02, 48.74]]],
        [[[-81.03, 48.74], [-81.025, 48.74], [-81.025, 48.745], [-81.03, 48.74]]]
     ]}},
    {"type": "Feature", "properties": {}, "geometry": null}
  ]
}"#;

#[test]
fn geojson_features_with_holes_and_parts_are_projected_to_the_project() {
    let d = scratch("geojson");
    let p = d.join("areas.geojson");
    std::fs::write(&p, GEOJSON).unwrap();
    let f = read_outlines(&p).unwrap();
    // RFC 7946: no crs member means WGS 84 longitude/latitude.
    assert_eq!(f.epsg, Some(4326));
    assert_eq!(f.outlines.len(), 2);
    assert_eq!(f.outlines[0].name, "quarry lease");
    assert_eq!(f.outlines[1].name, "two outcrops");
    assert_eq!(f.outlines[0].parts[0].holes.len(), 1);
    assert_eq!(f.outlines[1].parts.len(), 2);
    // The closing vertex is not kept twice.
    assert_eq!(f.outlines[0].parts[0].outer.len(), 4);
    let (o, warnings) = f.to_project(Some(32617)).unwrap();
    assert!(
        warnings.iter().any(|w| w.contains("projected")),
        "{warnings:?}"
    );
    // 81° W is the central meridian of UTM zone 17: easting 500 000 m
    // exactly there, the false easting on the central meridian (Snyder
    // 1987, Map Projections — A Working Manual, USGS PP 1395, UTM).
    let v = o[0].parts[0].outer[0];
    assert!((v[0] - 500_000.0).abs() < 1e-6, "{v:?}");
    let utm = Crs::from_epsg(32617).unwrap();
    let (x, y) = utm.project(48.757, -80.993).unwrap();
    let hole = &o[0].parts[0].holes[0];
    assert!(hole
        .iter()
        .any(|q| (q[0] - x).abs() < 1e-9 && (q[1] - y).abs() < 1e-9));
    // Inside the lease but in its hole: outside.
    let (hx, hy) = utm.project(48.755, -80.995).unwrap();
    let (ix, iy) = utm.project(48.751, -80.999).unwrap();
    assert!(!o[0].parts[0].contains(hx, hy));
    assert!(o[0].parts[0].contains(ix, iy));
}

#[test]
fn a_legacy_crs_member_names_a_projected_reference() {
    let d = scratch("crs");
    let p = d.join("a.geojson");
    std::fs::write(
        &p,
        r#"{"type": "Polygon", "crs": {"type": "name", "properties": {"name": "urn:ogc:def:crs:EPSG::32617"}},
            "coordinates": [[[452000, 5401000], [452500, 5401000], [452500, 5401500], [452000, 5401000]]]}"#,
    )
    .unwrap();
    let f = read_outlines(&p).unwrap();
    assert_eq!(f.epsg, Some(32617));
    let (o, w) = f.to_project(Some(32617)).unwrap();
    assert!(w.is_empty());
    assert_eq!(o[0].parts[0].outer[1], [452500.0, 5401000.0]);
    // A point among outlines is named, with where it is.
    std::fs::write(&p, r#"{"type": "FeatureCollection", "features": [{"type": "Feature", "geometry": {"type": "Point", "coordinates": [1, 2]}}]}"#).unwrap();
    let e = read_outlines(&p).unwrap_err().to_string();
    assert!(
        e.contains("a.geojson") && e.contains("features[0]") && e.contains("Point"),
        "{e}"
    );
}

/// A polygon shapefile written from the 1998 technical description.
fn shp(records: &[Vec<Vec<[f64; 2]>>]) -> Vec<u8> {
    let mut body = Vec::new();
    for (k, parts) in records.iter().enumerate() {
        let n_points: usize = parts.iter().map(|p| p.len()).sum();
        let mut c = Vec::new();
        c.extend(5i32.to_le_bytes());
        for v in [0.0f64, 0.0, 0.0, 0.0] {
            c.extend(v.to_le_bytes()); // bounding box (not used by the reader)
        }
        c.extend((parts.len() as i32).to_le_bytes());
        c.extend((n_points as i32).to_le_bytes());
        let mut start = 0i32;
        for p in parts {
            c.extend(start.to_le_bytes());
            start += p.len() as i32;
        }
        for p in parts {
            for q in p {
                c.extend(q[0].to_le_bytes());
                c.extend(q[1].to_le_bytes());
            }
        }
        body.extend((k as i32 + 1).to_be_bytes());
        body.extend(((c.len() / 2) as i32).to_be_bytes());
        body.extend(c);
    }
    let mut h = vec![0u8; 100];
    h[0..4].copy_from_slice(&9994i32.to_be_bytes());
    h[24..28].copy_from_slice((((100 + body.len()) / 2) as i32).to_be_bytes().as_slice());
    h[28..32].copy_from_slice(&1000i32.to_le_bytes());
    h[32..36].copy_from_slice(&5i32.to_le_bytes());
    h.extend(body);
    h
}

/// A dBASE III table with one character field NAME.
fn dbf(names: &[&str]) -> Vec<u8> {
    let width = 20usize;
    let mut b = vec![0u8; 32];
    b[0] = 3;
    b[4..8].copy_from_slice(&(names.len() as u32).to_le_bytes());
    b[8..10].copy_from_slice(&(32u16 + 32 + 1).to_le_bytes());
    b[10..12].copy_from_slice(&(1 + width as u16).to_le_bytes());
    let mut d = [0u8; 32];
    d[..4].copy_from_slice(b"NAME");
    d[11] = b'C';
    d[16] = width as u8;
    b.extend(d);
    b.push(0x0D);
    for n in names {
        b.push(b' ');
        b.extend(format!("{n:<width$}").as_bytes());
    }
    b.push(0x1A);
    b
}

#[test]
fn a_shapefile_gives_outer_rings_holes_parts_names_and_its_reference() {
    let d = scratch("shp");
    // Clockwise outer ring (the interior on the right), anticlockwise hole.
    let outer = vec![
        [0.0, 0.0],
        [0.0, 100.0],
        [100.0, 100.0],
        [100.0, 0.0],
        [0.0, 0.0],
    ];
    let hole = vec![
        [40.0, 40.0],
        [60.0, 40.0],
        [60.0, 60.0],
        [40.0, 60.0],
        [40.0, 40.0],
    ];
    let a = vec![[200.0, 0.0], [200.0, 50.0], [250.0, 50.0], [200.0, 0.0]];
    let b = vec![[300.0, 0.0], [300.0, 50.0], [350.0, 50.0], [300.0, 0.0]];
    std::fs::write(d.join("units.shp"), shp(&[vec![outer, hole], vec![a, b]])).unwrap();
    std::fs::write(d.join("units.dbf"), dbf(&["sandstone", "dyke swarm"])).unwrap();
    std::fs::write(
        d.join("units.prj"),
        r#"PROJCS["WGS 84 / UTM zone 17N",GEOGCS["WGS 84",DATUM["WGS_1984",SPHEROID["WGS 84",6378137,298.257223563]],PRIMEM["Greenwich",0],UNIT["degree",0.0174532925199433]],PROJECTION["Transverse_Mercator"],UNIT["metre",1,AUTHORITY["EPSG","9001"]],AUTHORITY["EPSG","32617"]]"#,
    )
    .unwrap();
    let f = read_outlines(&d.join("units.shp")).unwrap();
    assert_eq!(f.epsg, Some(32617));
    assert_eq!(f.outlines.len(), 2);
    assert_eq!(f.outlines[0].name, "sandstone");
    assert_eq!(f.outlines[1].name, "dyke swarm");
    let p: &MapPolygon = &f.outlines[0].parts[0];
    assert_eq!(p.holes.len(), 1);
    assert_eq!(p.area(), 100.0 * 100.0 - 20.0 * 20.0);
    assert!(p.contains(10.0, 10.0) && !p.contains(50.0, 50.0));
    assert_eq!(f.outlines[1].parts.len(), 2);
    // Without the .dbf the records are numbered.
    std::fs::remove_file(d.join("units.dbf")).unwrap();
    let f = read_outlines(&d.join("units.shp")).unwrap();
    assert_eq!(f.outlines[1].name, "2");
}

#[test]
fn an_outline_region_holds_the_cells_inside_its_parts_and_not_its_holes() {
    // 10 × 8 × 10 cells of 10 m from (0, 0); top 100 m.
    let m = MeshRecipe::uniform(10.0, 10.0, [0.0, 100.0], [0.0, 80.0], 100.0, 100.0)
        .build()
        .unwrap();
    let act = active_cells(&m, None, false, false).unwrap();
    let region = Region::Outline {
        source: "test".into(),
        parts: vec![
            MapPolygon {
                outer: vec![[0.0, 0.0], [60.0, 0.0], [60.0, 60.0], [0.0, 60.0]],
                holes: vec![vec![[20.0, 20.0], [40.0, 20.0], [40.0, 40.0], [20.0, 40.0]]],
            },
            MapPolygon {
                outer: vec![[80.0, 60.0], [100.0, 60.0], [100.0, 80.0], [80.0, 80.0]],
                holes: vec![],
            },
        ],
        top: Level::Elevation { z_m: 100.0 },
        bottom: Level::Elevation { z_m: 50.0 },
    };
    let l = Layer {
        name: "outline".into(),
        enabled: true,
        region,
        assign: Assignments {
            reference: Some(0.25),
            ..Default::default()
        },
    };
    let (a, _) = build(&m, &act, &[l], Defaults::density(), &Inputs::default()).unwrap();
    let at = |i, j, k| a.reference[m.index(i, j, k)];
    assert_eq!(at(0, 0, 9), 0.25, "inside the first part");
    assert_eq!(at(2, 2, 9), 0.0, "in the hole");
    assert_eq!(at(9, 7, 9), 0.25, "inside the second part");
    assert_eq!(at(7, 2, 9), 0.0, "between the parts");
    assert_eq!(at(0, 0, 2), 0.0, "below the bottom level");
}

/// A shapefile written by pyshp (tests/fixtures/outlines/make_shapefile.py,
/// library version in expected.json) reads back with the rings pyshp reads:
/// an independent writer and reader of the format.
#[test]
fn a_shapefile_written_by_pyshp_reads_as_pyshp_reads_it() {
    let dir = std::path::Path::new(env!("CARGO_MANIFEST_DIR")).join("fixtures/outlines");
    let expected: serde_json::Value =
        serde_json::from_str(&std::fs::read_to_string(dir.join("expected.json")).unwrap()).unwrap();
    let f = read_outlines(&dir.join("invented_units.shp")).unwrap();
    assert_eq!(f.epsg, Some(32617));
    let records = expected["records"].as_array().unwrap();
    assert_eq!(f.outlines.len(), records.len());
    let ring = |v: &serde_json::Value| -> Vec<[f64; 2]> {
        let mut r: Vec<[f64; 2]> = v
            .as_array()
            .unwrap()
            .iter()
            .map(|p| [p[0].as_f64().unwrap(), p[1].as_f64().unwrap()])
            .collect();
        r.pop(); // the closing vertex
        r
    };
    for (o, e) in f.outlines.iter().zip(records) {
        assert_eq!(o.name, e["name"].as_str().unwrap());
        let rings: Vec<Vec<[f64; 2]>> = e["rings"].as_array().unwrap().iter().map(ring).collect();
        // Every ring pyshp reads is one of ours, as an outer ring or a hole.
        let ours: Vec<&Vec<[f64; 2]>> = o
            .parts
            .iter()
            .flat_map(|p| std::iter::once(&p.outer).chain(&p.holes))
            .collect();
        assert_eq!(ours.len(), rings.len());
        for r in &rings {
            assert!(ours.contains(&r), "{r:?} not read");
        }
    }
    assert_eq!(f.outlines[0].parts[0].holes.len(), 1);
    assert_eq!(f.outlines[1].parts.len(), 2);
    // 1 km square less a 200 m square hole.
    assert_eq!(f.outlines[0].parts[0].area(), 1_000_000.0 - 40_000.0);
}
