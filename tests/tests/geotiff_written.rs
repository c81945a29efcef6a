//! GeoTIFFs written by Fieldstone read back in an independent reader:
//! `fixtures/geotiff/written_by_fieldstone.tif` is this test's grid as
//! written by `write_geotiff`, and `fixtures/geotiff/readback_tifffile.json`
//! is what tifffile 2026.3.3 reads from it (script
//! `fixtures/geotiff/readback_tifffile.py`). The test checks that the writer
//! still produces exactly that file and that tifffile's reading agrees with
//! the grid. Set FIELDSTONE_WRITE_FIXTURES=1 to rewrite the .tif after a
//! deliberate format change, then rerun the script.

use fieldstone_core::grid::geotiff::{write_geotiff, NODATA_WRITTEN};
use fieldstone_core::grid::Grid2;
use std::path::PathBuf;

fn fixture(name: &str) -> PathBuf {
    PathBuf::from(concat!(env!("CARGO_MANIFEST_DIR"), "/fixtures/geotiff")).join(name)
}

fn the_grid() -> Grid2 {
    let mut g = Grid2::new_empty(400_012.5, 6_500_012.5, 25.0, 25.0, 9, 6).unwrap();
    for j in 0..6 {
        for i in 0..9 {
            g.values[i + 9 * j] = 0.5 * i as f64 - 1.25 * j as f64 + 0.125 * (i * j) as f64;
        }
    }
    g.values[3 + 9 * 2] = f64::NAN;
    g.epsg = Some(32755);
    g
}

#[test]
fn written_geotiffs_read_back_in_tifffile() {
    let g = the_grid();
    let tmp = std::env::temp_dir().join(format!("fieldstone-written-{}.tif", std::process::id()));
    write_geotiff(&tmp, &g).unwrap();
    let written = std::fs::read(&tmp).unwrap();
    std::fs::remove_file(&tmp).unwrap();
    if std::env::var("FIELDSTONE_WRITE_FIXTURES").is_ok() {
        std::fs::write(fixture("written_by_fieldstone.tif"), &written).unwrap();
    }
    assert_eq!(
        written,
        std::fs::read(fixture("written_by_fieldstone.tif")).unwrap(),
        "the writer's output changed; see the module notes"
    );
    let rb: serde_json::Value =
        serde_json::from_str(&std::fs::read_to_string(fixture("readback_tifffile.json")).unwrap())
            .unwrap();
    assert_eq!(rb["shape"], serde_json::json!([6, 9]));
    assert_eq!(rb["dtype"], "float32");
    let scale: Vec<f64> = rb["ModelPixelScaleTag"]
        .as_array()
        .unwrap()
        .iter()
        .map(|v| v.as_f64().unwrap())
        .collect();
    assert_eq!(&scale[..2], &[25.0, 25.0]);
    let tie: Vec<f64> = rb["ModelTiepointTag"]
        .as_array()
        .unwrap()
        .iter()
        .map(|v| v.as_f64().unwrap())
        .collect();
    // Upper-left corner of the upper-left pixel.
    assert_eq!(&tie[3..5], &[400_000.0, 6_500_150.0]);
    assert_eq!(rb["epsg"], 32755);
    assert_eq!(
        rb["GDAL_NODATA"]
            .as_str()
            .unwrap()
            .trim_matches(char::from(0))
            .parse::<f32>()
            .unwrap(),
        NODATA_WRITTEN
    );
    let rows = rb["values"].as_array().unwrap();
    for (r, row) in rows.iter().enumerate() {
        for (c, v) in row.as_array().unwrap().iter().enumerate() {
            let want = g.get(c, 5 - r);
            let got = v.as_f64().unwrap();
            if want.is_nan() {
                assert_eq!(got as f32, NODATA_WRITTEN);
            } else {
                assert_eq!(got, want as f32 as f64, "({r},{c})");
            }
        }
    }
}
