//! ESRI ASCII grids.
#![no_main]
use fieldstone_core::grid::ascii::read_ascii_grid_bytes;
use libfuzzer_sys::fuzz_target;
use std::path::Path;

fuzz_target!(|data: &[u8]| {
    if let Ok(g) = read_ascii_grid_bytes(data, Path::new("fuzz.asc")) {
        assert_eq!(g.values.len(), g.nx * g.ny);
    }
});
