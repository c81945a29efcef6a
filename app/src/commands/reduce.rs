//! `fieldstone reduce gravity ...` and `fieldstone reduce magnetic ...`

use clap::{Args, Subcommand, ValueEnum};
use fieldstone_core::geodesy::crs::Crs;
use fieldstone_core::geodesy::igrf::{decimal_year_of_date, IgrfModel};
use fieldstone_core::geodesy::normal_gravity::GravityEllipsoid;
use fieldstone_core::grid::geotiff::read_geotiff;
use fieldstone_core::io::atomic::{write_atomically, WriteError};
use fieldstone_core::progress::{Observer, Silent};
use fieldstone_core::reduce::drift::{reduce_drift, DriftSettings};
use fieldstone_core::reduce::gravity::{reduce_station, FreeAir, GravitySettings};
use fieldstone_core::reduce::magnetic::{diurnal, mean_inducing_field, BaseRecord};
use fieldstone_core::reduce::terrain::{terrain_corrections, TerrainSettings};
use fieldstone_core::reduce::tide::tide_effect_mgal;
use fieldstone_core::survey::time::{
    parse_date, parse_datetime, parse_time_of_day, DateOrder, TimeFormat,
};
use fieldstone_core::table::passthrough::{read_passthrough, write_with_columns, PassThroughTable};
use rayon::prelude::*;
use std::path::{Path, PathBuf};

#[derive(Debug, Subcommand)]
pub enum ReduceCommand {
    /// Gravity readings to free-air, Bouguer and complete Bouguer anomalies.
    Gravity(GravityArgs),
    /// Magnetometer readings to total-field anomalies.
    Magnetic(MagneticArgs),
}

#[derive(Debug, Clone, Copy, ValueEnum)]
pub enum EllipsoidArg {
    Grs80,
    Wgs84,
}

#[derive(Debug, Clone, Copy, ValueEnum)]
pub enum FreeAirArg {
    SecondOrder,
    FirstOrder,
}

#[derive(Debug, Args)]
pub struct GravityArgs {
    /// Station table (CSV): lat, lon (or x, y with --epsg), height_m,
    /// gravity_mgal, and optional time, station, line.
    #[arg(long = "in", value_name = "FILE")]
    pub input: PathBuf,
    /// Reduction (Bouguer) density, g/cm³; the background of every density model.
    #[arg(long)]
    pub density: f64,
    #[arg(long, value_name = "OUT.csv")]
    pub out: PathBuf,
    /// Ellipsoid of normal gravity.
    #[arg(long, value_enum, default_value = "grs80")]
    pub ellipsoid: EllipsoidArg,
    /// Height correction.
    #[arg(long = "free-air", value_enum, default_value = "second-order")]
    pub free_air: FreeAirArg,
    /// Leave out the atmospheric correction.
    #[arg(long)]
    pub no_atmospheric: bool,
    /// Leave out the curvature (Bullard B) correction.
    #[arg(long)]
    pub no_curvature: bool,
    /// Terrain model (GeoTIFF) for the terrain correction.
    #[arg(long, value_name = "DEM.tif", requires = "terrain_outer_m")]
    pub dem: Option<PathBuf>,
    /// Outer radius of the terrain correction, metres.
    #[arg(long = "terrain-outer-m", requires = "dem")]
    pub terrain_outer_m: Option<f64>,
    /// Inner radius of the terrain correction, metres (inner zone done in the field).
    #[arg(long = "terrain-inner-m", default_value_t = 0.0)]
    pub terrain_inner_m: f64,
    /// Coarser terrain model used beyond the extent of --dem.
    #[arg(long = "far-dem", value_name = "FAR.tif", requires = "dem")]
    pub far_dem: Option<PathBuf>,
    /// EPSG code of x, y columns (instead of lat, lon).
    #[arg(long)]
    pub epsg: Option<u32>,
    /// Absolute gravity at the base station, mGal: the readings are relative
    /// and are reduced for tide and drift in base-station loops.
    #[arg(
        long = "base-value",
        value_name = "MGAL",
        requires = "base_station",
        allow_hyphen_values = true
    )]
    pub base_value: Option<f64>,
    /// Station id of the base in the station column.
    #[arg(long = "base-station", value_name = "ID", requires = "base_value")]
    pub base_station: Option<String>,
    /// Loops drifting faster than this are flagged, mGal per hour.
    #[arg(long = "max-drift-mgal-per-h", default_value_t = 0.05)]
    pub max_drift: f64,
    /// Do not correct for the earth tide (the meter already did).
    #[arg(long)]
    pub no_tide: bool,
    /// Gravimetric factor of the tide.
    #[arg(long = "gravimetric-factor", default_value_t = 1.16)]
    pub gravimetric_factor: f64,
    /// Date of the readings (YYYY-MM-DD) when the time column holds times of day.
    #[arg(long)]
    pub date: Option<String>,
}

#[derive(Debug, Args)]
pub struct MagneticArgs {
    /// Reading table (CSV): lat, lon (or x, y with --epsg), height_m, mag_nt,
    /// optional time.
    #[arg(long = "in", value_name = "FILE")]
    pub input: PathBuf,
    /// Survey date for the main field (YYYY-MM-DD), and the day of times of day.
    #[arg(long)]
    pub date: String,
    #[arg(long, value_name = "OUT.csv")]
    pub out: PathBuf,
    /// Base-station record (CSV): time, mag_nt.
    #[arg(long, value_name = "BASE.csv")]
    pub base: Option<PathBuf>,
    /// Diurnal datum, nT (the base mean when omitted).
    #[arg(long = "datum-nt")]
    pub datum_nt: Option<f64>,
    /// Warn where base samples are farther apart than this, seconds.
    #[arg(long = "max-gap-s", default_value_t = 120.0)]
    pub max_gap_s: f64,
    /// EPSG code of x, y columns (instead of lat, lon).
    #[arg(long)]
    pub epsg: Option<u32>,
}

pub fn run(cmd: &ReduceCommand) -> Result<(), String> {
    match cmd {
        ReduceCommand::Gravity(a) => gravity(a),
        ReduceCommand::Magnetic(a) => magnetic(a),
    }
}

const GRAVITY_OUT: [&str; 9] = [
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
const DRIFT_OUT: [&str; 3] = [
    "tide_correction_mgal",
    "drift_correction_mgal",
    "observed_gravity_mgal",
];
const MAG_OUT: [&str; 5] = [
    "igrf_f_nt",
    "igrf_inclination_deg",
    "igrf_declination_deg",
    "diurnal_nt",
    "tmi_anomaly_nt",
];

/// Positions of every row: latitude, longitude (degrees) and projected x, y
/// when a projected reference is known.
struct Positions {
    lat: Vec<f64>,
    lon: Vec<f64>,
    xy: Option<(Vec<f64>, Vec<f64>, Crs)>,
}

fn positions(t: &PassThroughTable, epsg: Option<u32>) -> Result<Positions, String> {
    let s = |e: fieldstone_core::table::passthrough::PassThroughError| e.to_string();
    match epsg {
        Some(code) => {
            let crs = Crs::from_epsg(code).map_err(|e| format!("--epsg: {e}"))?;
            if crs.is_geographic() {
                return Err(format!("--epsg {code} is geographic; give lat and lon columns instead of x and y, or a projected code"));
            }
            let hint = "with --epsg the file needs x and y (metres)";
            let x = t
                .numbers(t.require("x", hint).map_err(s)?, true)
                .map_err(s)?;
            let y = t
                .numbers(t.require("y", hint).map_err(s)?, true)
                .map_err(s)?;
            let (mut lat, mut lon) = (Vec::with_capacity(x.len()), Vec::with_capacity(x.len()));
            for k in 0..x.len() {
                let (a, b) = crs
                    .unproject(x[k], y[k])
                    .map_err(|e| format!("{}: line {}: {e}", t.file.display(), t.lines[k]))?;
                lat.push(a);
                lon.push(b);
            }
            Ok(Positions {
                lat,
                lon,
                xy: Some((x, y, crs)),
            })
        }
        None => {
            let hint = "give lat and lon in degrees, or x and y with --epsg";
            let lat = t
                .numbers(t.require("lat", hint).map_err(s)?, true)
                .map_err(s)?;
            let lon = t
                .numbers(t.require("lon", hint).map_err(s)?, true)
                .map_err(s)?;
            for k in 0..lat.len() {
                if !(-90.0..=90.0).contains(&lat[k]) {
                    return Err(format!("{}: line {}, column 'lat': latitude {} is outside −90 to 90 (are lat and lon swapped?)", t.file.display(), t.lines[k], lat[k]));
                }
                if !(-360.0..=360.0).contains(&lon[k]) {
                    return Err(format!(
                        "{}: line {}, column 'lon': longitude {} is outside −360 to 360",
                        t.file.display(),
                        t.lines[k],
                        lon[k]
                    ));
                }
            }
            Ok(Positions { lat, lon, xy: None })
        }
    }
}

/// Times (seconds since 1970 UTC) of a time column: ISO date-times, or times
/// of day (clock, decimal hours, seconds of day) on `date`.
fn times(t: &PassThroughTable, col: usize, date: Option<&str>) -> Result<Vec<f64>, String> {
    let day = match date {
        Some(d) => Some(
            parse_date(d, DateOrder::YearMonthDay).map_err(|e| format!("--date: {e}"))? as f64
                * 86_400.0,
        ),
        None => None,
    };
    let texts: Vec<String> = (0..t.n_rows()).map(|r| t.text(r, col)).collect();
    let below_24 = texts
        .iter()
        .filter_map(|s| s.parse::<f64>().ok())
        .all(|v| v < 24.0);
    let mut out = Vec::with_capacity(texts.len());
    for (r, s) in texts.iter().enumerate() {
        let at = |m: String| {
            format!(
                "{}: line {}, column '{}': {m}",
                t.file.display(),
                t.lines[r],
                t.names[col]
            )
        };
        let is_datetime =
            s.contains('T') || s.get(1..).is_some_and(|rest| rest.contains('-')) && s.len() >= 8;
        let v = if is_datetime {
            parse_datetime(s, DateOrder::YearMonthDay).map_err(at)?
        } else {
            let sod = parse_time_of_day(s, TimeFormat::Auto, below_24).map_err(at)?;
            match day {
                Some(d) => d + sod,
                None => {
                    return Err(at(
                        "this is a time of day; give the survey date with --date".into(),
                    ))
                }
            }
        };
        out.push(v);
    }
    Ok(out)
}

fn write_output(
    out: &Path,
    t: &PassThroughTable,
    names: &[&str],
    rows: impl FnMut(usize) -> Vec<f64>,
) -> Result<(), String> {
    struct E(String);
    impl From<WriteError> for E {
        fn from(e: WriteError) -> Self {
            E(e.to_string())
        }
    }
    let r: Result<(), E> = write_atomically(out, |w| {
        write_with_columns(t, names, rows, w)
            .map_err(|e| E(format!("could not write {}: {e}", out.display())))
    });
    r.map_err(|e| e.0)
}

fn guard_inputs(out: &Path, inputs: &[&Path]) -> Result<(), String> {
    for i in inputs {
        let same = match (out.canonicalize(), i.canonicalize()) {
            (Ok(a), Ok(b)) => a == b,
            _ => out == *i,
        };
        if same {
            return Err(format!(
                "--out {} is one of the input files; choose another name so the input is kept",
                out.display()
            ));
        }
    }
    Ok(())
}

pub fn gravity(a: &GravityArgs) -> Result<(), String> {
    gravity_with(a, &Silent)
}

/// [`gravity`] reporting to `obs`, which may cancel the terrain correction.
pub fn gravity_with(a: &GravityArgs, obs: &dyn Observer) -> Result<(), String> {
    guard_inputs(&a.out, &[&a.input])?;
    if !(a.density.is_finite() && a.density > 0.0 && a.density < 10.0) {
        return Err(format!("--density {} is not a reduction density in g/cm³ (expected about 1.8 to 3.3; 2.67 is the common choice)", a.density));
    }
    let drift_mode = a.base_value.is_some();
    let mut names: Vec<&str> = GRAVITY_OUT.to_vec();
    if drift_mode {
        names.extend_from_slice(&DRIFT_OUT);
    }
    let t = read_passthrough(&a.input, &names).map_err(|e| e.to_string())?;
    let s = |e: fieldstone_core::table::passthrough::PassThroughError| e.to_string();
    let pos = positions(&t, a.epsg)?;
    let h = t.numbers(t.require("height_m", "heights in metres above the ellipsoid (the standard) or sea level (record the choice)").map_err(s)?, true).map_err(s)?;
    let g_col = t.require("gravity_mgal", "observed gravity (absolute), or relative readings with --base-value and --base-station").map_err(s)?;
    let readings = t.numbers(g_col, true).map_err(s)?;
    let n = t.n_rows();
    // Tide and drift for relative readings.
    let (observed, tide_corr, drift_corr) =
        if let (Some(base_value), Some(base_station)) = (a.base_value, &a.base_station) {
            let tc = t
                .require("time", "drift needs a time for every reading")
                .map_err(s)?;
            let sc = t
                .require(
                    "station",
                    "drift needs station ids to find the base readings",
                )
                .map_err(s)?;
            let ts = times(&t, tc, a.date.as_deref())?;
            let ids: Vec<String> = (0..n).map(|r| t.text(r, sc)).collect();
            let tide: Vec<f64> = (0..n)
                .map(|k| {
                    if a.no_tide {
                        0.0
                    } else {
                        -tide_effect_mgal(ts[k], pos.lat[k], pos.lon[k], h[k], a.gravimetric_factor)
                    }
                })
                .collect();
            let corrected: Vec<f64> = readings.iter().zip(&tide).map(|(r, c)| r + c).collect();
            let settings = DriftSettings {
                base_station: base_station.clone(),
                base_value_mgal: base_value,
                max_rate_mgal_per_h: a.max_drift,
            };
            let fieldstone_core::reduce::drift::DriftReduction {
                gravity_mgal: g,
                correction_mgal: d,
                loops,
            } = reduce_drift(&ts, &ids, &corrected, &settings).map_err(|e| {
                let line = match &e {
                    fieldstone_core::reduce::drift::DriftError::NotMonotonic { row, .. }
                    | fieldstone_core::reduce::drift::DriftError::Outside { row }
                    | fieldstone_core::reduce::drift::DriftError::Missing { row } => {
                        Some(t.lines[*row])
                    }
                    _ => None,
                };
                match line {
                    Some(l) => format!("{}: line {l}: {e}", t.file.display()),
                    None => format!("{}: {e}", t.file.display()),
                }
            })?;
            for (k, l) in loops.iter().enumerate() {
                eprintln!(
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
                );
            }
            (g, Some(tide), Some(d))
        } else {
            (readings, None, None)
        };
    // Terrain.
    let terrain = match (&a.dem, a.terrain_outer_m) {
        (Some(dem_path), Some(outer)) => {
            let dem = read_geotiff(dem_path).map_err(|e| e.to_string())?;
            let far = a
                .far_dem
                .as_ref()
                .map(|p| read_geotiff(p))
                .transpose()
                .map_err(|e| e.to_string())?;
            let (x, y) = match &pos.xy {
                Some((x, y, crs)) => {
                    if let Some(code) = dem.epsg.filter(|c| *c != crs.epsg()) {
                        return Err(format!("{} is in EPSG:{code} but the stations are in EPSG:{}; use one reference", dem_path.display(), crs.epsg()));
                    }
                    (x.clone(), y.clone())
                }
                None => {
                    let code = dem.epsg.ok_or_else(|| format!("{} has no EPSG code, so latitude/longitude stations cannot be placed on it; give x, y with --epsg", dem_path.display()))?;
                    let crs =
                        Crs::from_epsg(code).map_err(|e| format!("{}: {e}", dem_path.display()))?;
                    let mut xs = Vec::with_capacity(n);
                    let mut ys = Vec::with_capacity(n);
                    for k in 0..n {
                        let (p, q) = crs.project(pos.lat[k], pos.lon[k]).map_err(|e| {
                            format!("{}: line {}: {e}", t.file.display(), t.lines[k])
                        })?;
                        xs.push(p);
                        ys.push(q);
                    }
                    (xs, ys)
                }
            };
            let st: Vec<[f64; 3]> = (0..n).map(|k| [x[k], y[k], h[k]]).collect();
            let ts = TerrainSettings {
                density_g_cc: a.density,
                inner_radius_m: a.terrain_inner_m,
                outer_radius_m: outer,
                ..Default::default()
            };
            terrain_corrections(&dem, far.as_ref(), &st, &ts, obs).map_err(|e| match e {
                fieldstone_core::reduce::terrain::TerrainError::StationOutside {
                    index, ..
                } => format!("{}: line {}: {e}", t.file.display(), t.lines[index]),
                _ => e.to_string(),
            })?
        }
        _ => vec![0.0; n],
    };
    let settings = GravitySettings {
        density_g_cc: a.density,
        ellipsoid: match a.ellipsoid {
            EllipsoidArg::Grs80 => GravityEllipsoid::Grs80,
            EllipsoidArg::Wgs84 => GravityEllipsoid::Wgs84,
        },
        free_air: match a.free_air {
            FreeAirArg::SecondOrder => FreeAir::SecondOrder,
            FreeAirArg::FirstOrder => FreeAir::FirstOrder,
        },
        atmospheric: !a.no_atmospheric,
        curvature: !a.no_curvature,
    };
    let red: Vec<_> = (0..n)
        .into_par_iter()
        .map(|k| reduce_station(&settings, observed[k], pos.lat[k], h[k], terrain[k]))
        .collect();
    write_output(&a.out, &t, &names, |k| {
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
    // Nettleton's density over the whole survey, as a check on --density.
    let faa: Vec<f64> = red.iter().map(|r| r.free_air_anomaly).collect();
    let per_density: Vec<f64> = (0..n)
        .map(|k| {
            (red[k].bouguer_slab - red[k].curvature_correction - red[k].terrain_correction)
                / a.density
        })
        .collect();
    match fieldstone_core::reduce::nettleton::nettleton(&faa, &per_density, &h, (1.8, 3.2), 0.05) {
        Ok(r) => eprintln!("Nettleton density of least correlation with elevation over {} stations: {:.2} g/cm³ (a check, not a replacement for rock measurements)", r.n, r.density_g_cc),
        Err(e) => eprintln!("Nettleton density not estimated: {e}"),
    }
    eprintln!(
        "reduce gravity: {n} stations -> {} (reduction density {} g/cm³: density models from these anomalies are contrasts relative to it; heights as given in height_m — the standard expects ellipsoidal heights)",
        a.out.display(),
        a.density
    );
    Ok(())
}

pub fn magnetic(a: &MagneticArgs) -> Result<(), String> {
    let mut inputs: Vec<&Path> = vec![&a.input];
    if let Some(b) = &a.base {
        inputs.push(b);
    }
    guard_inputs(&a.out, &inputs)?;
    let year = decimal_year_of_date(&a.date).map_err(|e| format!("--date: {e}"))?;
    let model = IgrfModel::igrf14()
        .at_date(year)
        .map_err(|e| format!("--date {}: {e}", a.date))?;
    let t = read_passthrough(&a.input, &MAG_OUT).map_err(|e| e.to_string())?;
    let s = |e: fieldstone_core::table::passthrough::PassThroughError| e.to_string();
    let pos = positions(&t, a.epsg)?;
    let h = t
        .numbers(
            t.require(
                "height_m",
                "sensor heights in metres above the WGS 84 ellipsoid",
            )
            .map_err(s)?,
            true,
        )
        .map_err(s)?;
    let mag = t
        .numbers(
            t.require("mag_nt", "total-field readings in nT")
                .map_err(s)?,
            true,
        )
        .map_err(s)?;
    let n = t.n_rows();
    let fields: Vec<_> = (0..n)
        .into_par_iter()
        .map(|k| model.field(pos.lat[k], pos.lon[k], h[k]))
        .collect::<Result<_, _>>()
        .map_err(|e| format!("{}: {e}", t.file.display()))?;
    let diurnal_nt = match &a.base {
        Some(bp) => {
            let tc = t
                .require(
                    "time",
                    "a diurnal correction needs the time of every reading",
                )
                .map_err(s)?;
            let ts = times(&t, tc, Some(&a.date))?;
            let b = read_passthrough(bp, &[]).map_err(|e| e.to_string())?;
            let bt = times(
                &b,
                b.require("time", "the base record needs time and mag_nt")
                    .map_err(s)?,
                Some(&a.date),
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
            let bv = b.numbers(bcol, false).map_err(s)?;
            let rec = BaseRecord::new(bt, bv).map_err(|e| format!("{}: {e}", bp.display()))?;
            let (d, gaps) = diurnal(&rec, &ts, a.datum_nt, a.max_gap_s).map_err(|e| match e {
                fieldstone_core::reduce::magnetic::DiurnalError::Outside { first_row, .. } => {
                    format!("{}: line {}: {e}", t.file.display(), t.lines[first_row])
                }
                _ => format!("{} and {}: {e}", t.file.display(), bp.display()),
            })?;
            if gaps > 0 {
                eprintln!("warning: {gaps} readings were corrected across gaps longer than {} s in the base record", a.max_gap_s);
            }
            d
        }
        None => vec![0.0; n],
    };
    write_output(&a.out, &t, &MAG_OUT, |k| {
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
        eprintln!(
            "reduce magnetic: {n} readings -> {}; survey inducing field {:.0} nT, inclination {:.2}°, declination {:.2}° (IGRF-14 on {})",
            a.out.display(),
            ind.intensity_nt,
            ind.inclination_deg,
            ind.declination_deg,
            a.date
        );
    }
    Ok(())
}
