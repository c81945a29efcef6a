//! Outlines: the same bytes as GeoJSON and as a shapefile's main file.
#![no_main]
use fieldstone_core::outline::geojson::parse_geojson;
use fieldstone_core::outline::shapefile::{dbf_names, parse_shp};
use libfuzzer_sys::fuzz_target;
use std::path::Path;

fuzz_target!(|data: &[u8]| {
    if let Ok(f) = parse_geojson(data, Path::new("fuzz.geojson")) {
        assert!(f.outlines.iter().all(|o| o.parts.iter().all(|p| p.outer.len() >= 3)));
    }
    if let Ok(f) = parse_shp(data, Path::new("fuzz.shp"), None) {
        assert!(f.outlines.iter().all(|o| !o.parts.is_empty()));
    }
    let _ = dbf_names(data, Path::new("fuzz.dbf"));
});
