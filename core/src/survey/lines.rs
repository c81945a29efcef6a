//! Grouping survey rows into lines.
//!
//! From a line column: rows with the same value form a line, lines in order
//! of first appearance, rows in file order. Without one: a new line starts
//! where the gap to the previous reading exceeds a distance, or where the
//! path turns by more than an angle from the line's direction so far (common
//! practice for splitting continuous airborne or walking-mag records).

use crate::table::ColumnData;
use serde::{Deserialize, Serialize};
use std::collections::HashMap;

/// One survey line: its name and its rows in acquisition order.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct SurveyLine {
    pub name: String,
    pub rows: Vec<u32>,
}

/// Thresholds for splitting without a line column.
#[derive(Debug, Clone, Copy, PartialEq, Serialize, Deserialize)]
pub struct SplitRule {
    /// Start a new line after a gap longer than this, metres. `None`: ten times
    /// the median spacing between consecutive readings.
    pub gap_m: Option<f64>,
    /// Start a new line when the path turns by more than this, degrees.
    pub turn_deg: f64,
}

impl Default for SplitRule {
    fn default() -> Self {
        SplitRule {
            gap_m: None,
            turn_deg: 45.0,
        }
    }
}

/// Groups rows by the values of a line column (text or numbers).
pub fn lines_from_column(values: &ColumnData) -> Vec<SurveyLine> {
    let mut out: Vec<SurveyLine> = Vec::new();
    let mut push = |k: usize, r: usize| out_push(&mut out, k, r);
    match values {
        ColumnData::Text(v) => {
            let mut index: HashMap<&str, usize> = HashMap::new();
            for (r, t) in v.iter().enumerate() {
                let n = index.len();
                let k = *index.entry(t.as_str()).or_insert(n);
                push(k, r);
            }
            let mut names: Vec<(&str, usize)> = index.into_iter().collect();
            names.sort_by_key(|p| p.1);
            name_lines(&mut out, names.into_iter().map(|(t, _)| t.to_string()));
        }
        ColumnData::Number(v) => {
            let mut index: HashMap<u64, usize> = HashMap::new();
            let mut order = Vec::new();
            for (r, x) in v.iter().enumerate() {
                let n = index.len();
                let k = *index.entry(x.to_bits()).or_insert_with(|| {
                    order.push(*x);
                    n
                });
                push(k, r);
            }
            name_lines(
                &mut out,
                order.into_iter().map(|x| {
                    if x.is_finite() {
                        format!("{x}")
                    } else {
                        String::new()
                    }
                }),
            );
        }
    }
    out
}

fn out_push(out: &mut Vec<SurveyLine>, k: usize, r: usize) {
    if k == out.len() {
        out.push(SurveyLine {
            name: String::new(),
            rows: Vec::new(),
        });
    }
    out[k].rows.push(r as u32);
}

fn name_lines(out: &mut [SurveyLine], names: impl Iterator<Item = String>) {
    for (l, n) in out.iter_mut().zip(names) {
        l.name = if n.is_empty() { "(no line)".into() } else { n };
    }
}

/// Median of finite values (None when there are none).
pub fn median(values: &mut [f64]) -> Option<f64> {
    let mut v: Vec<f64> = values.iter().copied().filter(|x| x.is_finite()).collect();
    if v.is_empty() {
        return None;
    }
    let mid = v.len() / 2;
    let (_, m, _) = v.select_nth_unstable_by(mid, |a, b| a.total_cmp(b));
    let m = *m;
    if v.len() % 2 == 1 {
        Some(m)
    } else {
        let lower = v[..mid].iter().copied().fold(f64::NEG_INFINITY, f64::max);
        Some(0.5 * (lower + m))
    }
}

/// Splits rows (in file order) into lines at gaps and turns. Rows without
/// coordinates stay on the current line.
pub fn split_lines(x: &[f64], y: &[f64], rule: &SplitRule) -> Vec<SurveyLine> {
    let n = x.len();
    let valid: Vec<usize> = (0..n)
        .filter(|&i| x[i].is_finite() && y[i].is_finite())
        .collect();
    let mut steps: Vec<f64> = valid
        .windows(2)
        .map(|w| (x[w[1]] - x[w[0]]).hypot(y[w[1]] - y[w[0]]))
        .collect();
    let spacing = median(&mut steps).unwrap_or(0.0);
    let gap = rule.gap_m.unwrap_or(10.0 * spacing);
    let cos_turn = rule.turn_deg.to_radians().cos();
    let mut out = vec![SurveyLine {
        name: "line 1".into(),
        rows: Vec::new(),
    }];
    let mut start: Option<usize> = None;
    let mut prev: Option<usize> = None;
    for i in 0..n {
        if !(x[i].is_finite() && y[i].is_finite()) {
            if let Some(l) = out.last_mut() {
                l.rows.push(i as u32);
            }
            continue;
        }
        if let (Some(p), Some(s)) = (prev, start) {
            let (dx, dy) = (x[i] - x[p], y[i] - y[p]);
            let step = dx.hypot(dy);
            let (lx, ly) = (x[p] - x[s], y[p] - y[s]);
            let len = lx.hypot(ly);
            let turned =
                step > 0.0 && len > 2.0 * spacing && (dx * lx + dy * ly) / (step * len) < cos_turn;
            if step > gap || turned {
                let k = out.len() + 1;
                out.push(SurveyLine {
                    name: format!("line {k}"),
                    rows: Vec::new(),
                });
                start = Some(i);
            }
        } else {
            start = Some(i);
        }
        if let Some(l) = out.last_mut() {
            l.rows.push(i as u32);
        }
        prev = Some(i);
    }
    out.retain(|l| !l.rows.is_empty());
    out
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn a_line_column_groups_rows_in_order_of_first_appearance() {
        let v = ColumnData::Text(
            ["L2", "L2", "L1", "L2", "L1"]
                .iter()
                .map(|s| s.to_string())
                .collect(),
        );
        let l = lines_from_column(&v);
        assert_eq!(l.len(), 2);
        assert_eq!(l[0].name, "L2");
        assert_eq!(l[0].rows, [0, 1, 3]);
        assert_eq!(l[1].rows, [2, 4]);
        let n = lines_from_column(&ColumnData::Number(vec![1010.0, 1000.0, 1010.0]));
        assert_eq!(n[0].name, "1010");
        assert_eq!(n[0].rows, [0, 2]);
        assert_eq!(n[1].name, "1000");
    }

    #[test]
    fn zig_zag_lines_split_at_the_turns() {
        // Three east-west lines flown back and forth, 5 m sampling, 100 m apart,
        // joined directly (no gap): the turns split them.
        let (mut x, mut y) = (Vec::new(), Vec::new());
        for line in 0..3 {
            for k in 0..101 {
                let e = if line % 2 == 0 {
                    5.0 * k as f64
                } else {
                    500.0 - 5.0 * k as f64
                };
                x.push(e);
                y.push(100.0 * line as f64);
            }
        }
        let l = split_lines(&x, &y, &SplitRule::default());
        assert_eq!(
            l.len(),
            3,
            "{:?}",
            l.iter().map(|l| l.rows.len()).collect::<Vec<_>>()
        );
        assert!(l.iter().all(|l| l.rows.len() == 101));
    }

    #[test]
    fn a_turn_without_a_gap_splits_the_record() {
        // East for 100 readings, then north, all at 5 m steps.
        let mut x: Vec<f64> = (0..100).map(|k| 5.0 * k as f64).collect();
        let mut y = vec![0.0; 100];
        x.extend((1..100).map(|_| 495.0));
        y.extend((1..100).map(|k| 5.0 * k as f64));
        let l = split_lines(&x, &y, &SplitRule::default());
        assert_eq!(l.len(), 2);
        assert_eq!(l[1].rows[0], 100);
    }

    #[test]
    fn a_gap_splits_a_straight_record() {
        let x: Vec<f64> = (0..50)
            .map(|k| 5.0 * k as f64)
            .chain((0..50).map(|k| 1000.0 + 5.0 * k as f64))
            .collect();
        let y = vec![0.0; 100];
        let l = split_lines(&x, &y, &SplitRule::default());
        assert_eq!(l.len(), 2);
        assert_eq!(l[1].rows[0], 50);
    }
}
