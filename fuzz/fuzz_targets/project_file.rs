//! project.json.
#![no_main]
use fieldstone_core::project::file::ProjectFile;
use libfuzzer_sys::fuzz_target;
use std::path::Path;

fuzz_target!(|data: &[u8]| {
    if let Ok(l) = ProjectFile::parse(data, Path::new("project.json")) {
        // What loads can be written and loads again the same.
        let text = serde_json::to_string(&l.project).unwrap();
        let again = ProjectFile::parse(text.as_bytes(), Path::new("project.json")).unwrap();
        assert_eq!(again.project, l.project);
    }
});
