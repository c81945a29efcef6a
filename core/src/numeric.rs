//! Round numbers for scales, ticks and contour intervals: a utility the
//! figures, the contours and the window's canvas share.

/// The largest round length (1, 2 or 5 × 10ⁿ) not above `v` (scale bars).
pub fn round_below(v: f64) -> f64 {
    if !(v.is_finite() && v > 0.0) {
        return 1.0;
    }
    let mag = 10f64.powf(v.log10().floor());
    [5.0, 2.0, 1.0]
        .iter()
        .map(|m| m * mag)
        .find(|s| *s <= v)
        .unwrap_or(mag)
}

/// Round tick values covering [lo, hi], about `n` of them.
pub fn ticks(lo: f64, hi: f64, n: usize) -> Vec<f64> {
    if hi.partial_cmp(&lo) != Some(std::cmp::Ordering::Greater)
        || !lo.is_finite()
        || !hi.is_finite()
    {
        return vec![lo];
    }
    let raw = (hi - lo) / n.max(1) as f64;
    let mag = 10f64.powf(raw.log10().floor());
    let step = [1.0, 2.0, 2.5, 5.0, 10.0]
        .iter()
        .map(|m| m * mag)
        .find(|s| *s >= raw)
        .unwrap_or(10.0 * mag);
    let k0 = (lo / step - 1e-9).ceil() as i64;
    let k1 = (hi / step + 1e-9).floor() as i64;
    // Round away the binary noise of k·step to the decimals the step has.
    let decimals = (-(step.log10().floor()) as i32 + 1).max(0);
    let unit = 10f64.powi(decimals);
    (k0..=k1)
        .map(|k| ((k as f64 * step) * unit).round() / unit + 0.0)
        .collect()
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn round_numbers() {
        assert_eq!(round_below(437.4), 200.0);
        assert_eq!(round_below(0.6), 0.5);
        assert_eq!(round_below(f64::NAN), 1.0);
        assert_eq!(
            ticks(0.0, 1000.0, 5),
            vec![0.0, 200.0, 400.0, 600.0, 800.0, 1000.0]
        );
    }
}
