//! An invented relative gravity survey as it comes back from the field, for
//! tests of the import and reduction path: one file a day with the headers
//! `station_id, longitude, latitude, elevation, time_minutes, reading`
//! (elapsed minutes since the day's first reading, readings in the meter's
//! counter units rounded to 0.01), a table of bases (two of known absolute
//! gravity, one unknown) and a calibration table in the makers' layout.
//! The meter's mGal scale reads true gravity plus a day's offset plus a
//! linear drift; no tide (reduce with --no-tide).

use std::collections::BTreeMap;
use std::path::{Path, PathBuf};

/// A calibration table in the makers' layout: a row every 100 counter
/// units from 0 to 7000, the interval factor varying smoothly about 1.02
/// (printed to 1e-5 mGal per unit), the values accumulated from the
/// printed factors and printed to 0.01 mGal.
pub fn maker_style_table() -> String {
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

/// Counter reading of a value on the meter's mGal scale, by the printed
/// table (the inverse of reading the table), rounded to 0.01 unit.
fn counter_of(table: &[(f64, f64, f64)], mgal: f64) -> f64 {
    let i = table.partition_point(|r| r.1 <= mgal).max(1) - 1;
    let (c, v, f) = table[i];
    ((c + (mgal - v) / f) * 100.0).round() / 100.0
}

/// The files written and the truth behind them.
pub struct FieldSurvey {
    pub days: Vec<PathBuf>,
    pub bases: PathBuf,
    pub meter: PathBuf,
    /// Absolute gravity of every station and base, mGal.
    pub truth: BTreeMap<String, f64>,
    /// The station of every reading, in file order then row order.
    pub visits: Vec<String>,
}

/// Writes the survey into `dir`.
pub fn write_field_survey(dir: &Path) -> FieldSurvey {
    std::fs::create_dir_all(dir).unwrap();
    let table_text = maker_style_table();
    let table: Vec<(f64, f64, f64)> = table_text
        .lines()
        .skip(1)
        .map(|l| {
            let v: Vec<f64> = l.split(',').map(|x| x.parse().unwrap()).collect();
            (v[0], v[1], v[2])
        })
        .collect();
    let mut truth = BTreeMap::from([
        ("A".to_string(), 980_412.345),
        ("B".to_string(), 980_390.12),
        ("C".to_string(), 980_401.777),
    ]);
    for k in 0..24 {
        truth.insert(
            format!("{}", 101 + k),
            980_395.0 + 3.0 * (k as f64 * 0.7).sin() + 0.25 * k as f64,
        );
    }
    let days: [(f64, f64, Vec<&str>); 3] = [
        (
            -975_600.0,
            0.028,
            vec![
                "A", "101", "102", "103", "C", "104", "105", "A", "106", "107", "108", "C",
            ],
        ),
        (
            -975_590.0,
            -0.015,
            vec![
                "C", "109", "110", "111", "B", "112", "113", "114", "115", "B", "116", "C",
            ],
        ),
        (
            -975_604.5,
            0.041,
            vec![
                "B", "117", "118", "119", "A", "120", "121", "122", "123", "124", "A",
            ],
        ),
    ];
    let mut files = Vec::new();
    let mut visits = Vec::new();
    for (d, (offset, drift, stations)) in days.iter().enumerate() {
        let mut text =
            String::from("station_id,longitude,latitude,elevation,time_minutes,reading\n");
        for (k, s) in stations.iter().enumerate() {
            let minutes = 25.0 * k as f64 + 0.6 * (k * k % 7) as f64;
            let scale = truth[*s] + offset + drift * minutes / 60.0;
            let (lon, lat) = match s.parse::<usize>() {
                Ok(n) => (
                    -80.52 + 0.002 * (n - 101) as f64,
                    43.11 + 0.001 * (n % 5) as f64,
                ),
                Err(_) => (-80.5, 43.1),
            };
            text.push_str(&format!(
                "{s},{lon:.5},{lat:.5},{:.2},{minutes:.1},{:.2}\n",
                300.0 + 2.0 * (k % 4) as f64,
                counter_of(&table, scale)
            ));
            visits.push(s.to_string());
        }
        let p = dir.join(format!("day{}.csv", d + 1));
        std::fs::write(&p, text).unwrap();
        files.push(p);
    }
    let bases = dir.join("bases.csv");
    std::fs::write(
        &bases,
        "station,gravity_mgal\nA,980412.345\nB,980390.12\nC,\n",
    )
    .unwrap();
    let meter = dir.join("meter.csv");
    std::fs::write(&meter, table_text).unwrap();
    FieldSurvey {
        days: files,
        bases,
        meter,
        truth,
        visits,
    }
}
