//! GeoTIFF reading against files written by an independent writer:
//! `fixtures/geotiff/make_geotiffs.py` (tifffile 2026.3.3, numpy 2.4.6; the
//! versions are recorded in expected.json), with tags per OGC GeoTIFF 1.1.

use fieldstone_core::grid::geotiff::{read_geotiff, GeoTiffError};
use std::path::PathBuf;

fn fixture(name: &str) -> PathBuf {
    PathBuf::from(concat!(env!("CARGO_MANIFEST_DIR"), "/fixtures/geotiff")).join(name)
}

#[test]
fn every_sample_type_and_georeferencing_form_reads_back() {
    let text = std::fs::read_to_string(fixture("expected.json")).unwrap();
    let fx: serde_json::Value = serde_json::from_str(&text).unwrap();
    let cases = fx["cases"].as_object().unwrap();
    assert_eq!(cases.len(), 4);
    for (name, c) in cases {
        let g = read_geotiff(&fixture(name)).unwrap_or_else(|e| panic!("{name}: {e}"));
        let f = |k: &str| c[k].as_f64().unwrap();
        let data: Vec<Vec<f64>> = c["data"]
            .as_array()
            .unwrap()
            .iter()
            .map(|r| {
                r.as_array()
                    .unwrap()
                    .iter()
                    .map(|v| v.as_f64().unwrap())
                    .collect()
            })
            .collect();
        let (h, w) = (data.len(), data[0].len());
        assert_eq!((g.nx, g.ny), (w, h), "{name}");
        assert!(
            (g.dx - f("dx")).abs() < 1e-12 && (g.dy - f("dy")).abs() < 1e-12,
            "{name}"
        );
        assert!(
            (g.x0 - f("x0")).abs() < 1e-9,
            "{name}: x0 {} vs {}",
            g.x0,
            f("x0")
        );
        // The top row of the file is the northernmost row of the grid.
        let y_top = g.y0 + (g.ny - 1) as f64 * g.dy;
        assert!(
            (y_top - f("y_top")).abs() < 1e-9,
            "{name}: top {y_top} vs {}",
            f("y_top")
        );
        assert_eq!(g.epsg, Some(c["epsg"].as_u64().unwrap() as u32), "{name}");
        let nodata = c["nodata"].as_f64();
        for (r, row) in data.iter().enumerate() {
            for (col, &v) in row.iter().enumerate() {
                let got = g.get(col, h - 1 - r);
                if Some(v) == nodata {
                    assert!(got.is_nan(), "{name} ({r},{col}) should be nodata");
                } else {
                    assert_eq!(got, v, "{name} ({r},{col})");
                }
            }
        }
    }
}

#[test]
fn rotated_ungeoreferenced_and_multiband_files_are_refused() {
    assert!(matches!(
        read_geotiff(&fixture("rotated.tif")),
        Err(GeoTiffError::Rotated { .. })
    ));
    let e = read_geotiff(&fixture("no_georef.tif")).unwrap_err();
    assert!(
        matches!(e, GeoTiffError::NoGeoreference { .. }) && e.to_string().contains("no_georef.tif"),
        "{e}"
    );
    assert!(matches!(
        read_geotiff(&fixture("rgb.tif")),
        Err(GeoTiffError::Bands { bands: 3, .. })
    ));
}
