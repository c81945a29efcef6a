//! Quality control of line data, never destructive: statistics, spike
//! detection, repeat-station differences and spacing. Problems are recorded
//! as flags beside the readings; the readings themselves are never changed.

use super::columns::Role;
use super::import::Survey;
use super::lines::{median, SurveyLine};
use serde::{Deserialize, Serialize};
use std::collections::BTreeMap;

/// Flag bits for one reading.
pub mod flag {
    /// The value was a dummy or empty in the file.
    pub const DUMMY: u8 = 1;
    /// Flagged by the spike detector.
    pub const SPIKE: u8 = 2;
    /// Rejected by the user.
    pub const REJECTED: u8 = 4;
    /// The row has no position.
    pub const NO_POSITION: u8 = 8;
}

/// A user's decision on one reading, saved in the project and replayed.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct ManualEdit {
    pub channel: String,
    pub row: u32,
    /// true: reject; false: restore (undo a rejection or a spike flag).
    pub reject: bool,
}

/// Flags of one channel, one byte per row.
#[derive(Debug, Clone, PartialEq)]
pub struct ChannelFlags {
    pub channel: String,
    pub bits: Vec<u8>,
}

impl ChannelFlags {
    /// Flags from the data alone: dummies and rows without a position.
    pub fn from_survey(s: &Survey, channel: &str) -> Option<ChannelFlags> {
        let c = s.channels.iter().find(|c| c.name == channel)?;
        let bits = c
            .values
            .iter()
            .zip(s.x.iter().zip(&s.y))
            .map(|(v, (x, y))| {
                let mut b = 0;
                if !v.is_finite() {
                    b |= flag::DUMMY;
                }
                if !x.is_finite() || !y.is_finite() {
                    b |= flag::NO_POSITION;
                }
                b
            })
            .collect();
        Some(ChannelFlags {
            channel: channel.to_string(),
            bits,
        })
    }

    /// Applies manual edits in order. Restoring clears a spike flag or a
    /// rejection; a dummy cannot be restored (there is no value).
    pub fn apply(&mut self, edits: &[ManualEdit]) {
        for e in edits.iter().filter(|e| e.channel == self.channel) {
            if let Some(b) = self.bits.get_mut(e.row as usize) {
                if e.reject {
                    *b |= flag::REJECTED;
                } else {
                    *b &= !(flag::REJECTED | flag::SPIKE);
                }
            }
        }
    }

    /// True when the reading can be used.
    pub fn usable(&self, row: usize) -> bool {
        self.bits.get(row).is_some_and(|b| *b == 0)
    }

    pub fn count(&self, bit: u8) -> usize {
        self.bits.iter().filter(|b| **b & bit != 0).count()
    }
}

/// Spike detector settings: a reading is a spike when the fourth difference
/// centred on it exceeds `threshold` robust standard deviations of all fourth
/// differences on its line and is the largest among its neighbours
/// (common practice for line data; the fourth difference removes trends up
/// to cubic, and its robust scale is 1.4826 × the median absolute deviation).
#[derive(Debug, Clone, Copy, PartialEq, Serialize, Deserialize)]
pub struct SpikeRule {
    pub threshold: f64,
}

impl Default for SpikeRule {
    fn default() -> Self {
        SpikeRule { threshold: 6.0 }
    }
}

/// Flags spikes of `values` along each line (sets [`flag::SPIKE`]); returns
/// the number flagged. Readings already unusable are skipped.
pub fn detect_spikes(
    values: &[f64],
    lines: &[SurveyLine],
    flags: &mut ChannelFlags,
    rule: SpikeRule,
) -> usize {
    let mut found = 0;
    for line in lines {
        let rows: Vec<usize> = line
            .rows
            .iter()
            .map(|&r| r as usize)
            .filter(|&r| flags.bits[r] == 0 && values[r].is_finite())
            .collect();
        if rows.len() < 7 {
            continue;
        }
        let v: Vec<f64> = rows.iter().map(|&r| values[r]).collect();
        let d4: Vec<f64> = (2..v.len() - 2)
            .map(|i| v[i - 2] - 4.0 * v[i - 1] + 6.0 * v[i] - 4.0 * v[i + 1] + v[i + 2])
            .collect();
        let mut abs: Vec<f64> = d4.iter().map(|d| d.abs()).collect();
        let med = median(&mut d4.clone()).unwrap_or(0.0);
        let mut dev: Vec<f64> = d4.iter().map(|d| (d - med).abs()).collect();
        let mad = median(&mut dev).unwrap_or(0.0);
        let scale = (1.4826 * mad).max(1e-12 * median(&mut abs).unwrap_or(0.0).max(1e-300));
        for k in 0..d4.len() {
            let a = (d4[k] - med).abs();
            let left = if k > 0 { (d4[k - 1] - med).abs() } else { 0.0 };
            let right = if k + 1 < d4.len() {
                (d4[k + 1] - med).abs()
            } else {
                0.0
            };
            if a > rule.threshold * scale && a >= left && a >= right {
                flags.bits[rows[k + 2]] |= flag::SPIKE;
                found += 1;
            }
        }
    }
    found
}

/// Rows of a line that have a position, in line order.
fn positioned_rows(l: &SurveyLine, x: &[f64], y: &[f64]) -> Vec<usize> {
    l.rows
        .iter()
        .map(|&r| r as usize)
        .filter(|&r| x[r].is_finite() && y[r].is_finite())
        .collect()
}

/// Statistics of one channel on one line.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct LineStats {
    pub line: String,
    pub n_rows: usize,
    pub n_usable: usize,
    pub min: f64,
    pub mean: f64,
    pub max: f64,
    pub std: f64,
    /// Length along the line, metres.
    pub length_m: f64,
    /// Median distance between consecutive readings, metres.
    pub median_spacing_m: f64,
}

/// Statistics per line of `values`, over usable readings.
pub fn line_stats(s: &Survey, values: &[f64], flags: &ChannelFlags) -> Vec<LineStats> {
    s.lines
        .iter()
        .map(|l| {
            let use_rows: Vec<usize> = l
                .rows
                .iter()
                .map(|&r| r as usize)
                .filter(|&r| flags.usable(r))
                .collect();
            let vals: Vec<f64> = use_rows.iter().map(|&r| values[r]).collect();
            let n = vals.len();
            let mean = if n > 0 {
                vals.iter().sum::<f64>() / n as f64
            } else {
                f64::NAN
            };
            let var = if n > 1 {
                vals.iter().map(|v| (v - mean).powi(2)).sum::<f64>() / (n - 1) as f64
            } else {
                f64::NAN
            };
            let pos = positioned_rows(l, &s.x, &s.y);
            let mut steps: Vec<f64> = pos
                .windows(2)
                .map(|w| (s.x[w[1]] - s.x[w[0]]).hypot(s.y[w[1]] - s.y[w[0]]))
                .collect();
            LineStats {
                line: l.name.clone(),
                n_rows: l.rows.len(),
                n_usable: n,
                min: vals.iter().copied().fold(f64::INFINITY, f64::min),
                mean,
                max: vals.iter().copied().fold(f64::NEG_INFINITY, f64::max),
                std: var.sqrt(),
                length_m: steps.iter().sum(),
                median_spacing_m: median(&mut steps).unwrap_or(f64::NAN),
            }
        })
        .collect()
}

/// Differences between repeated readings at the same station.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct RepeatStation {
    pub station: String,
    pub occupations: usize,
    /// Largest minus smallest reading.
    pub range: f64,
    /// Sample standard deviation of the readings.
    pub std: f64,
}

/// Stations occupied more than once (by station id), with the spread of
/// `values` among their usable readings.
pub fn repeat_stations(s: &Survey, values: &[f64], flags: &ChannelFlags) -> Vec<RepeatStation> {
    let Some(ids) = &s.station else {
        return Vec::new();
    };
    let mut groups: BTreeMap<String, Vec<f64>> = BTreeMap::new();
    for (r, &v) in values.iter().enumerate().take(ids.len()) {
        let id = ids.text_at(r);
        if !id.is_empty() && flags.usable(r) {
            groups.entry(id.into_owned()).or_default().push(v);
        }
    }
    groups
        .into_iter()
        .filter(|(_, v)| v.len() > 1)
        .map(|(id, v)| {
            let n = v.len() as f64;
            let mean = v.iter().sum::<f64>() / n;
            let std = (v.iter().map(|a| (a - mean).powi(2)).sum::<f64>() / (n - 1.0)).sqrt();
            let range = v.iter().copied().fold(f64::NEG_INFINITY, f64::max)
                - v.iter().copied().fold(f64::INFINITY, f64::min);
            RepeatStation {
                station: id.to_string(),
                occupations: v.len(),
                range,
                std,
            }
        })
        .collect()
}

/// Station and line spacing of a survey.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct Spacing {
    /// Median distance between consecutive readings on a line, metres.
    pub along_line_m: f64,
    /// Median distance between adjacent lines, measured across the mean line
    /// direction, metres (NaN with fewer than two lines).
    pub line_spacing_m: f64,
    /// Mean line direction, degrees clockwise from grid north (0–180).
    pub line_direction_deg: f64,
}

/// Spacing summary from line geometry.
pub fn spacing(s: &Survey) -> Spacing {
    spacing_of(&s.x, &s.y, &s.lines)
}

/// Spacing summary of points grouped into lines.
pub fn spacing_of(x: &[f64], y: &[f64], lines: &[SurveyLine]) -> Spacing {
    let mut steps = Vec::new();
    let mut dirs = (0.0, 0.0);
    let mut centroids = Vec::new();
    for l in lines {
        let pos = positioned_rows(l, x, y);
        if pos.len() < 2 {
            continue;
        }
        steps.extend(
            pos.windows(2)
                .map(|w| (x[w[1]] - x[w[0]]).hypot(y[w[1]] - y[w[0]])),
        );
        let (a, b) = (pos[0], pos[pos.len() - 1]);
        let (dx, dy) = (x[b] - x[a], y[b] - y[a]);
        // Double the angle so that opposite flight directions add up.
        let th = dy.atan2(dx);
        let len = dx.hypot(dy);
        dirs.0 += len * (2.0 * th).cos();
        dirs.1 += len * (2.0 * th).sin();
        let n = pos.len() as f64;
        centroids.push((
            pos.iter().map(|&r| x[r]).sum::<f64>() / n,
            pos.iter().map(|&r| y[r]).sum::<f64>() / n,
        ));
    }
    let th = 0.5 * dirs.1.atan2(dirs.0);
    let (ux, uy) = (th.cos(), th.sin());
    let mut offsets: Vec<f64> = centroids
        .iter()
        .map(|(cx, cy)| -cx * uy + cy * ux)
        .collect();
    offsets.sort_by(|a, b| a.total_cmp(b));
    let mut gaps: Vec<f64> = offsets
        .windows(2)
        .map(|w| w[1] - w[0])
        .filter(|g| *g > 0.0)
        .collect();
    let az = (90.0 - th.to_degrees()).rem_euclid(180.0);
    Spacing {
        along_line_m: median(&mut steps).unwrap_or(f64::NAN),
        line_spacing_m: median(&mut gaps).unwrap_or(f64::NAN),
        line_direction_deg: az,
    }
}

/// Compares station elevations with a terrain model. Returns a warning when
/// their median ratio is close to 3.28 (elevations in feet read as metres) or
/// to 0.3048 (the reverse), or when they differ by more than `tolerance_m`
/// in the median. Stations outside the DEM are skipped.
pub fn elevation_vs_dem(s: &Survey, dem: &crate::grid::Grid2, tolerance_m: f64) -> Option<String> {
    let z = s.elevation_m.as_ref()?;
    let mut ratios = Vec::new();
    let mut diffs = Vec::new();
    for ((&zk, &xk), &yk) in z.iter().zip(&s.x).zip(&s.y) {
        if let Ok(h) = dem.sample(xk, yk) {
            if zk.is_finite() {
                diffs.push(zk - h);
                if h.abs() > 1.0 {
                    ratios.push(zk / h);
                }
            }
        }
    }
    let r = median(&mut ratios)?;
    let d = median(&mut diffs)?;
    if (r - 1.0 / 0.3048).abs() < 0.15 {
        Some(format!("station elevations are about 3.28 times the terrain model (median ratio {r:.3}): they look like feet read as metres"))
    } else if (r - 0.3048).abs() < 0.02 {
        Some(format!("station elevations are about 0.305 times the terrain model (median ratio {r:.3}): the terrain model may be in feet"))
    } else if d.abs() > tolerance_m {
        Some(format!("station elevations differ from the terrain model by {d:.1} m in the median; check the height reference (ellipsoidal or orthometric) and units"))
    } else {
        None
    }
}

/// Flags of a survey's first channel with the given role, convenience for
/// commands.
pub fn flags_for_role(s: &Survey, role: Role) -> Option<ChannelFlags> {
    let c = s.channel(role)?;
    ChannelFlags::from_survey(s, &c.name)
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::survey::import::Channel;
    use std::path::PathBuf;

    /// Three east-west lines 100 m apart, 5 m sampling, a smooth anomaly with
    /// small noise, spikes at known rows.
    fn synthetic() -> (Survey, Vec<usize>) {
        let (mut x, mut y, mut v, mut station) = (Vec::new(), Vec::new(), Vec::new(), Vec::new());
        let mut lines = Vec::new();
        let mut seed = 12345u64;
        let mut noise = || {
            seed = seed
                .wrapping_mul(6364136223846793005)
                .wrapping_add(1442695040888963407);
            ((seed >> 11) as f64 / (1u64 << 53) as f64 - 0.5) * 0.2
        };
        for l in 0..3 {
            let mut rows = Vec::new();
            for k in 0..200 {
                rows.push(x.len() as u32);
                let e = 5.0 * k as f64;
                x.push(e);
                y.push(100.0 * l as f64);
                v.push(55_000.0 + 80.0 * (-((e - 500.0) / 120.0).powi(2)).exp() + noise());
                station.push(format!("{k}"));
            }
            lines.push(SurveyLine {
                name: format!("L{l}"),
                rows,
            });
        }
        let spikes = vec![37, 250, 251 + 90, 555];
        for &s in &spikes {
            v[s] += 25.0;
        }
        let n = x.len();
        let s = Survey {
            source: PathBuf::from("synthetic"),
            crs: None,
            x,
            y,
            lat: None,
            lon: None,
            elevation_m: None,
            time_s: None,
            time_origin: Default::default(),
            station: Some(crate::table::ColumnData::Text(station)),
            lines,
            channels: vec![Channel {
                name: "mag".into(),
                role: Role::Magnetic,
                unit: "nT",
                values: v,
            }],
            text_columns: vec![],
            file_lines: (0..n as u64).collect(),
            dummies: vec![],
            warnings: vec![],
        };
        (s, spikes)
    }

    #[test]
    fn spikes_are_found_exactly_and_raw_values_are_kept() {
        let (s, spikes) = synthetic();
        let before = s.channels[0].values.clone();
        let mut f = ChannelFlags::from_survey(&s, "mag").unwrap();
        let n = detect_spikes(
            &s.channels[0].values,
            &s.lines,
            &mut f,
            SpikeRule::default(),
        );
        let flagged: Vec<usize> = (0..f.bits.len())
            .filter(|&r| f.bits[r] & flag::SPIKE != 0)
            .collect();
        assert_eq!(flagged, spikes, "found {n}");
        assert_eq!(s.channels[0].values, before);
    }

    #[test]
    fn manual_edits_reject_and_restore() {
        let (s, spikes) = synthetic();
        let mut f = ChannelFlags::from_survey(&s, "mag").unwrap();
        detect_spikes(
            &s.channels[0].values,
            &s.lines,
            &mut f,
            SpikeRule::default(),
        );
        f.apply(&[
            ManualEdit {
                channel: "mag".into(),
                row: 10,
                reject: true,
            },
            ManualEdit {
                channel: "mag".into(),
                row: spikes[0] as u32,
                reject: false,
            },
            ManualEdit {
                channel: "other".into(),
                row: 11,
                reject: true,
            },
        ]);
        assert!(!f.usable(10));
        assert!(f.usable(spikes[0]));
        assert!(f.usable(11));
        f.apply(&[ManualEdit {
            channel: "mag".into(),
            row: 10,
            reject: false,
        }]);
        assert!(f.usable(10));
    }

    #[test]
    fn elevations_in_feet_are_caught_against_the_dem() {
        let (mut s, _) = synthetic();
        let mut dem = crate::grid::Grid2::new_empty(-50.0, -50.0, 50.0, 50.0, 25, 8).unwrap();
        for (k, v) in dem.values.iter_mut().enumerate() {
            *v = 300.0 + (k % 25) as f64;
        }
        let z: Vec<f64> = (0..s.n_rows())
            .map(|k| dem.sample(s.x[k], s.y[k]).unwrap() + 1.5)
            .collect();
        s.elevation_m = Some(z.clone());
        assert_eq!(elevation_vs_dem(&s, &dem, 10.0), None);
        s.elevation_m = Some(z.iter().map(|v| v / 0.3048).collect());
        let w = elevation_vs_dem(&s, &dem, 10.0).unwrap();
        assert!(w.contains("feet"), "{w}");
    }

    #[test]
    fn spacing_repeats_and_statistics() {
        let (s, _) = synthetic();
        let sp = spacing(&s);
        assert!((sp.along_line_m - 5.0).abs() < 1e-9);
        assert!((sp.line_spacing_m - 100.0).abs() < 1e-6, "{sp:?}");
        assert!(
            (sp.line_direction_deg - 90.0).abs() < 1e-6,
            "east-west lines run at 90°: {sp:?}"
        );
        let f = ChannelFlags::from_survey(&s, "mag").unwrap();
        let rep = repeat_stations(&s, &s.channels[0].values, &f);
        assert_eq!(rep.len(), 200, "every station id occurs on three lines");
        assert!(rep.iter().all(|r| r.occupations == 3));
        let st = line_stats(&s, &s.channels[0].values, &f);
        assert_eq!(st.len(), 3);
        assert!((st[0].length_m - 995.0).abs() < 1e-9);
        assert!(st[0].max > 55_079.0 && st[0].min < 55_001.0);
    }
}
