//! `fieldstone grid --in FILE --x COL --y COL --value COL --cell M --out OUT.tif|OUT.csv`

use clap::{Args, ValueEnum};
use fieldstone_core::grid::biharmonic::biharmonic;
use fieldstone_core::grid::blank::{blank_by_distance, blank_outside, convex_hull, suggest_cell};
use fieldstone_core::grid::geotiff::write_geotiff;
use fieldstone_core::grid::mincurv::{min_curvature, MinCurvSettings};
use fieldstone_core::grid::{Grid2, MAX_NODES};
use fieldstone_core::io::atomic::{write_atomically, WriteError};
use fieldstone_core::progress::{Observer, Silent};
use fieldstone_core::survey::lines::{split_lines, SplitRule};
use fieldstone_core::survey::qc::spacing_of;
use fieldstone_core::table::read::read_table;
use fieldstone_core::table::{ColumnData, TextOptions};
use std::path::{Path, PathBuf};

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

fn column(t: &fieldstone_core::table::Table, name: &str) -> Result<Vec<f64>, String> {
    let i = t.column_index(name).ok_or_else(|| {
        format!(
            "{}: no column '{name}' (found: {})",
            t.file.display(),
            t.names.join(", ")
        )
    })?;
    match &t.columns[i] {
        ColumnData::Number(v) => Ok(v.clone()),
        ColumnData::Text(_) => Err(format!(
            "{}: column '{name}' is text, not numbers",
            t.file.display()
        )),
    }
}

pub fn run(a: &GridArgs) -> Result<(), String> {
    run_with(a, &Silent)
}

/// [`run`] reporting to `obs`, which may cancel the interpolation.
pub fn run_with(a: &GridArgs, obs: &dyn Observer) -> Result<(), String> {
    if !(a.cell.is_finite() && a.cell > 0.0) {
        return Err(format!(
            "--cell {} must be a positive size in metres",
            a.cell
        ));
    }
    let ext = a
        .out
        .extension()
        .and_then(|e| e.to_str())
        .map(|e| e.to_ascii_lowercase())
        .unwrap_or_default();
    if !matches!(ext.as_str(), "tif" | "tiff" | "csv") {
        return Err(format!(
            "--out {}: the output must end in .tif or .csv",
            a.out.display()
        ));
    }
    let t = read_table(&a.input, &TextOptions::default(), None).map_err(|e| e.to_string())?;
    let (x, y, v) = (column(&t, &a.x)?, column(&t, &a.y)?, column(&t, &a.value)?);
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
        return Err(format!(
            "{}: no rows have both coordinates",
            a.input.display()
        ));
    }
    let gx0 = (x0 / a.cell).floor() * a.cell;
    let gy0 = (y0 / a.cell).floor() * a.cell;
    let nx = ((x1 - gx0) / a.cell).ceil() as usize + 1;
    let ny = ((y1 - gy0) / a.cell).ceil() as usize + 1;
    if nx.saturating_mul(ny) > MAX_NODES {
        return Err(format!(
            "a {} m cell over this survey makes {nx} × {ny} = {} nodes ({:.0} MB per grid, more with the solver's work space), above the {MAX_NODES}-node limit; use a cell of at least {:.1} m",
            a.cell,
            nx * ny,
            (nx * ny) as f64 * 8.0 / 1e6,
            a.cell * ((nx * ny) as f64 / MAX_NODES as f64).sqrt()
        ));
    }
    let lines = split_lines(&x, &y, &SplitRule::default());
    let sp = spacing_of(&x, &y, &lines);
    let (suggested, why) = suggest_cell(sp.line_spacing_m, sp.along_line_m);
    eprintln!(
        "suggested cell: {suggested:.1} m ({why}); using {} m",
        a.cell
    );
    let mut template =
        Grid2::new_empty(gx0, gy0, a.cell, a.cell, nx, ny).map_err(|e| e.to_string())?;
    template.epsg = a.epsg;
    template.units = a.units.clone();
    let mut g = match a.method {
        Method::MinCurvature => min_curvature(
            &x,
            &y,
            &v,
            &template,
            &MinCurvSettings {
                tension: a.tension,
                ..Default::default()
            },
            obs,
        ),
        Method::Biharmonic => biharmonic(&x, &y, &v, &template, obs),
    }
    .map_err(|e| format!("{}: {e}", a.input.display()))?;
    // Default: four cells, but never less than the line spacing, so nodes
    // half-way between lines keep their values (common practice).
    let blank = a.blank_m.unwrap_or_else(|| {
        let ls = if sp.line_spacing_m.is_finite() {
            sp.line_spacing_m
        } else {
            0.0
        };
        (4.0 * a.cell).max(ls)
    });
    blank_by_distance(&mut g, &x, &y, blank);
    if a.hull {
        blank_outside(&mut g, &convex_hull(&x, &y));
    }
    g.note = format!(
        "{:?} grid of '{}' from {} (cell {} m, tension {}, blank {} m)",
        a.method,
        a.value,
        a.input.display(),
        a.cell,
        a.tension,
        blank
    );
    write_grid(&a.out, &g)?;
    eprintln!(
        "grid: {nx} × {ny} nodes, {} with data -> {}",
        g.n_valid(),
        a.out.display()
    );
    Ok(())
}

/// Writes a grid as GeoTIFF or as x,y,value CSV by the file's extension.
pub fn write_grid(out: &Path, g: &Grid2) -> Result<(), String> {
    let ext = out
        .extension()
        .and_then(|e| e.to_str())
        .map(|e| e.to_ascii_lowercase())
        .unwrap_or_default();
    if ext == "csv" {
        struct E(String);
        impl From<WriteError> for E {
            fn from(e: WriteError) -> Self {
                E(e.to_string())
            }
        }
        let r: Result<(), E> = write_atomically(out, |w| {
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
        r.map_err(|e| e.0)
    } else {
        write_geotiff(out, g).map_err(|e| e.to_string())
    }
}
