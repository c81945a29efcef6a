//! Gravity readings to free-air, Bouguer and complete Bouguer anomalies,
//! with tide and drift in base-station loops for relative readings and the
//! terrain correction from a DEM.

use super::table::{guard_inputs, positions, table_error, times, write_output};
use crate::error::{Error, Result};
use fieldstone_core::geodesy::crs::Crs;
use fieldstone_core::grid::geotiff::read_geotiff;
use fieldstone_core::progress::Observer;
use fieldstone_core::reduce::drift::{reduce_drift, DriftError, DriftReduction, DriftSettings};
use fieldstone_core::reduce::gravity::{reduce_station, GravitySettings};
use fieldstone_core::reduce::terrain::{terrain_corrections, TerrainError, TerrainSettings};
use fieldstone_core::reduce::tide::tide_effect_mgal;
use fieldstone_core::table::passthrough::read_passthrough;
use rayon::prelude::*;
use std::path::PathBuf;

/// The columns every gravity reduction adds, in order.
pub const GRAVITY_COLUMNS: [&str; 9] = [
    "normal_gravity_mgal",
    "free_air_correction_mgal",
    "atmospheric_correction_mgal",
    "bouguer_slab_mgal",
    "curvature_correction_mgal",
    "terrain_correction_mgal",
    "free_air_anomaly_mgal",
    "bouguer_anomaly_mgal",
    "complete_bouguer_anomaly_mgal",
];

/// The columns a reduction of relative readings adds after them.
pub const DRIFT_COLUMNS: [&str; 3] = [
    "tide_correction_mgal",
    "drift_correction_mgal",
    "observed_gravity_mgal",
];

/// Relative readings tied to a base station of known absolute gravity.
#[derive(Debug, Clone, PartialEq)]
pub struct BaseTie {
    /// Absolute gravity at the base, mGal.
    pub value_mgal: f64,
    /// Station id of the base in the station column.
    pub station: String,
}

impl BaseTie {
    /// The tie when both the base value and the base station are given.
    pub fn of(value_mgal: Option<f64>, station: Option<&str>) -> Option<BaseTie> {
        Some(BaseTie {
            value_mgal: value_mgal?,
            station: station?.to_string(),
        })
    }
}

/// The terrain correction's inputs.
#[derive(Debug, Clone, PartialEq)]
pub struct TerrainInputs {
    /// Terrain model (GeoTIFF).
    pub dem: PathBuf,
    /// Inner and outer radius of the correction, metres.
    pub inner_m: f64,
    pub outer_m: f64,
    /// Coarser terrain model used beyond the extent of `dem`.
    pub far_dem: Option<PathBuf>,
}

/// One gravity reduction: a station table in, the same table with the
/// reductions out.
#[derive(Debug, Clone, PartialEq)]
pub struct GravityJob {
    /// Station table: lat, lon (or x, y with `epsg`), height_m,
    /// gravity_mgal, and optional time, station, line.
    pub input: PathBuf,
    pub out: PathBuf,
    /// Reduction density, ellipsoid, height and atmospheric choices.
    pub settings: GravitySettings,
    pub terrain: Option<TerrainInputs>,
    /// EPSG code of x, y columns (instead of lat, lon).
    pub epsg: Option<u32>,
    /// Relative readings: reduced for tide and drift in base loops.
    pub base: Option<BaseTie>,
    /// Loops drifting faster than this are flagged, mGal per hour.
    pub max_drift_mgal_per_h: f64,
    /// Correct for the earth tide (false when the meter already did).
    pub tide: bool,
    /// Gravimetric factor of the tide.
    pub gravimetric_factor: f64,
    /// Date of the readings (YYYY-MM-DD) when the time column holds times of day.
    pub date: Option<String>,
}

/// Reduces the readings of `job`, reporting loops and checks to `obs`
/// (which may cancel the terrain correction). Returns the number of rows.
pub fn reduce_gravity(job: &GravityJob, obs: &dyn Observer) -> Result<usize> {
    guard_inputs(&job.out, &[&job.input])?;
    let density = job.settings.density_g_cc;
    if !(density.is_finite() && density > 0.0 && density < 10.0) {
        return Err(format!("reduction density {density} is not a density in g/cm³ (expected about 1.8 to 3.3; 2.67 is the common choice)").into());
    }
    let mut names: Vec<&str> = GRAVITY_COLUMNS.to_vec();
    if job.base.is_some() {
        names.extend_from_slice(&DRIFT_COLUMNS);
    }
    let t = read_passthrough(&job.input, &names).map_err(|e| e.to_string())?;
    let pos = positions(&t, job.epsg)?;
    let h = t.numbers(t.require("height_m", "heights in metres above the ellipsoid (the standard) or sea level (record the choice)").map_err(table_error)?, true).map_err(table_error)?;
    let g_col = t
        .require(
            "gravity_mgal",
            "observed gravity (absolute), or relative readings with a base station and its value",
        )
        .map_err(table_error)?;
    let readings = t.numbers(g_col, true).map_err(table_error)?;
    let n = t.n_rows();
    // Tide and drift for relative readings.
    let (observed, tide_corr, drift_corr) = if let Some(base) = &job.base {
        let tc = t
            .require("time", "drift needs a time for every reading")
            .map_err(table_error)?;
        let sc = t
            .require(
                "station",
                "drift needs station ids to find the base readings",
            )
            .map_err(table_error)?;
        let ts = times(&t, tc, job.date.as_deref())?;
        let ids: Vec<String> = (0..n).map(|r| t.text(r, sc)).collect();
        let tide: Vec<f64> = (0..n)
            .map(|k| {
                if job.tide {
                    -tide_effect_mgal(ts[k], pos.lat[k], pos.lon[k], h[k], job.gravimetric_factor)
                } else {
                    0.0
                }
            })
            .collect();
        let corrected: Vec<f64> = readings.iter().zip(&tide).map(|(r, c)| r + c).collect();
        let settings = DriftSettings {
            base_station: base.station.clone(),
            base_value_mgal: base.value_mgal,
            max_rate_mgal_per_h: job.max_drift_mgal_per_h,
        };
        let DriftReduction {
            gravity_mgal: g,
            correction_mgal: d,
            loops,
        } = reduce_drift(&ts, &ids, &corrected, &settings).map_err(|e| {
            let line = match &e {
                DriftError::NotMonotonic { row, .. }
                | DriftError::Outside { row }
                | DriftError::Missing { row } => Some(t.lines[*row]),
                _ => None,
            };
            match line {
                Some(l) => format!("{}: line {l}: {e}", t.file.display()),
                None => format!("{}: {e}", t.file.display()),
            }
        })?;
        for (k, l) in loops.iter().enumerate() {
            obs.message(&format!(
                "loop {}: lines {}–{}, {:.2} h, drift {:+.4} mGal/h{}",
                k + 1,
                t.lines[l.start_row],
                t.lines[l.end_row],
                l.duration_h,
                l.rate_mgal_per_h,
                if l.flagged {
                    "  ← above the threshold, check this loop"
                } else {
                    ""
                }
            ));
        }
        (g, Some(tide), Some(d))
    } else {
        (readings, None, None)
    };
    let terrain = match &job.terrain {
        Some(ti) => terrain_of(ti, &t, &pos, &h, density, obs)?,
        None => vec![0.0; n],
    };
    let red: Vec<_> = (0..n)
        .into_par_iter()
        .map(|k| reduce_station(&job.settings, observed[k], pos.lat[k], h[k], terrain[k]))
        .collect();
    write_output(&job.out, &t, &names, |k| {
        let r = &red[k];
        let mut v = vec![
            r.normal_gravity,
            r.free_air_correction,
            r.atmospheric_correction,
            r.bouguer_slab,
            r.curvature_correction,
            r.terrain_correction,
            r.free_air_anomaly,
            r.bouguer_anomaly,
            r.complete_bouguer_anomaly,
        ];
        if let (Some(tc), Some(dc)) = (&tide_corr, &drift_corr) {
            v.extend_from_slice(&[tc[k], dc[k], observed[k]]);
        }
        v
    })?;
    // Nettleton's density over the whole survey, as a check on the density.
    let faa: Vec<f64> = red.iter().map(|r| r.free_air_anomaly).collect();
    let per_density: Vec<f64> = (0..n)
        .map(|k| {
            (red[k].bouguer_slab - red[k].curvature_correction - red[k].terrain_correction)
                / density
        })
        .collect();
    match fieldstone_core::reduce::nettleton::nettleton(&faa, &per_density, &h, (1.8, 3.2), 0.05) {
        Ok(r) => obs.message(&format!("Nettleton density of least correlation with elevation over {} stations: {:.2} g/cm³ (a check, not a replacement for rock measurements)", r.n, r.density_g_cc)),
        Err(e) => obs.warning(&format!("Nettleton density not estimated: {e}")),
    }
    obs.message(&format!(
        "reduce gravity: {n} stations -> {} (reduction density {density} g/cm³: density models from these anomalies are contrasts relative to it; heights as given in height_m — the standard expects ellipsoidal heights)",
        job.out.display(),
    ));
    Ok(n)
}

/// Terrain corrections at every station, in the DEM's projected reference.
fn terrain_of(
    ti: &TerrainInputs,
    t: &fieldstone_core::table::passthrough::PassThroughTable,
    pos: &super::table::Positions,
    h: &[f64],
    density: f64,
    obs: &dyn Observer,
) -> Result<Vec<f64>> {
    let n = t.n_rows();
    let dem = read_geotiff(&ti.dem).map_err(|e| e.to_string())?;
    let far = ti
        .far_dem
        .as_ref()
        .map(|p| read_geotiff(p))
        .transpose()
        .map_err(|e| e.to_string())?;
    let (x, y) = match &pos.xy {
        Some((x, y, crs)) => {
            if let Some(code) = dem.epsg.filter(|c| *c != crs.epsg()) {
                return Err(format!(
                    "{} is in EPSG:{code} but the stations are in EPSG:{}; use one reference",
                    ti.dem.display(),
                    crs.epsg()
                )
                .into());
            }
            (x.clone(), y.clone())
        }
        None => {
            let code = dem.epsg.ok_or_else(|| format!("{} has no EPSG code, so latitude/longitude stations cannot be placed on it; give x, y and their EPSG code", ti.dem.display()))?;
            let crs = Crs::from_epsg(code).map_err(|e| format!("{}: {e}", ti.dem.display()))?;
            let mut xs = Vec::with_capacity(n);
            let mut ys = Vec::with_capacity(n);
            for k in 0..n {
                let (p, q) = crs
                    .project(pos.lat[k], pos.lon[k])
                    .map_err(|e| format!("{}: line {}: {e}", t.file.display(), t.lines[k]))?;
                xs.push(p);
                ys.push(q);
            }
            (xs, ys)
        }
    };
    let st: Vec<[f64; 3]> = (0..n).map(|k| [x[k], y[k], h[k]]).collect();
    let ts = TerrainSettings {
        density_g_cc: density,
        inner_radius_m: ti.inner_m,
        outer_radius_m: ti.outer_m,
        ..Default::default()
    };
    terrain_corrections(&dem, far.as_ref(), &st, &ts, obs).map_err(|e| match e {
        TerrainError::Cancelled => Error::Cancelled,
        TerrainError::StationOutside { index, .. } => Error::Input(format!(
            "{}: line {}: {e}",
            t.file.display(),
            t.lines[index]
        )),
        _ => Error::Input(e.to_string()),
    })
}
