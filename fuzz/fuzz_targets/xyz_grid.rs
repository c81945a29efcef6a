//! XYZ grids.
#![no_main]
use fieldstone_core::grid::xyz::read_xyz_bytes;
use fieldstone_core::table::TextOptions;
use libfuzzer_sys::fuzz_target;
use std::path::Path;

fuzz_target!(|data: &[u8]| {
    if let Ok(g) = read_xyz_bytes(data, Path::new("fuzz.xyz"), &TextOptions::default()) {
        assert_eq!(g.values.len(), g.nx * g.ny);
    }
});
