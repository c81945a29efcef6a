//! Body files of the forward-modelling command.
#![no_main]
use fieldstone_core::forward::bodies::parse_body_file;
use libfuzzer_sys::fuzz_target;
use std::path::Path;

fuzz_target!(|data: &[u8]| {
    let _ = parse_body_file(data, Path::new("bodies.json"));
});
