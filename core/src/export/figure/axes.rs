//! Frames, axes with round ticks and their labels, colour bars.

use super::colour::ColourMap;
use super::surface::{Anchor, Figure};
use crate::numeric::ticks;

pub(super) fn label(v: f64) -> String {
    let a = v.abs();
    if a == 0.0 {
        "0".into()
    } else if a >= 1000.0 {
        format!("{v:.0}")
    } else if a >= 1.0 {
        format!("{v:.1}").trim_end_matches(".0").to_string()
    } else {
        let s = format!("{v:.3}");
        s.trim_end_matches('0').trim_end_matches('.').to_string()
    }
}

/// Plot frame: pixel box and data ranges.
pub struct Frame {
    pub px: [f64; 4], // left, top, right, bottom
    pub x: [f64; 2],
    pub y: [f64; 2],
}

impl Frame {
    pub fn to_px(&self, x: f64, y: f64) -> [f64; 2] {
        let [l, t, r, b] = self.px;
        [
            l + (x - self.x[0]) / (self.x[1] - self.x[0]) * (r - l),
            b - (y - self.y[0]) / (self.y[1] - self.y[0]) * (b - t),
        ]
    }
}

pub(super) fn axes(f: &mut Figure, fr: &Frame, xlabel: &str, ylabel: &str) {
    let [l, t, r, b] = fr.px;
    let dark = [60, 60, 60];
    f.line(vec![[l, t], [r, t], [r, b], [l, b], [l, t]], dark, 1.0);
    for v in ticks(fr.x[0], fr.x[1], 6) {
        let p = fr.to_px(v, fr.y[0]);
        f.line(vec![[p[0], b], [p[0], b + 5.0]], dark, 1.0);
        f.text(p[0], b + 18.0, 11.0, Anchor::Middle, label(v));
    }
    for v in ticks(fr.y[0], fr.y[1], 5) {
        let p = fr.to_px(fr.x[0], v);
        f.line(vec![[l - 5.0, p[1]], [l, p[1]]], dark, 1.0);
        f.text(l - 8.0, p[1] + 4.0, 11.0, Anchor::End, label(v));
    }
    f.text(0.5 * (l + r), b + 36.0, 12.0, Anchor::Middle, xlabel);
    f.text(12.0, t - 10.0, 12.0, Anchor::Start, ylabel);
}

#[allow(clippy::too_many_arguments)]
pub(super) fn colour_bar(
    f: &mut Figure,
    x: f64,
    top: f64,
    bottom: f64,
    map: ColourMap,
    lo: f64,
    hi: f64,
    units: &str,
) {
    let n = 64;
    let h = (bottom - top) / n as f64;
    for k in 0..n {
        let t = (k as f64 + 0.5) / n as f64;
        f.rect(x, bottom - (k + 1) as f64 * h, 16.0, h + 0.6, map.at(t));
    }
    f.line(
        vec![
            [x, top],
            [x + 16.0, top],
            [x + 16.0, bottom],
            [x, bottom],
            [x, top],
        ],
        [60, 60, 60],
        1.0,
    );
    for v in ticks(lo, hi, 5) {
        let y = bottom - (v - lo) / (hi - lo) * (bottom - top);
        f.line(vec![[x + 16.0, y], [x + 20.0, y]], [60, 60, 60], 1.0);
        f.text(x + 23.0, y + 4.0, 11.0, Anchor::Start, label(v));
    }
    f.text(
        x,
        top - 10.0,
        11.0,
        Anchor::Start,
        units.split(" (").next().unwrap_or(units),
    );
}
