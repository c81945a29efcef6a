//! Further surveys of a kind beside the first: each is imported, reduced
//! with its own settings and gridded into its own files, and the first
//! survey's files (which the regional separation and inversions use) stay
//! as they were.

use fieldstone_core::demo::{write_demo, DemoSize};
use fieldstone_core::grid::geotiff::read_geotiff;
use fieldstone_core::project::file::{FurtherSurvey, ProjectFile};
use fieldstone_core::reduce::gravity::GravitySettings;
use fieldstone_pipeline::{run, Quiet, Selection};
use std::path::{Path, PathBuf};

fn scratch(name: &str) -> PathBuf {
    let d = std::env::temp_dir().join(format!("fieldstone-further-{name}-{}", std::process::id()));
    let _ = std::fs::remove_dir_all(&d);
    std::fs::create_dir_all(&d).unwrap();
    d
}

/// The named column of a reduced table.
fn column(path: &Path, name: &str) -> Vec<f64> {
    let text = std::fs::read_to_string(path).unwrap();
    let mut lines = text.lines().filter(|l| !l.starts_with('#'));
    let header: Vec<&str> = lines.next().unwrap().split(',').collect();
    let c = header.iter().position(|h| *h == name).unwrap();
    lines
        .map(|l| l.split(',').nth(c).unwrap().parse().unwrap())
        .collect()
}

#[test]
fn a_further_gravity_survey_is_reduced_and_gridded_on_its_own() {
    let a = scratch("first-only");
    write_demo(&a, DemoSize::Small, &Quiet).unwrap();
    run(&a, &Selection::None, false, &Quiet).unwrap();

    let b = scratch("with-further");
    write_demo(&b, DemoSize::Small, &Quiet).unwrap();
    let mut p = ProjectFile::load(&b).unwrap().project;
    let mut second = p.gravity.clone().unwrap();
    second.terrain_outer_m = None;
    let density = 2.0;
    p.more_gravity.push(FurtherSurvey {
        name: "reprocessed 2.0".into(),
        reduction: Some(GravitySettings {
            density_g_cc: density,
            ..p.gravity_reduction.unwrap_or_default()
        }),
        survey: second,
    });
    p.save(&b).unwrap();
    run(&b, &Selection::None, false, &Quiet).unwrap();

    // The first survey's files are those of the project without the
    // further survey (tables but for the project folder they name; grids
    // node for node).
    for f in ["gravity_reduced.csv", "gravity_stations.csv"] {
        let read = |d: &Path| {
            std::fs::read_to_string(d.join("data").join(f))
                .unwrap()
                .replace(&d.display().to_string(), "PROJECT")
        };
        assert!(read(&a) == read(&b), "{f} changed");
    }
    for f in ["gravity_grid.tif", "gravity_residual.tif"] {
        let (p, q) = (
            read_geotiff(&a.join("data").join(f)).unwrap(),
            read_geotiff(&b.join("data").join(f)).unwrap(),
        );
        assert_eq!((p.nx, p.ny, p.x0, p.y0), (q.nx, q.ny, q.x0, q.y0), "{f}");
        assert!(
            p.values
                .iter()
                .zip(&q.values)
                .all(|(u, v)| u == v || (u.is_nan() && v.is_nan())),
            "{f} changed"
        );
    }
    // The further survey's own files; its Bouguer slab scales with its own
    // density (the slab 2πGρh is linear in ρ: Blakely 1995, Potential
    // Theory in Gravity and Magnetic Applications; Hinze et al. 2005), its
    // free-air anomaly, which does not involve density, does not change.
    let own = b.join("data/gravity_reprocessed_2_0_reduced.csv");
    let first = a.join("data/gravity_reduced.csv");
    let (s1, s2) = (
        column(&first, "bouguer_slab_mgal"),
        column(&own, "bouguer_slab_mgal"),
    );
    assert_eq!(s1.len(), s2.len());
    let rho1 = p.gravity_reduction.unwrap_or_default().density_g_cc;
    for (x, y) in s1.iter().zip(&s2) {
        assert!(
            (y - x * density / rho1).abs() < 1e-9 * x.abs().max(1.0),
            "{x} {y}"
        );
    }
    assert_eq!(
        column(&first, "free_air_anomaly_mgal"),
        column(&own, "free_air_anomaly_mgal")
    );
    let g = read_geotiff(&b.join("data/gravity_reprocessed_2_0_grid.tif")).unwrap();
    assert!(g.values.iter().any(|v| v.is_finite()));
    // Two further surveys whose names make the same file names are refused.
    let mut p = ProjectFile::load(&b).unwrap().project;
    let mut twin = p.more_gravity[0].clone();
    twin.name = "reprocessed/2.0".into();
    p.more_gravity.push(twin);
    p.save(&b).unwrap();
    let e = run(&b, &Selection::None, false, &Quiet)
        .unwrap_err()
        .to_string();
    assert!(
        e.contains("would share the files") && e.contains("reprocessed/2.0"),
        "{e}"
    );
}
