//! Minimum-curvature desurvey (common practice; e.g. the formulation in
//! Sawaryn & Thorogood 2005, SPE Drilling & Completion 20(1)).
//!
//! Between two survey stations with unit direction vectors t₁, t₂ and depth
//! difference ΔMD, the hole follows a circular arc with dogleg angle
//! β = acos(t₁·t₂): Δp = ΔMD/2 · (t₁ + t₂) · RF with RF = (2/β) tan(β/2)
//! (RF → 1 as β → 0). A point part-way along the arc, at angle θ = sβ, is
//! p₁ + R/sin β · [(cos(β − θ) − cos β) t₁ + (1 − cos θ) t₂] with R = ΔMD/β,
//! the exact position on the same arc. Beyond the last station the hole
//! continues straight along its last direction.

use super::{Hole, SurveyStation};

/// Unit direction (x east, y north, z up) of azimuth and dip (negative down).
pub fn direction(azimuth_deg: f64, dip_deg: f64) -> [f64; 3] {
    let (a, d) = (azimuth_deg.to_radians(), dip_deg.to_radians());
    [d.cos() * a.sin(), d.cos() * a.cos(), d.sin()]
}

fn dot(a: [f64; 3], b: [f64; 3]) -> f64 {
    a[0] * b[0] + a[1] * b[1] + a[2] * b[2]
}

fn along_arc(t1: [f64; 3], t2: [f64; 3], dmd: f64, s: f64) -> [f64; 3] {
    let beta = dot(t1, t2).clamp(-1.0, 1.0).acos();
    if beta < 1e-9 {
        return [t1[0] * dmd * s, t1[1] * dmd * s, t1[2] * dmd * s];
    }
    let r = dmd / beta;
    let th = s * beta;
    let a = r / beta.sin() * ((beta - th).cos() - beta.cos());
    let b = r / beta.sin() * (1.0 - th.cos());
    [
        a * t1[0] + b * t2[0],
        a * t1[1] + b * t2[1],
        a * t1[2] + b * t2[2],
    ]
}

/// Stations with their positions: the collar at depth 0 and every survey.
#[derive(Debug, Clone, PartialEq)]
pub struct Trace {
    pub depths: Vec<f64>,
    pub dirs: Vec<[f64; 3]>,
    pub points: Vec<[f64; 3]>,
}

impl Trace {
    /// Desurveys a hole. Surveys must be sorted by depth with at least one
    /// station; the orientation of the first station also applies from the
    /// collar down to it.
    pub fn of(hole: &Hole) -> Trace {
        let first = hole.surveys.first().copied().unwrap_or(SurveyStation {
            depth_m: 0.0,
            azimuth_deg: 0.0,
            dip_deg: -90.0,
        });
        let mut depths = vec![0.0];
        let mut dirs = vec![direction(first.azimuth_deg, first.dip_deg)];
        for s in &hole.surveys {
            if s.depth_m > *depths.last().unwrap_or(&0.0) {
                depths.push(s.depth_m);
                dirs.push(direction(s.azimuth_deg, s.dip_deg));
            } else if s.depth_m == 0.0 {
                dirs[0] = direction(s.azimuth_deg, s.dip_deg);
            }
        }
        let mut points = vec![hole.collar];
        for k in 1..depths.len() {
            let d = along_arc(dirs[k - 1], dirs[k], depths[k] - depths[k - 1], 1.0);
            let p = points[k - 1];
            points.push([p[0] + d[0], p[1] + d[1], p[2] + d[2]]);
        }
        Trace {
            depths,
            dirs,
            points,
        }
    }

    /// Position at depth `md` (metres along the hole, ≥ 0).
    pub fn at(&self, md: f64) -> [f64; 3] {
        let md = md.max(0.0);
        let k = self.depths.partition_point(|&d| d <= md).max(1) - 1;
        let p = self.points[k];
        if k + 1 >= self.depths.len() {
            let t = self.dirs[k];
            let s = md - self.depths[k];
            return [p[0] + s * t[0], p[1] + s * t[1], p[2] + s * t[2]];
        }
        let dmd = self.depths[k + 1] - self.depths[k];
        let d = along_arc(
            self.dirs[k],
            self.dirs[k + 1],
            dmd,
            (md - self.depths[k]) / dmd,
        );
        [p[0] + d[0], p[1] + d[1], p[2] + d[2]]
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    fn hole(surveys: Vec<SurveyStation>) -> Hole {
        Hole {
            id: "H1".into(),
            collar: [1000.0, 2000.0, 300.0],
            total_depth_m: None,
            surveys,
            intervals: vec![],
        }
    }

    #[test]
    fn a_straight_inclined_hole_by_hand() {
        // Azimuth 90° (east), dip −60°: at 100 m along the hole the offset is
        // 100·cos 60° = 50 m east and 100·sin 60° = 86.603 m down.
        let t = Trace::of(&hole(vec![SurveyStation {
            depth_m: 0.0,
            azimuth_deg: 90.0,
            dip_deg: -60.0,
        }]));
        let p = t.at(100.0);
        assert!((p[0] - 1050.0).abs() < 1e-9 && (p[1] - 2000.0).abs() < 1e-9);
        assert!((p[2] - (300.0 - 100.0 * 60f64.to_radians().sin())).abs() < 1e-9);
    }

    #[test]
    fn a_quarter_circle_hole_by_hand() {
        // From vertical to horizontal (east) over a quarter circle of radius
        // 100 m: MD = 50π. The end lies 100 m east and 100 m down; halfway,
        // 100(1 − cos 45°) east and 100 sin 45° down.
        let r = 100.0;
        let md = std::f64::consts::FRAC_PI_2 * r;
        let t = Trace::of(&hole(vec![
            SurveyStation {
                depth_m: 0.0,
                azimuth_deg: 90.0,
                dip_deg: -90.0,
            },
            SurveyStation {
                depth_m: md,
                azimuth_deg: 90.0,
                dip_deg: 0.0,
            },
        ]));
        let end = t.at(md);
        assert!(
            (end[0] - 1100.0).abs() < 1e-9 && (end[2] - 200.0).abs() < 1e-9,
            "{end:?}"
        );
        let mid = t.at(md / 2.0);
        let s45 = std::f64::consts::FRAC_1_SQRT_2;
        assert!(
            (mid[0] - (1000.0 + r * (1.0 - s45))).abs() < 1e-9
                && (mid[2] - (300.0 - r * s45)).abs() < 1e-9,
            "{mid:?}"
        );
        // Beyond the last survey: straight on, horizontally east.
        let past = t.at(md + 10.0);
        assert!((past[0] - 1110.0).abs() < 1e-9 && (past[2] - 200.0).abs() < 1e-9);
    }
}
