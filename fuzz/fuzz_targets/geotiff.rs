//! The GeoTIFF reader (terrain, surfaces).
#![no_main]
use fieldstone_core::grid::geotiff::read_geotiff_bytes;
use libfuzzer_sys::fuzz_target;
use std::path::Path;

fuzz_target!(|data: &[u8]| {
    // The reader catches panics of the TIFF decoder and reports them as
    // errors; libFuzzer's own hook would abort before that, so it is replaced
    // by a silent one. A panic that escapes the reader still ends the run.
    static QUIET: std::sync::Once = std::sync::Once::new();
    QUIET.call_once(|| std::panic::set_hook(Box::new(|_| {})));
    if let Ok(g) = read_geotiff_bytes(data, Path::new("fuzz.tif")) {
        assert_eq!(g.values.len(), g.nx * g.ny);
        assert!(g.dx > 0.0 && g.dy > 0.0);
    }
});
