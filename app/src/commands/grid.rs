//! `fieldstone grid --in FILE --value COL --cell M --out OUT.tif|OUT.csv`
//! `[--x COL --y COL] [--column ROLE=HEADER ...] [--unit HEADER=UNIT ...] [--epsg CODE]`
//!
//! The file is read through core's importer, like every command that reads
//! line data: coordinates are taken from the guessed roles (easting and
//! northing, or longitude and latitude projected to the UTM zone of the
//! survey centre), `--x`/`--y` or `--column` override the guesses. The
//! options are translated into the pipeline's gridding job, which the
//! project's grid step runs too.

use super::reduce::ReadArgs;
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
    /// Line data: a delimited table whose header names its columns, or an
    /// ASEG-GDF2 .dat with its .dfn beside it.
    #[arg(long = "in", value_name = "FILE")]
    pub input: PathBuf,
    /// Column of x (easting, metres); short for --column x=COL.
    #[arg(long)]
    pub x: Option<String>,
    /// Column of y (northing, metres); short for --column y=COL.
    #[arg(long)]
    pub y: Option<String>,
    /// Column of the values to grid (any numeric column).
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
    /// Also blank nodes outside the survey outline(s) in this GeoJSON
    /// (.geojson) or shapefile (.shp), holes included; brought into the
    /// grid's reference.
    #[arg(long, value_name = "OUTLINE")]
    pub outline: Option<PathBuf>,
    #[arg(long, value_enum, default_value = "min-curvature")]
    pub method: Method,
    /// EPSG code of the x and y columns, written into the GeoTIFF
    /// (longitude/latitude are projected to the UTM zone of the survey
    /// centre without it).
    #[arg(long)]
    pub epsg: Option<u32>,
    /// Units of the values, recorded with the grid (e.g. mGal, nT); by
    /// default the unit read from the header.
    #[arg(long = "units", default_value = "")]
    pub value_units: String,
    #[command(flatten)]
    pub read: ReadArgs,
}

pub fn run(a: &GridArgs) -> CliResult {
    grid_points(&job(a)?, &Stderr::default())?;
    Ok(())
}

/// The gridding the options ask for.
pub fn job(a: &GridArgs) -> Result<GridJob, fieldstone_pipeline::Error> {
    let mut read = a.read.options(a.epsg)?;
    // --x and --y come first so that a --column naming the same role wins.
    let mut given = Vec::new();
    if let Some(x) = &a.x {
        given.push(("x".to_string(), x.clone()));
    }
    if let Some(y) = &a.y {
        given.push(("y".to_string(), y.clone()));
    }
    given.append(&mut read.columns);
    read.columns = given;
    Ok(GridJob {
        input: a.input.clone(),
        value: a.value.clone(),
        read,
        cell_m: a.cell,
        out: a.out.clone(),
        tension: a.tension,
        blank_m: a.blank_m,
        hull: a.hull,
        outline: a.outline.clone(),
        method: match a.method {
            Method::MinCurvature => fieldstone_pipeline::gridding::Method::MinCurvature,
            Method::Biharmonic => fieldstone_pipeline::gridding::Method::Biharmonic,
        },
        units: a.value_units.clone(),
    })
}
