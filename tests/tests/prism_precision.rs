//! The prism kernels keep their digits from 1.5 to 10⁵ prism sizes away.
//! Reference: the same closed forms evaluated in 60-digit arithmetic with
//! mpmath 1.3.0 (fixture `fixtures/prism_high_precision.json`, made by
//! `fixtures/prism_high_precision.py`). This checks the f64 code's handling of
//! cancellation and its switch to cubature in the far field.

use fieldstone_core::physics::gravity::prism_gz_mgal;
use fieldstone_core::physics::magnetic::prism_shape_tensor;
use fieldstone_core::physics::Prism;
use fieldstone_core::units::GRAVITY_KERNEL_TO_MGAL_PER_GCC;

fn num(v: &serde_json::Value) -> f64 {
    v.as_str().expect("string number").parse().expect("parse")
}

#[test]
fn kernels_agree_with_60_digit_reference_at_all_distances() {
    let text = std::fs::read_to_string(concat!(
        env!("CARGO_MANIFEST_DIR"),
        "/fixtures/prism_high_precision.json"
    ))
    .unwrap();
    let fx: serde_json::Value = serde_json::from_str(&text).unwrap();
    let b = |k: &str| {
        let a = fx["prism"][k].as_array().unwrap();
        [a[0].as_f64().unwrap(), a[1].as_f64().unwrap()]
    };
    let p = Prism::new(b("x"), b("y"), b("z")).unwrap();
    let rows = fx["rows"].as_array().unwrap();
    assert!(rows.len() >= 30);
    for row in rows {
        let st: Vec<f64> = row["station"]
            .as_array()
            .unwrap()
            .iter()
            .map(|v| v.as_f64().unwrap())
            .collect();
        let st = [st[0], st[1], st[2]];
        let ratio = row["ratio"].as_f64().unwrap();
        let gz = prism_gz_mgal(&p, st, 1.0) / GRAVITY_KERNEL_TO_MGAL_PER_GCC;
        let want = num(&row["gz_kernel_m"]);
        assert!(
            ((gz - want) / want).abs() < 1e-9,
            "ratio {ratio}: g_z kernel {gz} vs {want}"
        );
        let t = prism_shape_tensor(&p, st).unwrap();
        let (tzz, txy) = (num(&row["t_zz"]), num(&row["t_xy"]));
        let scale = tzz.abs().max(txy.abs());
        assert!(
            (t.0[2] - tzz).abs() < 1e-9 * scale,
            "ratio {ratio}: T_zz {} vs {tzz}",
            t.0[2]
        );
        assert!(
            (t.0[3] - txy).abs() < 1e-9 * scale,
            "ratio {ratio}: T_xy {} vs {txy}",
            t.0[3]
        );
    }
}
