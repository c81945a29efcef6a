//! Relative gravity as it is surveyed: meter calibration tables, the
//! least-squares adjustment of a base network, and loops tied to adjusted
//! bases.
//!
//! * The adjustment against numpy's `linalg.lstsq` on the same weighted
//!   observation equations (fixture `fixtures/gravity_network_lstsq.json`,
//!   script `fixtures/gravity_network_lstsq.py`, numpy version in the file).
//! * A synthetic survey (`fieldstone_tests::field_survey`) built from known
//!   absolute values through the inverse of a calibration table in the
//!   makers' layout, a linear drift per day and rounding to 0.01 counter
//!   units, which must come back to within 0.01 mGal RMS (the rounding
//!   alone is worth about 0.003 mGal).

use fieldstone_core::reduce::drift::reduce_loops;
use fieldstone_core::reduce::meter::MeterTable;
use fieldstone_core::reduce::network::{adjust_network, BaseObservation};
use fieldstone_tests::field_survey::write_field_survey;
use std::collections::BTreeMap;

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

#[test]
fn a_synthetic_network_comes_back_within_a_hundredth_of_a_milligal() {
    // The invented field survey (three days, counter readings rounded to
    // 0.01 unit, linear drift a day, one base of unknown value), read back
    // here with plain string splitting so only core's reduction is tested.
    let dir = std::env::temp_dir().join(format!("fieldstone-network-{}", std::process::id()));
    let survey = write_field_survey(&dir);
    let table = MeterTable::read(&survey.meter).unwrap();
    let known = BTreeMap::from([
        ("A".to_string(), survey.truth["A"]),
        ("B".to_string(), survey.truth["B"]),
    ]);
    let mut base_obs = Vec::new();
    let mut files = Vec::new();
    for (f, path) in survey.days.iter().enumerate() {
        let text = std::fs::read_to_string(path).unwrap();
        let (mut times, mut ids, mut mgal) = (Vec::new(), Vec::new(), Vec::new());
        for line in text.lines().skip(1) {
            let v: Vec<&str> = line.split(',').collect();
            let t = v[4].parse::<f64>().unwrap() * 60.0;
            let reading = table.to_mgal(v[5].parse().unwrap()).unwrap();
            if !v[0].starts_with('1') {
                base_obs.push(BaseObservation {
                    file: f,
                    time_s: t,
                    station: v[0].to_string(),
                    reading_mgal: reading,
                    sd_mgal: 0.01,
                });
            }
            times.push(t);
            ids.push(v[0].to_string());
            mgal.push(reading);
        }
        files.push((times, ids, mgal));
    }
    let adj = adjust_network(&base_obs, &known).unwrap();
    let c = adj.bases.iter().find(|b| b.station == "C").unwrap();
    assert!(
        !c.known && (c.value_mgal - survey.truth["C"]).abs() < 0.005,
        "C {}",
        c.value_mgal
    );
    let values = adj.values();
    let mut sq = 0.0;
    let mut n = 0;
    for (times, ids, mgal) in &files {
        let r = reduce_loops(times, ids, mgal, &values, 0.05).unwrap();
        for (k, id) in ids.iter().enumerate() {
            let d = r.gravity_mgal[k] - survey.truth[id];
            assert!(d.abs() < 0.02, "{id}: {d}");
            sq += d * d;
            n += 1;
        }
    }
    let rms = (sq / n as f64).sqrt();
    eprintln!("synthetic network: {n} readings, RMS {rms:.4} mGal");
    assert!(rms < 0.01, "RMS {rms}");
    let _ = std::fs::remove_dir_all(dir);
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
