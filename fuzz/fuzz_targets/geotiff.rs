//! The GeoTIFF reader (terrain, surfaces).
#![no_main]
use fieldstone_core::grid::geotiff::read_geotiff_bytes;
use libfuzzer_sys::fuzz_target;
use std::path::Path;

fuzz_target!(|data: &[u8]| {
    if let Ok(g) = read_geotiff_bytes(data, Path::new("fuzz.tif")) {
        assert_eq!(g.values.len(), g.nx * g.ny);
        assert!(g.dx > 0.0 && g.dy > 0.0);
    }
});
