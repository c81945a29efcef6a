//! Magnetometer readings to total-field anomalies: the main field (IGRF-14)
//! at every reading and the diurnal variation from a base-station record.

use super::survey_files::{read_survey_files, write_survey, ReadOptions, SurveyFile};
use super::table::{guard_inputs, table_error, times};
use crate::error::Result;
use fieldstone_core::geodesy::igrf::{decimal_year_of_date, IgrfModel};
use fieldstone_core::progress::Observer;
use fieldstone_core::reduce::magnetic::{diurnal, mean_inducing_field, BaseRecord, DiurnalError};
use fieldstone_core::survey::columns::Role;
use fieldstone_core::survey::import::TimeOrigin;
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
    /// The survey's files, read through the importer: lat, lon (or
    /// easting, northing with `epsg` in `read`), height, the reading, and a
    /// time for the diurnal correction.
    pub inputs: Vec<PathBuf>,
    /// Role and unit overrides and the projected reference.
    pub read: ReadOptions,
    /// Survey date (YYYY-MM-DD) for the main field, and the day of times of day.
    pub date: String,
    pub out: PathBuf,
    /// Base-station record: time, mag_nt.
    pub base: Option<PathBuf>,
    /// Diurnal datum, nT (the base mean when None).
    pub datum_nt: Option<f64>,
    /// Warn where base samples are farther apart than this, seconds.
    pub max_gap_s: f64,
}

/// One reduced reading, for the steps after the reduction.
#[derive(Debug, Clone, PartialEq)]
pub struct ReducedMagnetic {
    /// Easting, northing (m, in the survey's projected reference) and height (m).
    pub xyz: [f64; 3],
    pub tmi_anomaly_nt: f64,
    /// The reading's line as written (empty when the file has no line column).
    pub line: String,
}

/// The diurnal variation at every reading of one file, from the base record.
fn diurnal_of(
    job: &MagneticJob,
    f: &SurveyFile,
    bp: &Path,
    obs: &dyn Observer,
) -> Result<Vec<f64>> {
    let (ts, origin) = f.times(Some(&job.date))?;
    if origin != TimeOrigin::Epoch {
        return Err(format!(
            "{}: the diurnal correction needs the clock time of every reading; column '{}' holds elapsed time",
            f.path.display(),
            f.header_of(Role::Time).unwrap_or("time")
        )
        .into());
    }
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
    let (d, gaps) = diurnal(&rec, &ts, job.datum_nt, job.max_gap_s).map_err(|e| match e {
        DiurnalError::Outside { first_row, .. } => {
            format!("{}: line {}: {e}", f.path.display(), f.line(first_row))
        }
        _ => format!("{} and {}: {e}", f.path.display(), bp.display()),
    })?;
    if gaps > 0 {
        obs.warning(&format!(
            "{}: {gaps} readings were corrected across gaps longer than {} s in the base record",
            f.path.display(),
            job.max_gap_s
        ));
    }
    Ok(d)
}

/// Reduces the readings of `job`; returns every reading's position,
/// anomaly and line, in file order then row order.
pub fn reduce_magnetic(job: &MagneticJob, obs: &dyn Observer) -> Result<Vec<ReducedMagnetic>> {
    let mut inputs: Vec<&Path> = job.inputs.iter().map(|p| p.as_path()).collect();
    if let Some(b) = &job.base {
        inputs.push(b);
    }
    guard_inputs(&job.out, &inputs)?;
    let year = decimal_year_of_date(&job.date).map_err(|e| format!("survey date: {e}"))?;
    let model = IgrfModel::igrf14()
        .at_date(year)
        .map_err(|e| format!("survey date {}: {e}", job.date))?;
    let files = read_survey_files(&job.inputs, &job.read, &MAGNETIC_COLUMNS)?;
    let mut all_fields = Vec::new();
    let mut per_file = Vec::with_capacity(files.len());
    let mut readings = Vec::new();
    for f in &files {
        let (lat, lon) = f.lat_lon()?;
        let h = f.heights()?;
        let mag = f.channel(
            Role::Magnetic,
            "the magnetometer readings",
            "mag_nt or tmi, in nT",
        )?;
        let fields: Vec<_> = (0..h.len())
            .into_par_iter()
            .map(|k| model.field(lat[k], lon[k], h[k]))
            .collect::<std::result::Result<_, _>>()
            .map_err(|e| format!("{}: {e}", f.path.display()))?;
        let diurnal_nt = match &job.base {
            Some(bp) => diurnal_of(job, f, bp, obs)?,
            None => vec![0.0; h.len()],
        };
        let lines: Vec<String> = match f.header_of(Role::Line).and_then(|h| f.raw.column(h)) {
            Some(c) => (0..f.raw.n_rows()).map(|r| f.raw.text(r, c)).collect(),
            None => vec![String::new(); h.len()],
        };
        let rows: Vec<Vec<f64>> = (0..h.len())
            .map(|k| {
                let fk = &fields[k];
                vec![
                    fk.f_nt,
                    fk.inclination_deg,
                    fk.declination_deg,
                    diurnal_nt[k],
                    mag[k] - diurnal_nt[k] - fk.f_nt,
                ]
            })
            .collect();
        for (k, r) in rows.iter().enumerate() {
            readings.push(ReducedMagnetic {
                xyz: [f.survey.x[k], f.survey.y[k], h[k]],
                tmi_anomaly_nt: r[4],
                line: lines[k].clone(),
            });
        }
        all_fields.extend(fields);
        per_file.push(rows);
    }
    write_survey(&job.out, &files, &MAGNETIC_COLUMNS, |k, i| {
        per_file[k][i].clone()
    })?;
    if let Some(ind) = mean_inducing_field(&all_fields) {
        obs.message(&format!(
            "reduce magnetic: {} readings from {} file(s) -> {}; survey inducing field {:.0} nT, inclination {:.2}°, declination {:.2}° (IGRF-14 on {})",
            readings.len(),
            files.len(),
            job.out.display(),
            ind.intensity_nt,
            ind.inclination_deg,
            ind.declination_deg,
            job.date
        ));
    }
    Ok(readings)
}
