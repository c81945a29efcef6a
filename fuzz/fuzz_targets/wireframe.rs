//! OBJ and STL wireframes.
#![no_main]
use fieldstone_core::constraint::wireframe::Wireframe;
use libfuzzer_sys::fuzz_target;
use std::path::Path;

fuzz_target!(|data: &[u8]| {
    let check = |w: Wireframe| {
        for t in &w.triangles {
            for &v in t {
                assert!((v as usize) < w.vertices.len());
            }
        }
    };
    if let Ok(w) = Wireframe::parse_stl(data, Path::new("fuzz.stl")) {
        check(w);
    }
    let text = String::from_utf8_lossy(data);
    if let Ok(w) = Wireframe::parse_obj(&text, Path::new("fuzz.obj")) {
        check(w);
    }
});
