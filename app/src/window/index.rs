//! A uniform-grid index of map points, so the station under the cursor is
//! found among millions of readings without a scan of all of them.

/// Points bucketed by a uniform grid (compressed rows: the indices of
/// bucket `b` are `order[start[b]..start[b + 1]]`).
pub struct PointIndex {
    x0: f64,
    y0: f64,
    cell: f64,
    nx: usize,
    ny: usize,
    start: Vec<u32>,
    order: Vec<u32>,
}

impl PointIndex {
    /// Indexes the points with finite coordinates, about four to a bucket
    /// (at most 1024 × 1024 buckets).
    pub fn new(x: &[f64], y: &[f64]) -> PointIndex {
        let finite = |k: &usize| x[*k].is_finite() && y[*k].is_finite();
        let (mut x0, mut x1, mut y0, mut y1) = (f64::MAX, f64::MIN, f64::MAX, f64::MIN);
        for k in (0..x.len()).filter(finite) {
            x0 = x0.min(x[k]);
            x1 = x1.max(x[k]);
            y0 = y0.min(y[k]);
            y1 = y1.max(y[k]);
        }
        let n = x.len().max(1) as f64;
        let side = (n / 4.0).sqrt().clamp(1.0, 1024.0);
        let cell = ((x1 - x0).max(y1 - y0) / side).max(1e-6);
        let (nx, ny) = if x0 <= x1 {
            (
                ((x1 - x0) / cell) as usize + 1,
                ((y1 - y0) / cell) as usize + 1,
            )
        } else {
            (1, 1)
        };
        let bucket = |k: usize| {
            let i = (((x[k] - x0) / cell) as usize).min(nx - 1);
            let j = (((y[k] - y0) / cell) as usize).min(ny - 1);
            i + nx * j
        };
        let mut start = vec![0u32; nx * ny + 1];
        for k in (0..x.len()).filter(finite) {
            start[bucket(k) + 1] += 1;
        }
        for b in 0..nx * ny {
            start[b + 1] += start[b];
        }
        let mut next = start.clone();
        let mut order = vec![0u32; start[nx * ny] as usize];
        for k in (0..x.len()).filter(finite) {
            let b = bucket(k);
            order[next[b] as usize] = k as u32;
            next[b] += 1;
        }
        PointIndex {
            x0,
            y0,
            cell,
            nx,
            ny,
            start,
            order,
        }
    }

    /// The point nearest to `p` within `r` (same units as the points).
    pub fn nearest_within(&self, x: &[f64], y: &[f64], p: [f64; 2], r: f64) -> Option<usize> {
        if self.order.is_empty() || r.is_nan() || r < 0.0 {
            return None;
        }
        let span = |v: f64, v0: f64, n: usize| {
            let a = ((v - r - v0) / self.cell).floor();
            let b = ((v + r - v0) / self.cell).floor();
            if b < 0.0 || a > (n - 1) as f64 {
                None
            } else {
                Some((a.max(0.0) as usize, (b as usize).min(n - 1)))
            }
        };
        let (i0, i1) = span(p[0], self.x0, self.nx)?;
        let (j0, j1) = span(p[1], self.y0, self.ny)?;
        let mut best: Option<(f64, usize)> = None;
        for j in j0..=j1 {
            for i in i0..=i1 {
                let b = i + self.nx * j;
                for &k in &self.order[self.start[b] as usize..self.start[b + 1] as usize] {
                    let k = k as usize;
                    let d = (x[k] - p[0]).hypot(y[k] - p[1]);
                    if d <= r && best.is_none_or(|(bd, _)| d < bd) {
                        best = Some((d, k));
                    }
                }
            }
        }
        best.map(|(_, k)| k)
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn finds_the_nearest_point_within_the_radius_as_a_scan_does() {
        // A scattered set with a repeat and a NaN.
        let mut x = Vec::new();
        let mut y = Vec::new();
        let mut s = 12345u64;
        for _ in 0..5000 {
            s = s
                .wrapping_mul(6364136223846793005)
                .wrapping_add(1442695040888963407);
            x.push((s >> 33) as f64 / 2f64.powi(31) * 1000.0);
            s = s
                .wrapping_mul(6364136223846793005)
                .wrapping_add(1442695040888963407);
            y.push((s >> 33) as f64 / 2f64.powi(31) * 600.0);
        }
        x.push(f64::NAN);
        y.push(5.0);
        let idx = PointIndex::new(&x, &y);
        for (p, r) in [
            ([500.0, 300.0], 5.0),
            ([0.0, 0.0], 20.0),
            ([999.0, 1.0], 3.0),
            ([-50.0, 10.0], 10.0),
        ] {
            let scan = (0..x.len())
                .filter(|k| x[*k].is_finite())
                .map(|k| ((x[k] - p[0]).hypot(y[k] - p[1]), k))
                .filter(|(d, _)| *d <= r)
                .min_by(|a, b| a.0.total_cmp(&b.0))
                .map(|(_, k)| k);
            assert_eq!(idx.nearest_within(&x, &y, p, r), scan, "{p:?} {r}");
        }
    }
}
