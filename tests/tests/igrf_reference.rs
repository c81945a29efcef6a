//! IGRF-14 synthesis against ppigrf 2.1.0 (a pure-Python IGRF that ships the
//! IAGA IGRF-14 coefficients), fixture `fixtures/igrf_ppigrf.json` made by
//! `fixtures/igrf_ppigrf.py`: 30 points, latitudes −87° to 87°, heights up to
//! 5 km, dates 2025–2029. Requirement: ≤ 1 nT in F and ≤ 0.01° in angles.

use fieldstone_core::geodesy::igrf::{decimal_year_of_date, IgrfModel};

#[test]
fn main_field_matches_the_reference_library() {
    let text = std::fs::read_to_string(concat!(
        env!("CARGO_MANIFEST_DIR"),
        "/fixtures/igrf_ppigrf.json"
    ))
    .unwrap();
    let fx: serde_json::Value = serde_json::from_str(&text).unwrap();
    let rows = fx["rows"].as_array().unwrap();
    assert!(rows.len() >= 20);
    let model = IgrfModel::igrf14();
    let (mut worst_f, mut worst_angle): (f64, f64) = (0.0, 0.0);
    for r in rows {
        let f = |k: &str| r[k].as_f64().unwrap();
        let year = decimal_year_of_date(r["date"].as_str().unwrap()).unwrap();
        let m = model
            .field(f("lat"), f("lon"), f("height_m"), year)
            .unwrap();
        let df = (m.f_nt - f("f_nt")).abs();
        let di = (m.inclination_deg - f("inclination_deg")).abs();
        let mut dd = (m.declination_deg - f("declination_deg")).abs();
        if dd > 180.0 {
            dd = 360.0 - dd;
        }
        worst_f = worst_f.max(df);
        worst_angle = worst_angle.max(di).max(dd);
        assert!(df <= 1.0, "{r}: F {} vs {}", m.f_nt, f("f_nt"));
        assert!(
            di <= 0.01 && dd <= 0.01,
            "{r}: I {} D {}",
            m.inclination_deg,
            m.declination_deg
        );
        for (got, k) in [(m.x_nt, "x_nt"), (m.y_nt, "y_nt"), (m.z_nt, "z_nt")] {
            assert!((got - f(k)).abs() <= 1.0, "{r}: {k} {got}");
        }
    }
    eprintln!("worst |ΔF| = {worst_f:.3} nT, worst angle difference = {worst_angle:.5}°");
}
