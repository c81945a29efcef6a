//! ASEG-GDF2 definition and data: the input is a `.dfn` up to its
//! `END DEFN` line followed by the `.dat` records.
#![no_main]
use fieldstone_core::table::gdf::{parse_definition, read_gdf_bytes};
use fieldstone_core::table::TextOptions;
use libfuzzer_sys::fuzz_target;
use std::path::Path;

fuzz_target!(|data: &[u8]| {
    let cut = data
        .windows(8)
        .position(|w| w == b"END DEFN")
        .map(|k| k + 8)
        .unwrap_or(data.len());
    let (dfn, dat) = data.split_at(cut);
    if let Ok(def) = parse_definition(dfn, Path::new("fuzz.dfn")) {
        if let Ok(t) = read_gdf_bytes(dat, Path::new("fuzz.dat"), &def, &TextOptions::default()) {
            assert_eq!(t.names.len(), t.columns.len());
            assert!(t.columns.iter().all(|c| c.len() == t.lines.len()));
        }
    }
});
