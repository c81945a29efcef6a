//! Collar, survey and interval tables, split from one input at 0xFF bytes.
#![no_main]
use fieldstone_core::drillhole::tables::{load_holes, DrillholeSpec};
use fieldstone_core::drillhole::DipConvention;
use fieldstone_core::table::TextOptions;
use libfuzzer_sys::fuzz_target;

fuzz_target!(|data: &[u8]| {
    let mut parts = data.split(|&b| b == 0xFF);
    let dir = std::env::temp_dir().join(format!("fieldstone-fuzz-holes-{}", std::process::id()));
    let _ = std::fs::create_dir_all(&dir);
    let mut put = |name: &str| {
        let p = dir.join(name);
        std::fs::write(&p, parts.next().unwrap_or_default()).ok().map(|_| p)
    };
    let (Some(c), Some(s), Some(i)) = (put("collars.csv"), put("surveys.csv"), put("intervals.csv"))
    else {
        return;
    };
    for dips in [DipConvention::NegativeDown, DipConvention::PositiveDown] {
        let spec = DrillholeSpec {
            collars: c.clone(),
            surveys: Some(s.clone()),
            intervals: Some(i.clone()),
            dip_convention: dips,
            text: TextOptions::default(),
        };
        if let Ok((set, _)) = load_holes(&spec) {
            for h in &set.holes {
                for iv in &h.intervals {
                    assert!(iv.from_m < iv.to_m);
                }
            }
        }
    }
});
