//! Line-data import with guessed roles and units, as the import form does.
#![no_main]
use fieldstone_core::survey::import::{import_survey, ImportSpec};
use fieldstone_core::table::TextOptions;
use libfuzzer_sys::fuzz_target;

fuzz_target!(|data: &[u8]| {
    let path = std::env::temp_dir().join(format!("fieldstone-fuzz-survey-{}.csv", std::process::id()));
    if std::fs::write(&path, data).is_err() {
        return;
    }
    for epsg in [None, Some(32617), Some(4326)] {
        if let Ok(spec) = ImportSpec::guess_for_file(&path, &TextOptions::default(), epsg) {
            if let Ok(s) = import_survey(&path, &spec) {
                assert_eq!(s.x.len(), s.y.len());
                assert_eq!(s.x.len(), s.file_lines.len());
            }
        }
    }
});
