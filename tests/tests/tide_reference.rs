//! Longman (1959) earth tide against an independent computation: Moon and Sun
//! positions from PyEphem 4.2.1 and the degree-2/3 tidal potential
//! (fixture `fixtures/tide_ephem.json`, script `fixtures/tide_ephem.py`),
//! both with gravimetric factor 1.16. Requirement: within 0.005 mGal.

use fieldstone_core::reduce::tide::tide_effect_mgal;

#[test]
fn longman_matches_an_ephemeris_based_tide() {
    let text = std::fs::read_to_string(concat!(
        env!("CARGO_MANIFEST_DIR"),
        "/fixtures/tide_ephem.json"
    ))
    .unwrap();
    let fx: serde_json::Value = serde_json::from_str(&text).unwrap();
    let rows = fx["rows"].as_array().unwrap();
    assert!(rows.len() >= 30);
    let mut worst: f64 = 0.0;
    for r in rows {
        let f = |k: &str| r[k].as_f64().unwrap();
        let got = tide_effect_mgal(f("t_s"), f("lat"), f("lon"), f("height_m"), 1.16);
        let d = (got - f("tide_mgal")).abs();
        worst = worst.max(d);
        assert!(d <= 0.005, "{}: {got} vs {}", r["iso"], f("tide_mgal"));
    }
    eprintln!("worst tide difference {worst:.5} mGal");
}
