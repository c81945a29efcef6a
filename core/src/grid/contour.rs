//! Contour lines of a grid by marching squares (Lorensen & Cline 1987 in
//! its 2D form): each cell of four nodes is cut where the level crosses its
//! edges by linear interpolation, saddles are resolved by the cell-centre
//! mean, and the pieces are joined into polylines in map coordinates.
//! Cells with a missing corner are skipped, so lines end at blanked areas.

use super::Grid2;
use std::collections::HashMap;

/// Round contour levels covering the grid's range at `interval` (values
/// that are multiples of the interval). At most `max_levels` are returned;
/// a wider interval is used when the given one would make more.
pub fn levels(g: &Grid2, interval: f64, max_levels: usize) -> Vec<f64> {
    let (lo, hi) = g.value_range();
    let ok = hi > lo && interval.is_finite() && interval > 0.0 && max_levels > 0;
    if !ok {
        return vec![];
    }
    let mut step = interval;
    while ((hi - lo) / step) as usize + 1 > max_levels {
        step = next_round(step);
    }
    let k0 = (lo / step).ceil() as i64;
    let k1 = (hi / step).floor() as i64;
    (k0..=k1).map(|k| k as f64 * step).collect()
}

/// The smallest round number (1, 2 or 5 × 10ⁿ) above `v`.
fn next_round(v: f64) -> f64 {
    let mag = 10f64.powf(v.log10().floor());
    [1.0, 2.0, 5.0, 10.0, 20.0]
        .iter()
        .map(|m| m * mag)
        .find(|s| *s > v * (1.0 + 1e-9))
        .unwrap_or(20.0 * mag)
}

/// A contour interval giving about `n` lines over the grid's range: a round
/// number (1, 2 or 5 × 10ⁿ) near range / n.
pub fn suggested_interval(g: &Grid2, n: usize) -> Option<f64> {
    let (lo, hi) = g.value_range();
    (hi > lo).then(|| crate::numeric::round_below((hi - lo) / n.max(1) as f64))
}

/// The interval used and each contour line with its level.
pub type ContourSet = (f64, Vec<(f64, Vec<[f64; 2]>)>);

/// Every contour line of a grid at `interval` (NaN: a suggested interval
/// giving about twelve lines), at most 60 levels; returns the interval
/// actually used (wider when the given one would make too many levels).
pub fn contour_set(g: &Grid2, interval: f64) -> ContourSet {
    let iv = if interval.is_finite() {
        interval
    } else {
        suggested_interval(g, 12).unwrap_or(1.0)
    };
    let lv = levels(g, iv, 60);
    let used = if lv.len() > 1 { lv[1] - lv[0] } else { iv };
    let lines = lv
        .into_iter()
        .flat_map(|l| contour(g, l).into_iter().map(move |line| (l, line)))
        .collect();
    (used, lines)
}

/// Edge key: the two node indices, smaller first.
type Edge = (usize, usize);

/// The lines of one level, each a list of map points (closed lines repeat
/// their first point at the end).
pub fn contour(g: &Grid2, level: f64) -> Vec<Vec<[f64; 2]>> {
    if g.nx < 2 || g.ny < 2 || !level.is_finite() {
        return vec![];
    }
    let node = |i: usize, j: usize| i + g.nx * j;
    let v = |n: usize| g.values[n];
    // A node exactly on the level counts as above it, so each crossing is
    // strictly between two nodes.
    let above = |n: usize| v(n) >= level;
    let point = |e: Edge| -> [f64; 2] {
        let (a, b) = e;
        let (va, vb) = (v(a), v(b));
        let t = ((level - va) / (vb - va)).clamp(0.0, 1.0);
        let (ia, ja) = (a % g.nx, a / g.nx);
        let (ib, jb) = (b % g.nx, b / g.nx);
        [
            g.x_of(ia) + t * (g.x_of(ib) - g.x_of(ia)),
            g.y_of(ja) + t * (g.y_of(jb) - g.y_of(ja)),
        ]
    };
    let key = |a: usize, b: usize| if a < b { (a, b) } else { (b, a) };
    let mut segs: Vec<(Edge, Edge)> = Vec::new();
    for j in 0..g.ny - 1 {
        for i in 0..g.nx - 1 {
            // Corners counter-clockwise from the south-west.
            let c = [
                node(i, j),
                node(i + 1, j),
                node(i + 1, j + 1),
                node(i, j + 1),
            ];
            if c.iter().any(|n| !v(*n).is_finite()) {
                continue;
            }
            let bits = c
                .iter()
                .enumerate()
                .fold(0u8, |acc, (k, n)| acc | ((above(*n) as u8) << k));
            if bits == 0 || bits == 15 {
                continue;
            }
            // Edges: 0 south (c0–c1), 1 east (c1–c2), 2 north (c2–c3), 3 west (c3–c0).
            let e = |k: usize| key(c[k], c[(k + 1) % 4]);
            let crossed: Vec<usize> = (0..4)
                .filter(|k| above(c[*k]) != above(c[(*k + 1) % 4]))
                .collect();
            if crossed.len() == 2 {
                segs.push((e(crossed[0]), e(crossed[1])));
            } else {
                // Saddle: corners 0 and 2 on one side, 1 and 3 on the other.
                let centre = 0.25 * c.iter().map(|n| v(*n)).sum::<f64>();
                let centre_above = centre >= level;
                if centre_above == above(c[0]) {
                    // Corner 0's side joins through the centre: cut off 1 and 3.
                    segs.push((e(0), e(1)));
                    segs.push((e(2), e(3)));
                } else {
                    segs.push((e(3), e(0)));
                    segs.push((e(1), e(2)));
                }
            }
        }
    }
    join(segs)
        .into_iter()
        .map(|edges| edges.into_iter().map(point).collect())
        .collect()
}

/// Joins segments that share edge points into polylines.
fn join(segs: Vec<(Edge, Edge)>) -> Vec<Vec<Edge>> {
    let mut at: HashMap<Edge, Vec<usize>> = HashMap::with_capacity(2 * segs.len());
    for (k, (a, b)) in segs.iter().enumerate() {
        at.entry(*a).or_default().push(k);
        at.entry(*b).or_default().push(k);
    }
    let mut used = vec![false; segs.len()];
    let mut lines = Vec::new();
    let next = |p: Edge, used: &[bool], at: &HashMap<Edge, Vec<usize>>| -> Option<usize> {
        at.get(&p)?.iter().copied().find(|k| !used[*k])
    };
    // Start open lines at their ends (points with one segment) first, then
    // what is left is closed loops.
    let mut starts: Vec<Edge> = at
        .iter()
        .filter(|(_, v)| v.len() == 1)
        .map(|(p, _)| *p)
        .collect();
    starts.sort_unstable();
    let loop_starts: Vec<usize> = (0..segs.len()).collect();
    let walk = |start: Edge, used: &mut Vec<bool>| -> Option<Vec<Edge>> {
        let mut line = vec![start];
        let mut p = start;
        while let Some(k) = next(p, used, &at) {
            used[k] = true;
            let (a, b) = segs[k];
            p = if a == p { b } else { a };
            line.push(p);
        }
        (line.len() > 1).then_some(line)
    };
    for s in starts {
        if let Some(l) = walk(s, &mut used) {
            lines.push(l);
        }
    }
    for k in loop_starts {
        if !used[k] {
            if let Some(l) = walk(segs[k].0, &mut used) {
                lines.push(l);
            }
        }
    }
    lines
}

#[cfg(test)]
mod tests {
    use super::*;

    fn grid(nx: usize, ny: usize, d: f64, f: impl Fn(f64, f64) -> f64) -> Grid2 {
        let mut g = Grid2::new_empty(0.0, 0.0, d, d, nx, ny).unwrap();
        for j in 0..ny {
            for i in 0..nx {
                g.values[i + nx * j] = f(i as f64 * d, j as f64 * d);
            }
        }
        g
    }

    #[test]
    fn a_plane_contours_as_straight_lines_at_the_exact_positions() {
        // z = 2x + y (closed form: the level L is the line y = L − 2x).
        let g = grid(21, 21, 10.0, |x, y| 2.0 * x + y);
        for level in [55.0, 137.5, 300.0] {
            let lines = contour(&g, level);
            assert_eq!(lines.len(), 1, "level {level}");
            for p in &lines[0] {
                assert!((2.0 * p[0] + p[1] - level).abs() < 1e-9, "{p:?}");
            }
        }
    }

    #[test]
    fn a_cone_contours_as_closed_circles_of_the_level_radius() {
        // z = distance from (100, 100); level L is the circle of radius L.
        let g = grid(41, 41, 5.0, |x, y| (x - 100.0).hypot(y - 100.0));
        let lines = contour(&g, 52.0);
        assert_eq!(lines.len(), 1);
        let l = &lines[0];
        assert_eq!(l.first(), l.last(), "closed");
        for p in l {
            let r = (p[0] - 100.0).hypot(p[1] - 100.0);
            // Linear interpolation along a cell edge of a cone: the error is
            // below d²/(8r) ≈ 0.06 m here.
            assert!((r - 52.0).abs() < 0.1, "r = {r}");
        }
    }

    #[test]
    fn blanked_nodes_break_lines_and_levels_are_round() {
        let mut g = grid(11, 11, 1.0, |x, _| x);
        g.values[5 + 11 * 5] = f64::NAN;
        let lines = contour(&g, 4.5);
        assert_eq!(lines.len(), 2, "a hole at one node splits the line");
        assert_eq!(levels(&g, 2.0, 100), vec![0.0, 2.0, 4.0, 6.0, 8.0, 10.0]);
        assert_eq!(levels(&g, 0.01, 10).len(), 6, "widened to fit 10 levels");
        assert_eq!(suggested_interval(&g, 10), Some(1.0));
    }
}
