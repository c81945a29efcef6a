//! A project that starts from anomalies delivered already reduced (a
//! contractor's Bouguer table and total-field anomalies, with their own
//! headers): the reduce step takes them as given, and the stations, grids
//! and everything after match the project that reduced the same survey
//! itself.

use fieldstone_core::demo::{write_demo, DemoSize};
use fieldstone_core::grid::geotiff::read_geotiff;
use fieldstone_core::project::file::{GivenAnomaly, GravityInput, ProjectFile};
use fieldstone_pipeline::{run, Quiet, Selection};
use std::path::{Path, PathBuf};

fn scratch(name: &str) -> PathBuf {
    let d = std::env::temp_dir().join(format!("fieldstone-given-{name}-{}", std::process::id()));
    let _ = std::fs::remove_dir_all(&d);
    std::fs::create_dir_all(&d).unwrap();
    d
}

/// (x, y, z, value) rows of a points file the pipeline wrote.
fn points(path: &Path) -> Vec<[f64; 4]> {
    std::fs::read_to_string(path)
        .unwrap()
        .lines()
        .filter(|l| !l.starts_with('#'))
        .skip(1)
        .map(|l| {
            let v: Vec<f64> = l.split(',').map(|t| t.parse().unwrap()).collect();
            [v[0], v[1], v[2], v[3]]
        })
        .collect()
}

/// A delivered table of the same anomalies, in the supplier's words.
fn delivered(rows: &[[f64; 4]], header: &str, path: &Path) {
    let mut s =
        format!("# delivered anomalies (invented)\nStation,Easting,Northing,Elevation,{header}\n");
    for (k, r) in rows.iter().enumerate() {
        s.push_str(&format!("P{k},{},{},{},{}\n", r[0], r[1], r[2], r[3]));
    }
    std::fs::write(path, s).unwrap();
}

#[test]
fn a_project_from_given_anomalies_matches_the_one_that_reduced_them() {
    let a = scratch("reduced");
    write_demo(&a, DemoSize::Small, &Quiet).unwrap();
    run(&a, &Selection::None, false, &Quiet).unwrap();
    let grav = points(&a.join("data/gravity_stations.csv"));
    let mag = points(&a.join("data/magnetic_points.csv"));

    let b = scratch("given");
    write_demo(&b, DemoSize::Small, &Quiet).unwrap();
    delivered(&grav, "CBA (mGal)", &b.join("inputs/delivered_gravity.csv"));
    delivered(
        &mag,
        "TMI anomaly (nT)",
        &b.join("inputs/delivered_magnetic.csv"),
    );
    let mut pf = ProjectFile::load(&b).unwrap().project;
    let p = &mut pf;
    p.gravity = Some(GravityInput {
        given: Some(GivenAnomaly {
            column: "CBA (mGal)".into(),
            reduction_density_g_cc: Some(2.67),
            note: "complete Bouguer anomaly, terrain corrected to 1.5 km".into(),
            height_above_ground_m: None,
        }),
        ..GravityInput::of_file("inputs/delivered_gravity.csv")
    });
    let m = p.magnetic.as_mut().unwrap();
    m.file = "inputs/delivered_magnetic.csv".into();
    m.base_file = None;
    // Thinning keeps every delivered point (they were thinned already).
    m.thin_to_m = 0.0;
    m.given = Some(GivenAnomaly {
        column: "TMI anomaly (nT)".into(),
        reduction_density_g_cc: None,
        note: String::new(),
        height_above_ground_m: None,
    });
    pf.save(&b).unwrap();
    run(&b, &Selection::None, false, &Quiet).unwrap();

    let same = |x: &[[f64; 4]], y: &[[f64; 4]], what: &str| {
        assert_eq!(x.len(), y.len(), "{what}");
        for (p, q) in x.iter().zip(y) {
            for c in 0..4 {
                assert!((p[c] - q[c]).abs() < 1e-9, "{what}: {p:?} against {q:?}");
            }
        }
    };
    same(
        &grav,
        &points(&b.join("data/gravity_stations.csv")),
        "gravity stations",
    );
    same(
        &mag,
        &points(&b.join("data/magnetic_points.csv")),
        "magnetic points",
    );
    for g in [
        "gravity_grid.tif",
        "magnetic_grid.tif",
        "gravity_residual.tif",
    ] {
        let (p, q) = (
            read_geotiff(&a.join("data").join(g)).unwrap(),
            read_geotiff(&b.join("data").join(g)).unwrap(),
        );
        assert_eq!((p.nx, p.ny, p.x0, p.y0), (q.nx, q.ny, q.x0, q.y0), "{g}");
        for (u, v) in p.values.iter().zip(&q.values) {
            assert!(
                u == v || (u.is_nan() && v.is_nan()) || (u - v).abs() < 1e-6,
                "{g}: {u} against {v}"
            );
        }
    }
    // The reduced table keeps the supplier's columns and adds the anomaly.
    let red = std::fs::read_to_string(b.join("data/gravity_reduced.csv")).unwrap();
    let header = red.lines().find(|l| !l.starts_with('#')).unwrap();
    assert_eq!(
        header,
        "Station,Easting,Northing,Elevation,CBA (mGal),source_file,given_anomaly_mgal"
    );
}

/// Warnings of a run, kept.
#[derive(Default)]
struct Warnings(std::sync::Mutex<Vec<String>>);

impl fieldstone_pipeline::Events for Warnings {
    fn step(&self, e: &fieldstone_pipeline::StepEvent<'_>) {
        if let fieldstone_pipeline::StepEvent::Warning { text, .. } = e {
            self.0.lock().unwrap().push(text.to_string());
        }
    }
}

impl fieldstone_core::progress::Observer for Warnings {}

/// A file read differently from how the project recorded it at import (its
/// header changed since) is pointed out by the import step.
#[test]
fn a_file_read_otherwise_than_recorded_is_pointed_out() {
    use fieldstone_core::survey::columns::Role;
    use fieldstone_core::survey::import::ImportSpec;
    use fieldstone_core::table::TextOptions;
    let d = scratch("recorded");
    write_demo(&d, DemoSize::Small, &Quiet).unwrap();
    let mut p = ProjectFile::load(&d).unwrap().project;
    let file = p.gravity.as_ref().unwrap().file.clone();
    let mut spec =
        ImportSpec::guess_for_file(&d.join(&file), &TextOptions::default(), p.epsg).unwrap();
    // As if the line column had once been read as the station.
    spec.set_role(Role::Station, "line").unwrap();
    p.imports.push(fieldstone_core::project::file::ImportStep {
        name: "gravity survey".into(),
        file: file.clone(),
        spec,
    });
    p.save(&d).unwrap();
    let w = Warnings::default();
    run(&d, &Selection::None, false, &w).unwrap();
    let w = w.0.lock().unwrap();
    assert!(
        w.iter()
            .any(|t| t.contains("recorded at import") && t.contains("gravity_readings.csv")),
        "{w:?}"
    );
}

/// A delivered anomaly grid (GeoTIFF): one point per node with a value, at
/// the terrain's height; gridded again at the same cell it comes back node
/// for node.
#[test]
fn a_delivered_grid_becomes_points_at_the_terrain_and_grids_back() {
    let a = scratch("grid-source");
    write_demo(&a, DemoSize::Small, &Quiet).unwrap();
    run(&a, &Selection::None, false, &Quiet).unwrap();
    let delivered = read_geotiff(&a.join("data/gravity_grid.tif")).unwrap();

    let b = scratch("grid-given");
    write_demo(&b, DemoSize::Small, &Quiet).unwrap();
    std::fs::copy(
        a.join("data/gravity_grid.tif"),
        b.join("inputs/ba_grid.tif"),
    )
    .unwrap();
    let mut p = ProjectFile::load(&b).unwrap().project;
    p.gravity = Some(GravityInput {
        given: Some(GivenAnomaly {
            column: String::new(),
            reduction_density_g_cc: Some(2.67),
            note: "Bouguer grid as delivered".into(),
            height_above_ground_m: Some(0.0),
        }),
        ..GravityInput::of_file("inputs/ba_grid.tif")
    });
    p.save(&b).unwrap();
    run(&b, &Selection::None, false, &Quiet).unwrap();
    let pts = points(&b.join("data/gravity_stations.csv"));
    let nodes = delivered.values.iter().filter(|v| v.is_finite()).count();
    assert_eq!(pts.len(), nodes);
    // Heights from the demo's terrain model.
    let dem = fieldstone_core::grid::read::read_grid(&b.join("inputs/terrain.tif")).unwrap();
    for q in pts.iter().take(50) {
        assert!(
            (q[2] - dem.sample(q[0], q[1]).unwrap()).abs() < 1e-3,
            "{q:?}"
        );
    }
    let again = read_geotiff(&b.join("data/gravity_grid.tif")).unwrap();
    assert_eq!(
        (again.nx, again.ny, again.x0, again.y0),
        (delivered.nx, delivered.ny, delivered.x0, delivered.y0)
    );
    let mut worst: f64 = 0.0;
    for (u, v) in delivered.values.iter().zip(&again.values) {
        if u.is_finite() && v.is_finite() {
            worst = worst.max((u - v).abs());
        }
    }
    // The stations file keeps six decimals.
    assert!(worst < 1e-5, "largest difference {worst} mGal");
}
