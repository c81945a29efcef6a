//! The delimited-text reader under every option it has.
#![no_main]
use fieldstone_core::table::read::read_table_bytes;
use fieldstone_core::table::{Delimiter, TextOptions};
use libfuzzer_sys::fuzz_target;
use std::path::Path;

fuzz_target!(|data: &[u8]| {
    // The first byte picks the options; the rest is the file.
    let Some((&sel, body)) = data.split_first() else {
        return;
    };
    let delimiter = match sel % 5 {
        0 => None,
        1 => Some(Delimiter::Comma),
        2 => Some(Delimiter::Tab),
        3 => Some(Delimiter::Semicolon),
        _ => Some(Delimiter::Whitespace),
    };
    let opts = TextOptions {
        delimiter,
        has_header: [None, Some(true), Some(false)][(sel / 5 % 3) as usize],
        dummy_value: (sel & 0x80 != 0).then_some(-99999.0),
    };
    if let Ok(t) = read_table_bytes(body, Path::new("fuzz.csv"), &opts, None) {
        assert_eq!(t.names.len(), t.columns.len());
        for c in &t.columns {
            assert_eq!(c.len(), t.lines.len());
        }
    }
});
