//! Transverse Mercator / UTM against PROJ: fixture made by
//! `fixtures/projections_pyproj.py` with pyproj 3.7.2 / PROJ 9.5.1
//! (versions recorded in the fixture). Requirement: < 1 mm both ways.

use fieldstone_core::geodesy::crs::Crs;

#[test]
fn utm_and_mga_match_proj_to_a_millimetre() {
    let text = std::fs::read_to_string(concat!(
        env!("CARGO_MANIFEST_DIR"),
        "/fixtures/projections_pyproj.json"
    ))
    .unwrap();
    let fx: serde_json::Value = serde_json::from_str(&text).unwrap();
    let rows = fx["rows"].as_array().unwrap();
    assert!(rows.len() >= 100);
    let mut worst: f64 = 0.0;
    for r in rows {
        let f = |k: &str| r[k].as_f64().unwrap();
        let crs = Crs::from_epsg(r["epsg"].as_u64().unwrap() as u32).unwrap();
        let (x, y) = crs.project(f("lat"), f("lon")).unwrap();
        let d = (x - f("x")).hypot(y - f("y"));
        worst = worst.max(d);
        assert!(
            d < 1e-3,
            "EPSG:{} {} {}: off by {d} m",
            r["epsg"],
            f("lat"),
            f("lon")
        );
        // Inverse: back to latitude/longitude, compared as ground distance.
        let (lat, lon) = crs.unproject(f("x"), f("y")).unwrap();
        let dn = (lat - f("lat")).to_radians() * 6.37e6;
        let dlon = (lon - f("lon") + 540.0).rem_euclid(360.0) - 180.0;
        let de = dlon.to_radians() * 6.37e6 * f("lat").to_radians().cos();
        assert!(
            dn.hypot(de) < 1e-3,
            "inverse EPSG:{}: {lat} {lon}",
            r["epsg"]
        );
    }
    eprintln!("worst forward difference from PROJ: {worst:.2e} m");
    assert!(worst < 1e-3, "worst {worst} m");
}
