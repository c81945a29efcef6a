//! Relative gravity as it is surveyed: meter calibration tables, the
//! least-squares adjustment of a base network, and loops tied to adjusted
//! bases.
//!
//! * The adjustment against numpy's `linalg.lstsq` on the same weighted
//!   observation equations (fixture `fixtures/gravity_network_lstsq.json`,
//!   script `fixtures/gravity_network_lstsq.py`, numpy version in the file).
//! * A synthetic survey built from known absolute values through the inverse
//!   of a calibration table in the makers' layout, a linear drift per day
//!   and rounding to 0.01 counter units, which must come back to within
//!   0.01 mGal RMS (the rounding alone is worth about 0.003 mGal).

use fieldstone_core::reduce::drift::reduce_loops;
use fieldstone_core::reduce::meter::MeterTable;
use fieldstone_core::reduce::network::{adjust_network, BaseObservation};
use std::collections::BTreeMap;
use std::path::Path;

#[test]
fn the_adjustment_matches_numpy_lstsq() {
    let text = std::fs::read_to_string(concat!(
        env!("CARGO_MANIFEST_DIR"),
        "/fixtures/gravity_network_lstsq.json"
    ))
    .unwrap();
    let fx: serde_json::Value = serde_json::from_str(&text).unwrap();
    let known: BTreeMap<String, f64> = fx["known"]
        .as_object()
        .unwrap()
        .iter()
        .map(|(k, v)| (k.clone(), v.as_f64().unwrap()))
        .collect();
    let obs: Vec<BaseObservation> = fx["observations"]
        .as_array()
        .unwrap()
        .iter()
        .map(|o| BaseObservation {
            file: o["file"].as_u64().unwrap() as usize,
            time_s: o["time_s"].as_f64().unwrap(),
            station: o["station"].as_str().unwrap().to_string(),
            reading_mgal: o["reading_mgal"].as_f64().unwrap(),
            sd_mgal: o["sd_mgal"].as_f64().unwrap(),
        })
        .collect();
    let a = adjust_network(&obs, &known).unwrap();
    assert_eq!(a.redundancy as u64, fx["redundancy"].as_u64().unwrap());
    let s0 = a.sigma0.unwrap();
    assert!((s0 - fx["sigma0"].as_f64().unwrap()).abs() < 1e-6, "{s0}");
    for b in &a.bases {
        if b.known {
            assert_eq!(b.value_mgal, known[&b.station]);
            continue;
        }
        let want = fx["adjusted"][&b.station].as_f64().unwrap();
        let sd = fx["sd"][&b.station].as_f64().unwrap();
        assert!(
            (b.value_mgal - want).abs() < 1e-6,
            "{}: {} vs numpy {want}",
            b.station,
            b.value_mgal
        );
        assert!((b.sd_mgal.unwrap() - sd).abs() < 1e-8, "{}", b.station);
        // And within a few standard errors of the value the readings were
        // made from.
        let truth = fx["true_unknown"][&b.station].as_f64().unwrap();
        assert!((b.value_mgal - truth).abs() < 4.0 * sd.max(0.003));
        eprintln!(
            "base {}: {:.4} ± {:.4} mGal (numpy {want:.4}), rms residual {:.4}",
            b.station,
            b.value_mgal,
            b.sd_mgal.unwrap(),
            b.rms_residual_mgal
        );
    }
    for (got, want) in a
        .residuals_mgal
        .iter()
        .zip(fx["residuals"].as_array().unwrap())
    {
        assert!((got - want.as_f64().unwrap()).abs() < 1e-6);
    }
    for d in &a.drift {
        let want = fx["drift_mgal_per_h"][d.file.to_string()].as_f64().unwrap();
        assert!((d.rate_mgal_per_h - want).abs() < 1e-6);
    }
}

/// A calibration table in the makers' layout: a row every 100 counter
/// units from 0 to 7000, the interval factor varying smoothly about 1.02
/// (printed to 1e-5 mGal per unit), the values accumulated from the
/// unrounded factors and printed to 0.01 mGal. Invented.
fn maker_style_table() -> String {
    let mut text = String::from("Counter reading,Value in milligals,Factor for interval\n");
    let mut value = 0.0;
    for i in 0..=70 {
        let factor = 1.02 + 0.004 * (i as f64 / 9.0).sin();
        let printed = (factor * 1e5).round() / 1e5;
        text.push_str(&format!("{},{:.2},{:.5}\n", i * 100, value, printed));
        value += 100.0 * printed;
    }
    text
}

#[test]
fn a_synthetic_network_comes_back_within_a_hundredth_of_a_milligal() {
    let table = MeterTable::parse(&maker_style_table(), Path::new("meter.csv")).unwrap();
    let known = BTreeMap::from([
        ("A".to_string(), 979_812.345),
        ("B".to_string(), 979_790.12),
    ]);
    let mut truth: BTreeMap<String, f64> = known.clone();
    truth.insert("C".into(), 979_801.777);
    for k in 0..24 {
        truth.insert(
            format!("S{k:02}"),
            979_795.0 + 3.0 * (k as f64 * 0.7).sin() + 0.25 * k as f64,
        );
    }
    // Three days: (offset of the meter's mGal scale, drift mGal/h, visits).
    let days: [(f64, f64, Vec<&str>); 3] = [
        (
            -975_000.0,
            0.028,
            vec![
                "A", "S00", "S01", "S02", "C", "S03", "S04", "A", "S05", "S06", "S07", "C",
            ],
        ),
        (
            -974_990.0,
            -0.015,
            vec![
                "C", "S08", "S09", "S10", "B", "S11", "S12", "S13", "S14", "B", "S15", "C",
            ],
        ),
        (
            -975_004.5,
            0.041,
            vec![
                "B", "S16", "S17", "S18", "A", "S19", "S20", "S21", "S22", "S23", "A",
            ],
        ),
    ];
    let mut base_obs = Vec::new();
    let mut files = Vec::new();
    for (f, (offset, drift, visits)) in days.iter().enumerate() {
        let mut times = Vec::new();
        let mut ids = Vec::new();
        let mut mgal = Vec::new();
        for (k, s) in visits.iter().enumerate() {
            let t = 7.0 * 3600.0 + 1500.0 * k as f64 + 37.0 * (k * k % 7) as f64;
            let scale_value = truth[*s] + offset + drift * (t - 7.0 * 3600.0) / 3600.0;
            // The meter shows the counter, rounded to 0.01 unit.
            let counter = (table.to_counter(scale_value).unwrap() * 100.0).round() / 100.0;
            let reading = table.to_mgal(counter).unwrap();
            times.push(t);
            ids.push(s.to_string());
            mgal.push(reading);
            if !s.starts_with('S') {
                base_obs.push(BaseObservation {
                    file: f,
                    time_s: t,
                    station: s.to_string(),
                    reading_mgal: reading,
                    sd_mgal: 0.01,
                });
            }
        }
        files.push((times, ids, mgal));
    }
    let adj = adjust_network(&base_obs, &known).unwrap();
    let c = adj.bases.iter().find(|b| b.station == "C").unwrap();
    assert!(
        !c.known && (c.value_mgal - truth["C"]).abs() < 0.005,
        "C {}",
        c.value_mgal
    );
    let values = adj.values();
    let mut sq = 0.0;
    let mut n = 0;
    for (times, ids, mgal) in &files {
        let r = reduce_loops(times, ids, mgal, &values, 0.05).unwrap();
        for (k, id) in ids.iter().enumerate() {
            let d = r.gravity_mgal[k] - truth[id];
            assert!(d.abs() < 0.02, "{id}: {d}");
            sq += d * d;
            n += 1;
        }
    }
    let rms = (sq / n as f64).sqrt();
    eprintln!("synthetic network: {n} readings, RMS {rms:.4} mGal");
    assert!(rms < 0.01, "RMS {rms}");
}

#[test]
fn untied_bases_and_single_readings_are_refused() {
    use fieldstone_core::reduce::network::NetworkError;
    let known = BTreeMap::from([("A".to_string(), 979_800.0)]);
    let o = |file, t: f64, s: &str| BaseObservation {
        file,
        time_s: t,
        station: s.into(),
        reading_mgal: 2000.0,
        sd_mgal: 0.01,
    };
    // Day 1 ties A; day 2 reads only C and D, which nothing ties to A.
    let e = adjust_network(
        &[
            o(0, 0.0, "A"),
            o(0, 3600.0, "A"),
            o(1, 0.0, "C"),
            o(1, 3600.0, "D"),
        ],
        &known,
    )
    .unwrap_err();
    assert!(matches!(e, NetworkError::NotTied { .. }), "{e}");
    assert!(e.to_string().contains("C, D") && e.to_string().contains("files 1"));
    let e = adjust_network(&[o(0, 0.0, "A"), o(0, 0.0, "C")], &known).unwrap_err();
    assert_eq!(e, NetworkError::OneTime { file: 0 });
    let e = adjust_network(&[o(0, 0.0, "C"), o(0, 60.0, "C")], &known).unwrap_err();
    assert_eq!(e, NetworkError::NoKnownBase);
}
