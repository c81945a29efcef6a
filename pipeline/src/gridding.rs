//! Gridding of a point table: the pipeline's grid step and the `grid`
//! command share this (minimum curvature or biharmonic spline, blanking by
//! distance and hull, GeoTIFF or CSV out).

use crate::error::{Error, Result};
use crate::reduction::survey_files::{column_values, spec_for_file, ReadOptions};
use fieldstone_core::grid::biharmonic::biharmonic;
use fieldstone_core::grid::blank::{blank_by_distance, blank_outside, convex_hull, suggest_cell};
use fieldstone_core::grid::geotiff::write_geotiff;
use fieldstone_core::grid::mincurv::{min_curvature, MinCurvSettings};
use fieldstone_core::grid::{Grid2, MAX_NODES};
use fieldstone_core::io::atomic::{write_atomically, WriteError};
use fieldstone_core::outline::read_outlines;
use fieldstone_core::progress::Observer;
use fieldstone_core::survey::columns::{unit_hint, Role};
use fieldstone_core::survey::import::import_survey;
use fieldstone_core::survey::lines::{split_lines, SplitRule};
use fieldstone_core::survey::qc::spacing_of;
use std::path::{Path, PathBuf};

/// How the values are interpolated.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Method {
    MinCurvature,
    Biharmonic,
}

/// One gridding job.
#[derive(Debug, Clone, PartialEq)]
pub struct GridJob {
    /// Line data: a delimited table or an ASEG-GDF2 `.dat`, read through
    /// core's importer (coordinates from the guessed or given roles).
    pub input: PathBuf,
    /// The column of the values to grid (any numeric column).
    pub value: String,
    /// Overrides of the importer's guesses (`x=EAST`, `height=ELEV_FT`),
    /// units, and the projected reference of easting/northing.
    pub read: ReadOptions,
    /// Cell size, metres (square cells).
    pub cell_m: f64,
    /// Output: .tif (Float32 GeoTIFF) or .csv (x,y,value, nodata rows omitted).
    pub out: PathBuf,
    /// Tension, 0 to 1 (minimum curvature only).
    pub tension: f64,
    /// Blank nodes farther than this from any datum, metres (default 4
    /// cells or the line spacing, whichever is larger).
    pub blank_m: Option<f64>,
    /// Also blank nodes outside the convex hull of the data.
    pub hull: bool,
    /// Also blank nodes outside the survey outline(s) of this GeoJSON or
    /// shapefile (holes blanked too).
    pub outline: Option<PathBuf>,
    pub method: Method,
    /// Units of the values, recorded with the grid (e.g. mGal, nT); empty:
    /// the unit the importer read.
    pub units: String,
}

/// The points of a gridding job, read through the importer.
struct Points {
    x: Vec<f64>,
    y: Vec<f64>,
    values: Vec<f64>,
    /// Program unit of the values ("mGal", "nT", "m" or "").
    unit: String,
    /// EPSG code of x, y.
    epsg: Option<u32>,
}

fn read_points(job: &GridJob) -> Result<Points> {
    let spec = spec_for_file(&job.input, &job.read)?;
    let survey = import_survey(&job.input, &spec).map_err(|e| Error::Input(e.to_string()))?;
    let values = column_values(&job.input, &spec, &survey, &job.value)?;
    let want = job.value.trim();
    let c = spec
        .columns
        .iter()
        .find(|c| c.name.eq_ignore_ascii_case(want));
    // The program unit of the column's role, or the unit its header names.
    let unit = match c {
        Some(c) if c.role == Role::Elevation => "m",
        Some(c) => survey
            .channels
            .iter()
            .find(|ch| ch.name == c.name)
            .map(|ch| ch.unit)
            .filter(|u| !u.is_empty())
            .or_else(|| unit_hint(&c.name).map(|u| u.label()))
            .unwrap_or(""),
        None => "",
    };
    let epsg = survey.crs.as_ref().map(|c| c.epsg()).or(job.read.epsg);
    Ok(Points {
        x: survey.x,
        y: survey.y,
        values,
        unit: unit.to_string(),
        epsg,
    })
}

/// Grids the data of `job` and writes the grid; `obs` may cancel the
/// interpolation. Returns the grid written.
pub fn grid_points(job: &GridJob, obs: &dyn Observer) -> Result<Grid2> {
    if !(job.cell_m.is_finite() && job.cell_m > 0.0) {
        return Err(format!("cell size {} must be a positive size in metres", job.cell_m).into());
    }
    let ext = fieldstone_core::io::ending(&job.out);
    if !matches!(ext.as_str(), "tif" | "tiff" | "csv") {
        return Err(format!(
            "output {}: the output must end in .tif or .csv",
            job.out.display()
        )
        .into());
    }
    let Points {
        x,
        y,
        values: v,
        unit,
        epsg,
    } = read_points(job)?;
    let fin = |v: &[f64]| {
        v.iter()
            .copied()
            .filter(|a| a.is_finite())
            .fold((f64::INFINITY, f64::NEG_INFINITY), |(a, b), c| {
                (a.min(c), b.max(c))
            })
    };
    let ((x0, x1), (y0, y1)) = (fin(&x), fin(&y));
    if !(x0.is_finite() && y0.is_finite()) {
        return Err(format!("{}: no rows have both coordinates", job.input.display()).into());
    }
    let cell = job.cell_m;
    let gx0 = (x0 / cell).floor() * cell;
    let gy0 = (y0 / cell).floor() * cell;
    let nx = ((x1 - gx0) / cell).ceil() as usize + 1;
    let ny = ((y1 - gy0) / cell).ceil() as usize + 1;
    if nx.saturating_mul(ny) > MAX_NODES {
        return Err(Error::Memory(format!(
            "a {cell} m cell over this survey makes {nx} × {ny} = {} nodes ({:.0} MB per grid, more with the solver's work space), above the {MAX_NODES}-node limit; use a cell of at least {:.1} m",
            nx * ny,
            (nx * ny) as f64 * 8.0 / 1e6,
            cell * ((nx * ny) as f64 / MAX_NODES as f64).sqrt()
        )));
    }
    let lines = split_lines(&x, &y, &SplitRule::default());
    let sp = spacing_of(&x, &y, &lines);
    let (suggested, why) = suggest_cell(sp.line_spacing_m, sp.along_line_m);
    obs.message(&format!(
        "suggested cell: {suggested:.1} m ({why}); using {cell} m"
    ));
    let mut template = Grid2::new_empty(gx0, gy0, cell, cell, nx, ny).map_err(|e| e.to_string())?;
    template.epsg = epsg;
    template.units = if job.units.is_empty() {
        unit
    } else {
        job.units.clone()
    };
    let gridded = match job.method {
        Method::MinCurvature => min_curvature(
            &x,
            &y,
            &v,
            &template,
            &MinCurvSettings {
                tension: job.tension,
                ..Default::default()
            },
            obs,
        ),
        Method::Biharmonic => biharmonic(&x, &y, &v, &template, obs),
    };
    let mut g = gridded.map_err(|e| match Error::from(e) {
        Error::Input(m) => Error::Input(format!("{}: {m}", job.input.display())),
        other => other,
    })?;
    // Default: four cells, but never less than the line spacing, so nodes
    // half-way between lines keep their values (common practice).
    let blank = job.blank_m.unwrap_or_else(|| {
        let ls = if sp.line_spacing_m.is_finite() {
            sp.line_spacing_m
        } else {
            0.0
        };
        (4.0 * cell).max(ls)
    });
    blank_by_distance(&mut g, &x, &y, blank);
    if job.hull {
        blank_outside(&mut g, &convex_hull(&x, &y));
    }
    if let Some(f) = &job.outline {
        let (outlines, warnings) = read_outlines(f)
            .and_then(|o| o.to_project(epsg))
            .map_err(|e| Error::Input(e.to_string()))?;
        for w in warnings {
            obs.warning(&w);
        }
        let parts: Vec<_> = outlines.iter().flat_map(|o| &o.parts).collect();
        for j in 0..g.ny {
            for i in 0..g.nx {
                let (px, py) = (g.x_of(i), g.y_of(j));
                if !parts.iter().any(|q| q.contains(px, py)) {
                    g.values[i + g.nx * j] = f64::NAN;
                }
            }
        }
    }
    g.note = format!(
        "{:?} grid of '{}' from {} (cell {cell} m, tension {}, blank {blank} m)",
        job.method,
        job.value,
        job.input.display(),
        job.tension,
    );
    write_grid(&job.out, &g)?;
    obs.message(&format!(
        "grid: {nx} × {ny} nodes, {} with data -> {}",
        g.n_valid(),
        job.out.display()
    ));
    Ok(g)
}

/// Writes a grid as GeoTIFF or as x,y,value CSV by the file's extension.
pub fn write_grid(out: &Path, g: &Grid2) -> Result<()> {
    let ext = fieldstone_core::io::ending(out);
    if ext == "csv" {
        struct E(String);
        impl From<WriteError> for E {
            fn from(e: WriteError) -> Self {
                E(e.to_string())
            }
        }
        let r: std::result::Result<(), E> = write_atomically(out, |w| {
            let io = |e: std::io::Error| E(format!("could not write {}: {e}", out.display()));
            writeln!(w, "x,y,value").map_err(io)?;
            for j in 0..g.ny {
                for i in 0..g.nx {
                    let v = g.get(i, j);
                    if v.is_finite() {
                        writeln!(w, "{},{},{}", g.x_of(i), g.y_of(j), v).map_err(io)?;
                    }
                }
            }
            Ok(())
        });
        r.map_err(|e| Error::Internal(e.0))
    } else {
        write_geotiff(out, g).map_err(|e| Error::Internal(e.to_string()))
    }
}
