//! Gravity readings to free-air, Bouguer and complete Bouguer anomalies,
//! with the meter's calibration, tide, a base network adjusted by least
//! squares and drift in base-station loops for relative readings, and the
//! terrain correction from a DEM. A survey is one or more files, read
//! through core's importer.

use super::survey_files::{read_survey_files, write_survey, ReadOptions, SurveyFile};
use super::table::guard_inputs;
use crate::error::{Error, Result};
use fieldstone_core::geodesy::crs::Crs;
use fieldstone_core::grid::read::read_grid;
use fieldstone_core::progress::Observer;
use fieldstone_core::reduce::drift::{reduce_loops, DriftError};
use fieldstone_core::reduce::gravity::{reduce_station, GravitySettings};
use fieldstone_core::reduce::meter::MeterTable;
use fieldstone_core::reduce::network::{adjust_network, read_bases, BaseObservation, NetworkError};
use fieldstone_core::reduce::terrain::{terrain_corrections, TerrainError, TerrainSettings};
use fieldstone_core::reduce::tide::tide_effect_mgal;
use fieldstone_core::survey::columns::Role;
use fieldstone_core::survey::import::TimeOrigin;
use rayon::prelude::*;
use std::collections::BTreeMap;
use std::path::PathBuf;

/// A priori standard deviation of one base reading in the network
/// adjustment, mGal (common practice for modern spring and quartz meters:
/// 0.005–0.02). Equal for every reading, it sets only the scale of the
/// reported standard errors before the a-posteriori factor.
pub const BASE_READING_SD_MGAL: f64 = 0.01;

/// Densities a Nettleton estimate may take and still be reported as one,
/// g/cm³: from loose sediment to the densest common rocks (common
/// practice: about 1.6–3.2 for near-surface rock).
const NETTLETON_PLAUSIBLE_G_CC: (f64, f64) = (1.0, 3.5);

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

/// One gravity reduction: the files of a survey in, one table with the
/// reductions out.
#[derive(Debug, Clone, PartialEq)]
pub struct GravityJob {
    /// The survey's files (one a day, say), read through the importer: any
    /// self-describing header; lat, lon or easting, northing (with `epsg` in
    /// `read`), height, the reading, and for relative readings time and
    /// station.
    pub inputs: Vec<PathBuf>,
    pub out: PathBuf,
    /// Role and unit overrides and the projected reference.
    pub read: ReadOptions,
    /// Reduction density, ellipsoid, height and atmospheric choices.
    pub settings: GravitySettings,
    pub terrain: Option<TerrainInputs>,
    /// Relative readings tied to one base of known value.
    pub base: Option<BaseTie>,
    /// Relative readings tied to a network of bases: a table of station ids
    /// and absolute gravity (blank where unknown), adjusted by least squares.
    pub bases: Option<PathBuf>,
    /// The meter's calibration table: the readings are in counter units.
    pub meter_table: Option<PathBuf>,
    /// Loops drifting faster than this are flagged, mGal per hour.
    pub max_drift_mgal_per_h: f64,
    /// Correct for the earth tide (false when the meter already did).
    pub tide: bool,
    /// Gravimetric factor of the tide.
    pub gravimetric_factor: f64,
    /// Date of the readings (YYYY-MM-DD) when the time column holds times of day.
    pub date: Option<String>,
}

/// One reduced reading, for the steps after the reduction.
#[derive(Debug, Clone, PartialEq)]
pub struct ReducedReading {
    /// Easting, northing (m, in the survey's projected reference) and height (m).
    pub xyz: [f64; 3],
    pub complete_bouguer_anomaly_mgal: f64,
    /// A reading at a base station (not a survey station).
    pub at_base: bool,
}

/// Observed gravity of every row of one file, with the tide and drift
/// corrections for relative readings.
struct Observed {
    gravity_mgal: Vec<f64>,
    tide_mgal: Option<Vec<f64>>,
    drift_mgal: Option<Vec<f64>>,
}

/// Reduces the readings of `job`, reporting loops, the base network and
/// checks to `obs` (which may cancel the terrain correction). Returns every
/// reading's position and complete Bouguer anomaly, in file order then row
/// order.
pub fn reduce_gravity(job: &GravityJob, obs: &dyn Observer) -> Result<Vec<ReducedReading>> {
    let mut inputs: Vec<&std::path::Path> = job.inputs.iter().map(|p| p.as_path()).collect();
    inputs.extend(job.bases.as_deref());
    inputs.extend(job.meter_table.as_deref());
    guard_inputs(&job.out, &inputs)?;
    let density = job.settings.density_g_cc;
    if !(density.is_finite() && density > 0.0 && density < 10.0) {
        return Err(format!("reduction density {density} is not a density in g/cm³ (expected about 1.8 to 3.3; 2.67 is the common choice)").into());
    }
    let relative = job.base.is_some() || job.bases.is_some();
    let mut names: Vec<&str> = GRAVITY_COLUMNS.to_vec();
    if relative {
        names.extend_from_slice(&DRIFT_COLUMNS);
    }
    let files = read_survey_files(&job.inputs, &job.read, &names)?;
    let observed: Vec<Observed> = if relative {
        relative_gravity(job, &files, obs)?
    } else {
        files
            .iter()
            .map(|f| {
                Ok(Observed {
                    gravity_mgal: f
                        .channel(
                            Role::Gravity,
                            "observed gravity",
                            "gravity_mgal or reading (absolute gravity; relative readings need --base-value and --base-station, or --bases)",
                        )?
                        .to_vec(),
                    tide_mgal: None,
                    drift_mgal: None,
                })
            })
            .collect::<Result<_>>()?
    };
    let bases = listed_bases(job)?;
    let mut red = Vec::with_capacity(files.len());
    let mut readings = Vec::new();
    let (mut faa, mut per_density, mut heights) = (Vec::new(), Vec::new(), Vec::new());
    for (f, o) in files.iter().zip(&observed) {
        let (lat, _) = f.lat_lon()?;
        let h = f.heights()?;
        let ids = if bases.is_empty() {
            None
        } else {
            Some(f.station_ids("the station ids")?)
        };
        let terrain = match &job.terrain {
            Some(ti) => terrain_of(ti, f, h, density, obs)?,
            None => vec![0.0; h.len()],
        };
        let r: Vec<_> = (0..h.len())
            .into_par_iter()
            .map(|k| reduce_station(&job.settings, o.gravity_mgal[k], lat[k], h[k], terrain[k]))
            .collect();
        for (k, x) in r.iter().enumerate() {
            readings.push(ReducedReading {
                xyz: [f.survey.x[k], f.survey.y[k], h[k]],
                complete_bouguer_anomaly_mgal: x.complete_bouguer_anomaly,
                at_base: ids.as_ref().is_some_and(|i| bases.contains_key(&i[k])),
            });
            faa.push(x.free_air_anomaly);
            per_density
                .push((x.bouguer_slab - x.curvature_correction - x.terrain_correction) / density);
            heights.push(h[k]);
        }
        red.push(r);
    }
    write_survey(&job.out, &files, &names, |k, i| {
        let r = &red[k][i];
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
        let o = &observed[k];
        if let (Some(tc), Some(dc)) = (&o.tide_mgal, &o.drift_mgal) {
            v.extend_from_slice(&[tc[i], dc[i], o.gravity_mgal[i]]);
        }
        v
    })?;
    let n = faa.len();
    // Nettleton's density over the whole survey, as a check on the density.
    match fieldstone_core::reduce::nettleton::nettleton(&faa, &per_density, &heights, (1.8, 3.2), 0.05) {
        Ok(r) if (NETTLETON_PLAUSIBLE_G_CC.0..=NETTLETON_PLAUSIBLE_G_CC.1).contains(&r.density_g_cc) => obs.message(&format!("Nettleton density of least correlation with elevation over {} stations: {:.2} g/cm³ (a check, not a replacement for rock measurements)", r.n, r.density_g_cc)),
        Ok(r) => obs.warning(&format!("Nettleton's method gives no usable density here: the anomalies of these {} stations correlate with elevation as no rock density would ({:.2} g/cm³ at zero correlation); a regional trend or too little relief dominates, so rely on rock measurements", r.n, r.density_g_cc)),
        Err(e) => obs.warning(&format!("Nettleton density not estimated: {e}")),
    }
    obs.message(&format!(
        "reduce gravity: {n} stations from {} file(s) -> {} (reduction density {density} g/cm³: density models from these anomalies are contrasts relative to it; heights as given — the standard expects ellipsoidal heights)",
        files.len(),
        job.out.display(),
    ));
    Ok(readings)
}

/// The bases of a relative survey: the table's, and the one tie of
/// `--base-value`/`--base-station`; station → value when known.
fn listed_bases(job: &GravityJob) -> Result<BTreeMap<String, Option<f64>>> {
    let mut listed = match &job.bases {
        Some(p) => read_bases(p)?,
        None => BTreeMap::new(),
    };
    if let Some(b) = &job.base {
        if let Some(Some(v)) = listed.get(&b.station) {
            if *v != b.value_mgal {
                return Err(format!(
                    "base '{}' is {} mGal in the bases table but {} mGal in --base-value; give one value",
                    b.station, v, b.value_mgal
                )
                .into());
            }
        }
        listed.insert(b.station.clone(), Some(b.value_mgal));
    }
    Ok(listed)
}

/// Relative readings to observed gravity: the meter's calibration, the
/// tide, the base network (adjusted when a table of bases is given) and
/// linear drift in base-to-base loops.
fn relative_gravity(
    job: &GravityJob,
    files: &[SurveyFile],
    obs: &dyn Observer,
) -> Result<Vec<Observed>> {
    let meter = job
        .meter_table
        .as_ref()
        .map(|p| MeterTable::read(p))
        .transpose()
        .map_err(|e| Error::Input(e.to_string()))?;
    let listed = listed_bases(job)?;
    let known: BTreeMap<String, f64> = listed
        .iter()
        .filter_map(|(k, v)| v.map(|v| (k.clone(), v)))
        .collect();
    if known.is_empty() {
        return Err("no base has a known absolute value: give the values in the bases table, or use --base-value with --base-station".into());
    }
    // Per file: station ids, times, readings in mGal with the tide applied.
    struct Prepared {
        ids: Vec<String>,
        times: Vec<f64>,
        tide: Vec<f64>,
        corrected: Vec<f64>,
    }
    let mut prepared = Vec::with_capacity(files.len());
    for f in files {
        let ids = f.station_ids("the station ids (drift needs the base readings)")?;
        let (times, origin) = f.times(job.date.as_deref())?;
        let raw = f.channel(
            Role::Gravity,
            "the meter readings",
            "reading or gravity_mgal",
        )?;
        let reading_col = f.header_of(Role::Gravity).unwrap_or("gravity");
        let mgal: Vec<f64> = match &meter {
            Some(m) => raw
                .iter()
                .enumerate()
                .map(|(r, c)| {
                    m.to_mgal(*c).map_err(|e| {
                        Error::Input(format!(
                            "{}: line {}, column '{reading_col}': {e}",
                            f.path.display(),
                            f.line(r)
                        ))
                    })
                })
                .collect::<Result<_>>()?,
            None => raw.to_vec(),
        };
        let tide: Vec<f64> = if job.tide {
            match origin {
                TimeOrigin::Epoch => {}
                TimeOrigin::Midnight => return Err(format!(
                    "{}: the times are times of day without a date, and the tide needs the date; give --date YYYY-MM-DD (or --no-tide when the meter corrected the tide)",
                    f.path.display()
                ).into()),
                TimeOrigin::Unknown => return Err(format!(
                    "{}: column '{}' holds elapsed time, so the tide cannot be computed; give --no-tide when the meter corrected the tide, or times with a date",
                    f.path.display(),
                    f.header_of(Role::Time).unwrap_or("time")
                ).into()),
            }
            let (lat, lon) = f.lat_lon()?;
            let h = f.heights()?;
            (0..times.len())
                .map(|k| -tide_effect_mgal(times[k], lat[k], lon[k], h[k], job.gravimetric_factor))
                .collect()
        } else {
            vec![0.0; times.len()]
        };
        let corrected = mgal.iter().zip(&tide).map(|(r, c)| r + c).collect();
        prepared.push(Prepared {
            ids,
            times,
            tide,
            corrected,
        });
    }
    // The base network: every base gets a value.
    let values: BTreeMap<String, f64> = if job.bases.is_some() {
        let mut readings = Vec::new();
        for (k, p) in prepared.iter().enumerate() {
            for r in 0..p.ids.len() {
                if listed.contains_key(&p.ids[r]) {
                    readings.push(BaseObservation {
                        file: k,
                        time_s: p.times[r],
                        station: p.ids[r].clone(),
                        reading_mgal: p.corrected[r],
                        sd_mgal: BASE_READING_SD_MGAL,
                    });
                }
            }
        }
        let name = |k: usize| files[k].path.display().to_string();
        let adj = adjust_network(&readings, &known).map_err(|e| {
            Error::Input(match e {
                NetworkError::OneTime { file } => format!(
                    "{}: bases are read at one time only; a loop needs a base reading at its start and at its end",
                    name(file)
                ),
                NetworkError::NotTied { stations, files: fs } => {
                    let fs: Vec<String> = fs
                        .split(", ")
                        .filter_map(|k| k.parse::<usize>().ok())
                        .map(name)
                        .collect();
                    format!("base(s) {stations} are read only in files that read no base of known value ({}); tie them with a loop through a known base", fs.join(", "))
                }
                e => e.to_string(),
            })
        })?;
        obs.message(&format!(
            "base network: {} readings of {} bases in {} file(s), adjusted by least squares (redundancy {}{})",
            readings.len(),
            adj.bases.len(),
            files.len(),
            adj.redundancy,
            adj.sigma0
                .map(|s| format!(", a-posteriori σ₀ {s:.2} for readings of ±{BASE_READING_SD_MGAL} mGal"))
                .unwrap_or_default()
        ));
        for b in &adj.bases {
            obs.message(&format!(
                "base {}: {:.4} mGal {}, {} readings, residual RMS {:.4} mGal",
                b.station,
                b.value_mgal,
                match (b.known, b.sd_mgal) {
                    (true, _) => "(known, held)".to_string(),
                    (false, Some(sd)) => format!("(adjusted, ± {sd:.4})"),
                    (false, None) => "(adjusted, no redundancy)".to_string(),
                },
                b.readings,
                b.rms_residual_mgal
            ));
        }
        for d in &adj.drift {
            obs.message(&format!(
                "{}: drift of the day {:+.4} mGal/h (network fit)",
                name(d.file),
                d.rate_mgal_per_h
            ));
        }
        adj.values()
    } else {
        known.clone()
    };
    let mut out = Vec::with_capacity(files.len());
    for (f, p) in files.iter().zip(prepared) {
        if let (Some(b), None) = (&job.base, &job.bases) {
            if p.ids.iter().filter(|s| **s == b.station).count() < 2 && p.ids.len() > 1 {
                return Err(format!(
                    "{}: {}",
                    f.path.display(),
                    DriftError::TooFewBases(b.station.clone())
                )
                .into());
            }
        }
        let r = reduce_loops(
            &p.times,
            &p.ids,
            &p.corrected,
            &values,
            job.max_drift_mgal_per_h,
        )
        .map_err(|e| {
            let line = match &e {
                DriftError::NotMonotonic { row, .. }
                | DriftError::Outside { row }
                | DriftError::Missing { row } => Some(f.line(*row)),
                _ => None,
            };
            match line {
                Some(l) => format!("{}: line {l}: {e}", f.path.display()),
                None => format!(
                    "{}: {e} (bases: {})",
                    f.path.display(),
                    values.keys().cloned().collect::<Vec<_>>().join(", ")
                ),
            }
        })?;
        for (k, l) in r.loops.iter().enumerate() {
            obs.message(&format!(
                "{}: loop {}: {} → {}, lines {}–{}, {:.2} h, drift {:+.4} mGal/h{}",
                f.path.display(),
                k + 1,
                l.opening,
                l.closing,
                f.line(l.start_row),
                f.line(l.end_row),
                l.duration_h,
                l.rate_mgal_per_h,
                if l.flagged {
                    "  ← above the threshold, check this loop"
                } else {
                    ""
                }
            ));
        }
        out.push(Observed {
            gravity_mgal: r.gravity_mgal,
            tide_mgal: Some(p.tide),
            drift_mgal: Some(r.correction_mgal),
        });
    }
    Ok(out)
}

/// Terrain corrections at every station of one file, in the DEM's
/// projected reference.
fn terrain_of(
    ti: &TerrainInputs,
    f: &SurveyFile,
    h: &[f64],
    density: f64,
    obs: &dyn Observer,
) -> Result<Vec<f64>> {
    let dem = read_grid(&ti.dem).map_err(|e| e.to_string())?;
    let far = ti
        .far_dem
        .as_ref()
        .map(|p| read_grid(p))
        .transpose()
        .map_err(|e| e.to_string())?;
    let s = &f.survey;
    let (x, y) = match (&s.crs, dem.epsg) {
        (Some(c), Some(code)) if c.epsg() == code => (s.x.clone(), s.y.clone()),
        // A DEM without a reference is taken to be in the easting/northing
        // the user gave with their EPSG code.
        (_, None) if f.spec.epsg.is_some() && f.header_of(Role::Easting).is_some() => {
            (s.x.clone(), s.y.clone())
        }
        (_, None) => {
            return Err(Error::Input(format!("{} has no EPSG code, so the stations cannot be placed on it; give their easting/northing and its EPSG code (--epsg)", ti.dem.display())))
        }
        (_, Some(code)) => {
            // Project the readings' latitude and longitude into the DEM's
            // reference.
            let (lat, lon) = f.lat_lon().map_err(|_| {
                Error::Input(format!(
                    "{} is in EPSG:{code} but the stations' reference is not known; give --epsg for their easting/northing",
                    ti.dem.display()
                ))
            })?;
            let crs = Crs::from_epsg(code).map_err(|e| format!("{}: {e}", ti.dem.display()))?;
            let mut xs = Vec::with_capacity(lat.len());
            let mut ys = Vec::with_capacity(lat.len());
            for k in 0..lat.len() {
                let (p, q) = crs
                    .project(lat[k], lon[k])
                    .map_err(|e| format!("{}: line {}: {e}", f.path.display(), f.line(k)))?;
                xs.push(p);
                ys.push(q);
            }
            (xs, ys)
        }
    };
    let st: Vec<[f64; 3]> = (0..h.len()).map(|k| [x[k], y[k], h[k]]).collect();
    let ts = TerrainSettings {
        density_g_cc: density,
        inner_radius_m: ti.inner_m,
        outer_radius_m: ti.outer_m,
        ..Default::default()
    };
    terrain_corrections(&dem, far.as_ref(), &st, &ts, obs).map_err(|e| match e {
        TerrainError::Cancelled => Error::Cancelled,
        TerrainError::StationOutside { index, .. } => {
            Error::Input(format!("{}: line {}: {e}", f.path.display(), f.line(index)))
        }
        _ => Error::Input(e.to_string()),
    })
}
