//! `fieldstone grid --in FILE --x COL --y COL --value COL --cell M --out OUT.tif|OUT.csv`

//!
//! The options are translated into the pipeline's gridding job, which the
//! project's grid step runs too.

use super::{CliResult, Stderr};
use clap::{Args, ValueEnum};
use fieldstone_pipeline::gridding::{grid_points, GridJob};
use std::path::PathBuf;

#[derive(Debug, Clone, Copy, ValueEnum)]
pub enum Method {
    MinCurvature,
    Biharmonic,
}

#[derive(Debug, Args)]
pub struct GridArgs {
    /// Delimited text file with the data.
    #[arg(long = "in", value_name = "FILE")]
    pub input: PathBuf,
    /// Column of x (easting, metres).
    #[arg(long)]
    pub x: String,
    /// Column of y (northing, metres).
    #[arg(long)]
    pub y: String,
    /// Column of the values to grid.
    #[arg(long)]
    pub value: String,
    /// Cell size, metres (square cells).
    #[arg(long)]
    pub cell: f64,
    /// Output: .tif (Float32 GeoTIFF) or .csv (x,y,value, nodata rows omitted).
    #[arg(long)]
    pub out: PathBuf,
    /// Tension, 0 to 1 (minimum curvature only).
    #[arg(long, default_value_t = 0.25)]
    pub tension: f64,
    /// Blank nodes farther than this from any datum, metres (default 4 cells
    /// or the line spacing, whichever is larger).
    #[arg(long = "blank-m")]
    pub blank_m: Option<f64>,
    /// Also blank nodes outside the convex hull of the data.
    #[arg(long)]
    pub hull: bool,
    #[arg(long, value_enum, default_value = "min-curvature")]
    pub method: Method,
    /// EPSG code of x and y, written into the GeoTIFF.
    #[arg(long)]
    pub epsg: Option<u32>,
    /// Units of the values, recorded with the grid (e.g. mGal, nT).
    #[arg(long, default_value = "")]
    pub units: String,
}

pub fn run(a: &GridArgs) -> CliResult {
    grid_points(&job(a), &Stderr::default())?;
    Ok(())
}

/// The gridding the options ask for.
pub fn job(a: &GridArgs) -> GridJob {
    GridJob {
        input: a.input.clone(),
        x: a.x.clone(),
        y: a.y.clone(),
        value: a.value.clone(),
        cell_m: a.cell,
        out: a.out.clone(),
        tension: a.tension,
        blank_m: a.blank_m,
        hull: a.hull,
        method: match a.method {
            Method::MinCurvature => fieldstone_pipeline::gridding::Method::MinCurvature,
            Method::Biharmonic => fieldstone_pipeline::gridding::Method::Biharmonic,
        },
        epsg: a.epsg,
        units: a.units.clone(),
    }
}
