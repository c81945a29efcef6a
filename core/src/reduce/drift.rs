//! Meter drift from base-station readings.
//!
//! Readings are taken in time order. Every reading at a base station (of
//! known or adjusted absolute gravity) closes one loop and opens the next;
//! within a loop the drift is taken as linear in time between the two base
//! readings (common practice for modern relative meters), and every reading
//! is tied to the absolute value of the opening base:
//! g_obs = g_b₀ + (r − r_b₀) − rate·(t − t_b₀),
//! with r the (tide-corrected) reading and rate the loop's misclosure after
//! the known difference of its bases, per unit time:
//! rate = ((r_b₁ − r_b₀) − (g_b₁ − g_b₀)) / (t_b₁ − t_b₀).

use serde::{Deserialize, Serialize};
use thiserror::Error;

#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct DriftSettings {
    /// Station id of the base.
    pub base_station: String,
    /// Absolute gravity at the base, mGal.
    pub base_value_mgal: f64,
    /// Loops drifting faster than this are flagged, mGal per hour (common
    /// practice: a few hundredths for modern meters).
    pub max_rate_mgal_per_h: f64,
}

/// One base-to-base loop.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct DriftLoop {
    /// The opening and closing base.
    pub opening: String,
    pub closing: String,
    /// Row of the opening and closing base reading.
    pub start_row: usize,
    pub end_row: usize,
    pub duration_h: f64,
    pub rate_mgal_per_h: f64,
    /// Rate above the threshold.
    pub flagged: bool,
}

#[derive(Debug, Error, PartialEq)]
pub enum DriftError {
    #[error("base station '{0}' is read fewer than twice; drift needs a reading at the start and at the end of every loop")]
    TooFewBases(String),
    #[error("row {row}: time goes backwards ({t_prev} s then {t} s); readings must be in time order within a loop")]
    NotMonotonic { row: usize, t_prev: f64, t: f64 },
    #[error(
        "row {row} lies outside every base loop (before the first or after the last base reading)"
    )]
    Outside { row: usize },
    #[error("row {row}: reading or time is missing")]
    Missing { row: usize },
    #[error("no base station is read; every loop opens and closes at a base of known (or adjusted) value")]
    NoBases,
}

/// The result of a drift reduction.
#[derive(Debug, Clone, PartialEq)]
pub struct DriftReduction {
    /// Observed (absolute) gravity at every row, mGal.
    pub gravity_mgal: Vec<f64>,
    /// Drift correction at every row, mGal, added: −rate·(t − t_b₀).
    pub correction_mgal: Vec<f64>,
    pub loops: Vec<DriftLoop>,
}

/// Observed gravity and the drift correction at every row, and the loops,
/// for readings tied to one base of known value.
pub fn reduce_drift(
    times_s: &[f64],
    stations: &[String],
    readings_mgal: &[f64],
    s: &DriftSettings,
) -> Result<DriftReduction, DriftError> {
    let bases = std::collections::BTreeMap::from([(s.base_station.clone(), s.base_value_mgal)]);
    let n_base = stations.iter().filter(|x| **x == s.base_station).count();
    if n_base < 2 {
        return Err(DriftError::TooFewBases(s.base_station.clone()));
    }
    reduce_loops(
        times_s,
        stations,
        readings_mgal,
        &bases,
        s.max_rate_mgal_per_h,
    )
}

/// Observed gravity and the drift correction at every row of one file (in
/// time order), and its loops: every reading at a station of `bases`
/// (station → absolute gravity, mGal) closes one loop and opens the next.
/// Loops drifting faster than `max_rate_mgal_per_h` are flagged.
pub fn reduce_loops(
    times_s: &[f64],
    stations: &[String],
    readings_mgal: &[f64],
    bases: &std::collections::BTreeMap<String, f64>,
    max_rate_mgal_per_h: f64,
) -> Result<DriftReduction, DriftError> {
    let n = times_s.len();
    for r in 0..n {
        if !times_s[r].is_finite() || !readings_mgal[r].is_finite() {
            return Err(DriftError::Missing { row: r });
        }
        if r > 0 && times_s[r] < times_s[r - 1] {
            return Err(DriftError::NotMonotonic {
                row: r,
                t_prev: times_s[r - 1],
                t: times_s[r],
            });
        }
    }
    let at: Vec<usize> = (0..n)
        .filter(|&r| bases.contains_key(&stations[r]))
        .collect();
    if at.is_empty() {
        return Err(DriftError::NoBases);
    }
    if let Some(row) = (0..at[0])
        .next()
        .or_else(|| (at[at.len() - 1] + 1..n).next())
    {
        return Err(DriftError::Outside { row });
    }
    let mut g = vec![0.0; n];
    let mut corr = vec![0.0; n];
    let mut loops = Vec::new();
    if at.len() == 1 {
        // A single reading, at the base itself.
        g[at[0]] = bases[&stations[at[0]]];
    }
    for w in at.windows(2) {
        let (b0, b1) = (w[0], w[1]);
        let (g0, g1) = (bases[&stations[b0]], bases[&stations[b1]]);
        let dt_h = (times_s[b1] - times_s[b0]) / 3600.0;
        let misclosure = (readings_mgal[b1] - readings_mgal[b0]) - (g1 - g0);
        let rate = if dt_h > 0.0 { misclosure / dt_h } else { 0.0 };
        for r in b0..=b1 {
            let c = -rate * (times_s[r] - times_s[b0]) / 3600.0;
            corr[r] = c;
            g[r] = g0 + (readings_mgal[r] - readings_mgal[b0]) + c;
        }
        loops.push(DriftLoop {
            opening: stations[b0].clone(),
            closing: stations[b1].clone(),
            start_row: b0,
            end_row: b1,
            duration_h: dt_h,
            rate_mgal_per_h: rate,
            flagged: rate.abs() > max_rate_mgal_per_h,
        });
    }
    Ok(DriftReduction {
        gravity_mgal: g,
        correction_mgal: corr,
        loops,
    })
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn a_known_linear_drift_is_recovered_exactly() {
        // Two loops with drifts of +0.02 and −0.01 mGal/h; true gravity at the
        // stations is known; the base is at 979 123.456 mGal.
        let base = 979_123.456;
        let truth = [
            ("B", 0.0),
            ("S1", 1.5),
            ("S2", -2.25),
            ("B", 0.0),
            ("S3", 0.75),
            ("B", 0.0),
        ];
        let times = [0.0, 1800.0, 3600.0, 7200.0, 9000.0, 14_400.0];
        let drift_at = |t: f64| {
            if t <= 7200.0 {
                0.02 * t / 3600.0
            } else {
                0.04 - 0.01 * (t - 7200.0) / 3600.0
            }
        };
        let readings: Vec<f64> = truth
            .iter()
            .zip(times)
            .map(|((_, g), t)| 3000.0 + g + drift_at(t))
            .collect();
        let ids: Vec<String> = truth.iter().map(|(s, _)| s.to_string()).collect();
        let s = DriftSettings {
            base_station: "B".into(),
            base_value_mgal: base,
            max_rate_mgal_per_h: 0.015,
        };
        let DriftReduction {
            gravity_mgal: g,
            loops,
            ..
        } = reduce_drift(&times, &ids, &readings, &s).unwrap();
        for (k, (_, want)) in truth.iter().enumerate() {
            assert!(
                (g[k] - (base + want)).abs() < 1e-9,
                "row {k}: {}",
                g[k] - base
            );
        }
        assert_eq!(loops.len(), 2);
        assert!((loops[0].rate_mgal_per_h - 0.02).abs() < 1e-12 && loops[0].flagged);
        assert!((loops[1].rate_mgal_per_h + 0.01).abs() < 1e-12 && !loops[1].flagged);
    }

    #[test]
    fn bad_sequences_are_refused() {
        let s = DriftSettings {
            base_station: "B".into(),
            base_value_mgal: 0.0,
            max_rate_mgal_per_h: 0.05,
        };
        let ids = |v: &[&str]| v.iter().map(|s| s.to_string()).collect::<Vec<_>>();
        assert!(matches!(
            reduce_drift(&[0.0, 10.0], &ids(&["B", "S"]), &[1.0, 2.0], &s),
            Err(DriftError::TooFewBases(_))
        ));
        assert!(matches!(
            reduce_drift(
                &[0.0, 10.0, 5.0],
                &ids(&["B", "S", "B"]),
                &[1.0, 2.0, 1.0],
                &s
            ),
            Err(DriftError::NotMonotonic { row: 2, .. })
        ));
        assert!(matches!(
            reduce_drift(
                &[0.0, 10.0, 20.0],
                &ids(&["S", "B", "B"]),
                &[1.0, 2.0, 1.0],
                &s
            ),
            Err(DriftError::Outside { row: 0 })
        ));
    }

    #[test]
    fn a_loop_between_two_known_bases_takes_the_misclosure_after_their_difference() {
        // Base A at 979 800.000, base B at 979 795.500 mGal; drift +0.03 mGal/h;
        // the meter reads g − 977 000 + drift.
        let bases = std::collections::BTreeMap::from([
            ("A".to_string(), 979_800.0),
            ("B".to_string(), 979_795.5),
        ]);
        let truth = [
            ("A", 979_800.0),
            ("S1", 979_801.25),
            ("S2", 979_797.0),
            ("B", 979_795.5),
        ];
        let times = [0.0, 2400.0, 4800.0, 10_800.0];
        let readings: Vec<f64> = truth
            .iter()
            .zip(times)
            .map(|((_, g), t)| g - 977_000.0 + 0.03 * t / 3600.0)
            .collect();
        let ids: Vec<String> = truth.iter().map(|(s, _)| s.to_string()).collect();
        let r = reduce_loops(&times, &ids, &readings, &bases, 0.05).unwrap();
        for (k, (_, want)) in truth.iter().enumerate() {
            assert!((r.gravity_mgal[k] - want).abs() < 1e-9, "row {k}");
        }
        assert_eq!(r.loops.len(), 1);
        assert_eq!(
            (r.loops[0].opening.as_str(), r.loops[0].closing.as_str()),
            ("A", "B")
        );
        assert!((r.loops[0].rate_mgal_per_h - 0.03).abs() < 1e-9);
        // A reading after the last base is outside every loop.
        let mut ids2 = ids.clone();
        ids2[3] = "S3".into();
        assert!(matches!(
            reduce_loops(&times, &ids2, &readings, &bases, 0.05),
            Err(DriftError::Outside { row: 1 })
        ));
    }
}
