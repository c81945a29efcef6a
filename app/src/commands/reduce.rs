//! `fieldstone reduce gravity ...` and `fieldstone reduce magnetic ...`

//!
//! The options are translated into the pipeline's reduction jobs
//! (`fieldstone_pipeline::reduction`), which the project's reduce step runs
//! too; messages go to stderr.

use super::{CliResult, Stderr};
use clap::{Args, Subcommand, ValueEnum};
use fieldstone_core::geodesy::normal_gravity::GravityEllipsoid;
use fieldstone_core::reduce::gravity::{FreeAir, GravitySettings};
use fieldstone_pipeline::reduction::{
    reduce_gravity, reduce_magnetic, split_pair, BaseTie, GravityJob, MagneticJob, ReadOptions,
    TerrainInputs,
};
use std::path::PathBuf;

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
    /// A file of the survey (repeat for one file a day): any delimited table
    /// whose header names its columns — coordinates (lat, lon, or easting,
    /// northing with --epsg), height, the reading, and for relative readings
    /// time and station. Roles and units are guessed from the header
    /// (`fieldstone inspect FILE` shows the guesses).
    #[arg(long = "in", value_name = "FILE", required = true)]
    pub inputs: Vec<PathBuf>,
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
    /// Terrain model for the terrain correction: GeoTIFF (.tif), ESRI ASCII
    /// grid (.asc) or gridded XYZ text (.xyz).
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
    /// Table of base stations (CSV): station id and absolute gravity in mGal
    /// (blank where unknown). The readings are relative; the bases are
    /// adjusted by least squares and every reading is tied to them in loops.
    #[arg(long, value_name = "BASES.csv")]
    pub bases: Option<PathBuf>,
    /// The meter's calibration table (counter reading, value in mGal,
    /// interval factor per row): the readings are in counter units.
    #[arg(long = "meter-table", value_name = "TABLE.csv")]
    pub meter_table: Option<PathBuf>,
    #[command(flatten)]
    pub read: ReadArgs,
}

/// How the survey files are read: overrides of the guessed roles and units.
#[derive(Debug, Args)]
pub struct ReadArgs {
    /// Gives a role to the column of that header, overriding the guess
    /// (repeatable); ROLE is one of the keys `fieldstone inspect --roles` lists.
    #[arg(long = "column", value_name = "ROLE=HEADER")]
    pub columns: Vec<String>,
    /// The unit of the column of that header (repeatable): m, ft, usft,
    /// mGal, gu, nT, deg; for the time column s, min or h of elapsed time,
    /// clock, hours_of_day or seconds_of_day.
    #[arg(long = "unit", value_name = "HEADER=UNIT")]
    pub units: Vec<String>,
}

impl ReadArgs {
    /// The read options with the projected reference `epsg`.
    pub fn options(&self, epsg: Option<u32>) -> Result<ReadOptions, fieldstone_pipeline::Error> {
        let pairs = |option: &str, v: &[String]| {
            v.iter()
                .map(|t| split_pair(option, t))
                .collect::<Result<Vec<_>, _>>()
        };
        Ok(ReadOptions {
            columns: pairs("--column", &self.columns)?,
            units: pairs("--unit", &self.units)?,
            epsg,
        })
    }
}

#[derive(Debug, Args)]
pub struct MagneticArgs {
    /// A file of the survey (repeat for several): coordinates (lat, lon, or
    /// easting, northing with --epsg), height, the reading in nT, and a time
    /// for the diurnal correction; roles and units guessed from the header.
    #[arg(long = "in", value_name = "FILE", required = true)]
    pub inputs: Vec<PathBuf>,
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
    #[command(flatten)]
    pub read: ReadArgs,
}

pub fn run(cmd: &ReduceCommand) -> CliResult {
    match cmd {
        ReduceCommand::Gravity(a) => {
            reduce_gravity(&gravity_job(a)?, &Stderr::default())?;
        }
        ReduceCommand::Magnetic(a) => {
            reduce_magnetic(&magnetic_job(a)?, &Stderr::default())?;
        }
    }
    Ok(())
}

/// The reduction the gravity options ask for.
pub fn gravity_job(a: &GravityArgs) -> Result<GravityJob, fieldstone_pipeline::Error> {
    Ok(GravityJob {
        inputs: a.inputs.clone(),
        out: a.out.clone(),
        read: a.read.options(a.epsg)?,
        settings: GravitySettings {
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
        },
        terrain: match (&a.dem, a.terrain_outer_m) {
            (Some(dem), Some(outer_m)) => Some(TerrainInputs {
                dem: dem.clone(),
                inner_m: a.terrain_inner_m,
                outer_m,
                far_dem: a.far_dem.clone(),
            }),
            _ => None,
        },
        base: BaseTie::of(a.base_value, a.base_station.as_deref()),
        bases: a.bases.clone(),
        meter_table: a.meter_table.clone(),
        max_drift_mgal_per_h: a.max_drift,
        tide: !a.no_tide,
        gravimetric_factor: a.gravimetric_factor,
        date: a.date.clone(),
    })
}

/// The reduction the magnetic options ask for.
pub fn magnetic_job(a: &MagneticArgs) -> Result<MagneticJob, fieldstone_pipeline::Error> {
    Ok(MagneticJob {
        inputs: a.inputs.clone(),
        read: a.read.options(a.epsg)?,
        date: a.date.clone(),
        out: a.out.clone(),
        base: a.base.clone(),
        datum_nt: a.datum_nt,
        max_gap_s: a.max_gap_s,
    })
}
