//! Magnetic reductions: diurnal correction from a base-station record,
//! main-field removal, and the survey's inducing field.
//!
//! diurnal(t) = base(t) − datum, with base(t) interpolated linearly in time;
//! total-field anomaly = reading − diurnal − F_IGRF(position, date).

use crate::geodesy::igrf::MainField;
use thiserror::Error;

/// A base-station record, sorted by time.
#[derive(Debug, Clone, PartialEq)]
pub struct BaseRecord {
    pub t_s: Vec<f64>,
    pub nt: Vec<f64>,
}

#[derive(Debug, Error, PartialEq)]
pub enum DiurnalError {
    #[error("the base record has fewer than two readings")]
    TooShort,
    #[error("base record time goes backwards at its reading {index}")]
    NotSorted { index: usize },
    #[error("the base record ({base_start} to {base_end}) does not overlap the survey ({survey_start} to {survey_end})")]
    NoOverlap {
        base_start: String,
        base_end: String,
        survey_start: String,
        survey_end: String,
    },
    #[error("{count} survey readings fall outside the base record (the first is row {first_row} at {time}); trim them or extend the base record")]
    Outside {
        count: usize,
        first_row: usize,
        time: String,
    },
}

impl BaseRecord {
    /// Checks order and length.
    pub fn new(t_s: Vec<f64>, nt: Vec<f64>) -> Result<BaseRecord, DiurnalError> {
        let keep: Vec<usize> = (0..t_s.len())
            .filter(|&i| t_s[i].is_finite() && nt[i].is_finite())
            .collect();
        if keep.len() < 2 {
            return Err(DiurnalError::TooShort);
        }
        let t: Vec<f64> = keep.iter().map(|&i| t_s[i]).collect();
        let v: Vec<f64> = keep.iter().map(|&i| nt[i]).collect();
        if let Some(i) = t.windows(2).position(|w| w[1] <= w[0]) {
            return Err(DiurnalError::NotSorted { index: keep[i + 1] });
        }
        Ok(BaseRecord { t_s: t, nt: v })
    }

    pub fn mean_nt(&self) -> f64 {
        self.nt.iter().sum::<f64>() / self.nt.len() as f64
    }
}

/// Diurnal variation (nT) at every survey time, about `datum_nt` (the base
/// mean when `None`), and the number of readings whose bracketing base samples
/// are more than `max_gap_s` apart (interpolated across a gap: warn).
pub fn diurnal(
    base: &BaseRecord,
    times_s: &[f64],
    datum_nt: Option<f64>,
    max_gap_s: f64,
) -> Result<(Vec<f64>, usize), DiurnalError> {
    let fmt = crate::time::format_iso;
    let (b0, b1) = (base.t_s[0], base.t_s[base.t_s.len() - 1]);
    let (s0, s1) = times_s
        .iter()
        .filter(|t| t.is_finite())
        .fold((f64::INFINITY, f64::NEG_INFINITY), |(a, b), &t| {
            (a.min(t), b.max(t))
        });
    if s1 < b0 || s0 > b1 {
        return Err(DiurnalError::NoOverlap {
            base_start: fmt(b0),
            base_end: fmt(b1),
            survey_start: fmt(s0),
            survey_end: fmt(s1),
        });
    }
    let outside: Vec<usize> = (0..times_s.len())
        .filter(|&i| times_s[i].is_finite() && (times_s[i] < b0 || times_s[i] > b1))
        .collect();
    if let Some(&first) = outside.first() {
        return Err(DiurnalError::Outside {
            count: outside.len(),
            first_row: first,
            time: fmt(times_s[first]),
        });
    }
    let datum = datum_nt.unwrap_or_else(|| base.mean_nt());
    let mut gaps = 0;
    let out = times_s
        .iter()
        .map(|&t| {
            if !t.is_finite() {
                return f64::NAN;
            }
            let k = base
                .t_s
                .partition_point(|&b| b <= t)
                .clamp(1, base.t_s.len() - 1);
            let (ta, tb) = (base.t_s[k - 1], base.t_s[k]);
            if tb - ta > max_gap_s {
                gaps += 1;
            }
            let w = (t - ta) / (tb - ta);
            base.nt[k - 1] + w * (base.nt[k] - base.nt[k - 1]) - datum
        })
        .collect();
    Ok((out, gaps))
}

/// The mean inducing field of a survey: the direction and intensity of the
/// mean main-field vector over its readings.
pub fn mean_inducing_field(
    fields: &[MainField],
) -> Option<crate::physics::magnetic::InducingField> {
    if fields.is_empty() {
        return None;
    }
    let n = fields.len() as f64;
    let (x, y, z) = fields.iter().fold((0.0, 0.0, 0.0), |(a, b, c), f| {
        (a + f.x_nt / n, b + f.y_nt / n, c + f.z_nt / n)
    });
    let h = x.hypot(y);
    Some(crate::physics::magnetic::InducingField {
        intensity_nt: h.hypot(z),
        inclination_deg: z.atan2(h).to_degrees(),
        declination_deg: y.atan2(x).to_degrees(),
    })
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn diurnal_interpolates_and_subtracts_the_datum() {
        let base = BaseRecord::new(
            vec![0.0, 60.0, 120.0, 600.0],
            vec![50_000.0, 50_006.0, 50_003.0, 50_013.0],
        )
        .unwrap();
        let (d, gaps) = diurnal(&base, &[30.0, 90.0, 360.0], Some(50_000.0), 120.0).unwrap();
        assert!(
            (d[0] - 3.0).abs() < 1e-12 && (d[1] - 4.5).abs() < 1e-12 && (d[2] - 8.0).abs() < 1e-12
        );
        assert_eq!(gaps, 1, "the 120–600 s interval is a gap");
        let (d, _) = diurnal(&base, &[0.0], None, 1e9).unwrap();
        assert!((d[0] - (50_000.0 - base.mean_nt())).abs() < 1e-12);
    }

    #[test]
    fn records_that_do_not_cover_the_survey_are_refused() {
        let base = BaseRecord::new(vec![100.0, 200.0], vec![1.0, 2.0]).unwrap();
        assert!(matches!(
            diurnal(&base, &[300.0, 400.0], None, 60.0),
            Err(DiurnalError::NoOverlap { .. })
        ));
        let e = diurnal(&base, &[150.0, 250.0], None, 60.0).unwrap_err();
        assert!(
            matches!(
                e,
                DiurnalError::Outside {
                    count: 1,
                    first_row: 1,
                    ..
                }
            ),
            "{e}"
        );
        assert!(matches!(
            BaseRecord::new(vec![0.0, 10.0, 5.0], vec![1.0, 1.0, 1.0]),
            Err(DiurnalError::NotSorted { index: 2 })
        ));
        assert!(matches!(
            BaseRecord::new(vec![0.0], vec![1.0]),
            Err(DiurnalError::TooShort)
        ));
    }
}
