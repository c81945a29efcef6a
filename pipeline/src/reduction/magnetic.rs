//! Magnetometer readings to total-field anomalies: the main field (IGRF-14)
//! at every reading and the diurnal variation from a base-station record.

use super::table::{guard_inputs, positions, table_error, times, write_output};
use crate::error::Result;
use fieldstone_core::geodesy::igrf::{decimal_year_of_date, IgrfModel};
use fieldstone_core::progress::Observer;
use fieldstone_core::reduce::magnetic::{diurnal, mean_inducing_field, BaseRecord, DiurnalError};
use fieldstone_core::table::passthrough::read_passthrough;
use rayon::prelude::*;
use std::path::{Path, PathBuf};

/// The columns every magnetic reduction adds, in order.
pub const MAGNETIC_COLUMNS: [&str; 5] = [
    "igrf_f_nt",
    "igrf_inclination_deg",
    "igrf_declination_deg",
    "diurnal_nt",
    "tmi_anomaly_nt",
];

/// One magnetic reduction.
#[derive(Debug, Clone, PartialEq)]
pub struct MagneticJob {
    /// Reading table: lat, lon (or x, y with `epsg`), height_m, mag_nt,
    /// optional time.
    pub input: PathBuf,
    /// Survey date (YYYY-MM-DD) for the main field, and the day of times of day.
    pub date: String,
    pub out: PathBuf,
    /// Base-station record: time, mag_nt.
    pub base: Option<PathBuf>,
    /// Diurnal datum, nT (the base mean when None).
    pub datum_nt: Option<f64>,
    /// Warn where base samples are farther apart than this, seconds.
    pub max_gap_s: f64,
    /// EPSG code of x, y columns (instead of lat, lon).
    pub epsg: Option<u32>,
}

/// Reduces the readings of `job`; returns the number of rows.
pub fn reduce_magnetic(job: &MagneticJob, obs: &dyn Observer) -> Result<usize> {
    let mut inputs: Vec<&Path> = vec![&job.input];
    if let Some(b) = &job.base {
        inputs.push(b);
    }
    guard_inputs(&job.out, &inputs)?;
    let year = decimal_year_of_date(&job.date).map_err(|e| format!("survey date: {e}"))?;
    let model = IgrfModel::igrf14()
        .at_date(year)
        .map_err(|e| format!("survey date {}: {e}", job.date))?;
    let t = read_passthrough(&job.input, &MAGNETIC_COLUMNS).map_err(|e| e.to_string())?;
    let pos = positions(&t, job.epsg)?;
    let h = t
        .numbers(
            t.require(
                "height_m",
                "sensor heights in metres above the WGS 84 ellipsoid",
            )
            .map_err(table_error)?,
            true,
        )
        .map_err(table_error)?;
    let mag = t
        .numbers(
            t.require("mag_nt", "total-field readings in nT")
                .map_err(table_error)?,
            true,
        )
        .map_err(table_error)?;
    let n = t.n_rows();
    let fields: Vec<_> = (0..n)
        .into_par_iter()
        .map(|k| model.field(pos.lat[k], pos.lon[k], h[k]))
        .collect::<std::result::Result<_, _>>()
        .map_err(|e| format!("{}: {e}", t.file.display()))?;
    let diurnal_nt = match &job.base {
        Some(bp) => {
            let tc = t
                .require(
                    "time",
                    "a diurnal correction needs the time of every reading",
                )
                .map_err(table_error)?;
            let ts = times(&t, tc, Some(&job.date))?;
            let b = read_passthrough(bp, &[]).map_err(|e| e.to_string())?;
            let bt = times(
                &b,
                b.require("time", "the base record needs time and mag_nt")
                    .map_err(table_error)?,
                Some(&job.date),
            )?;
            let bcol = b
                .column("mag_nt")
                .or_else(|| b.column("base_nt"))
                .or_else(|| b.column("nt"))
                .ok_or_else(|| {
                    format!(
                        "{}: the base record has no column mag_nt (found: {})",
                        bp.display(),
                        b.names.join(", ")
                    )
                })?;
            let bv = b.numbers(bcol, false).map_err(table_error)?;
            let rec = BaseRecord::new(bt, bv).map_err(|e| format!("{}: {e}", bp.display()))?;
            let (d, gaps) =
                diurnal(&rec, &ts, job.datum_nt, job.max_gap_s).map_err(|e| match e {
                    DiurnalError::Outside { first_row, .. } => {
                        format!("{}: line {}: {e}", t.file.display(), t.lines[first_row])
                    }
                    _ => format!("{} and {}: {e}", t.file.display(), bp.display()),
                })?;
            if gaps > 0 {
                obs.warning(&format!(
                    "{gaps} readings were corrected across gaps longer than {} s in the base record",
                    job.max_gap_s
                ));
            }
            d
        }
        None => vec![0.0; n],
    };
    write_output(&job.out, &t, &MAGNETIC_COLUMNS, |k| {
        let f = &fields[k];
        vec![
            f.f_nt,
            f.inclination_deg,
            f.declination_deg,
            diurnal_nt[k],
            mag[k] - diurnal_nt[k] - f.f_nt,
        ]
    })?;
    if let Some(ind) = mean_inducing_field(&fields) {
        obs.message(&format!(
            "reduce magnetic: {n} readings -> {}; survey inducing field {:.0} nT, inclination {:.2}°, declination {:.2}° (IGRF-14 on {})",
            job.out.display(),
            ind.intensity_nt,
            ind.inclination_deg,
            ind.declination_deg,
            job.date
        ));
    }
    Ok(n)
}
