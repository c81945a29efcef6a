//! `fieldstone export PROJECT_DIR --scenario NAME --what WHAT --format FORMAT --out FILE`

use crate::pipeline::{self};
use clap::{Args, ValueEnum};
use fieldstone_core::export::section::{plan_slice, section, SliceLevel};
use fieldstone_core::export::voxel::{write_cell_table, write_npy, write_vtr, CellArray};
use fieldstone_core::grid::geotiff::write_geotiff;
use fieldstone_core::project::file::ProjectFile;
use std::fmt::Write as _;
use std::path::PathBuf;

#[derive(Debug, Clone, Copy, PartialEq, Eq, ValueEnum)]
pub enum What {
    /// The model of a run (cell values).
    Model,
    /// The constraint arrays of a scenario.
    Constraints,
    /// A section along --line.
    Section,
    /// A plan slice at --depth-m below the surface or --elevation-m.
    Slice,
    /// Observed, predicted and residual data of a run.
    Data,
    /// Every grid of the project (data, regional, residual) into the folder --out.
    Grids,
}

#[derive(Debug, Clone, Copy, PartialEq, Eq, ValueEnum)]
pub enum Format {
    Vtr,
    Npy,
    Csv,
    Tif,
    Png,
    Svg,
}

#[derive(Debug, Args)]
pub struct ExportArgs {
    pub project_dir: PathBuf,
    /// The scenario whose run to export.
    #[arg(long, alias = "run")]
    pub scenario: String,
    #[arg(long, value_enum)]
    pub what: What,
    #[arg(long, value_enum)]
    pub format: Format,
    #[arg(long)]
    pub out: PathBuf,
    /// Section vertices "x,y;x,y;..." or "x1,y1,x2,y2,...", project coordinates in
    /// metres (default: east-west through the centre of the core).
    #[arg(long)]
    pub line: Option<String>,
    #[arg(long = "depth-m", allow_hyphen_values = true)]
    pub depth_m: Option<f64>,
    #[arg(long = "elevation-m", allow_hyphen_values = true)]
    pub elevation_m: Option<f64>,
    /// PNG resolution in dots per inch, 50 to 600 (default: the project's
    /// export setting, else 100).
    #[arg(long)]
    pub dpi: Option<f64>,
    /// Colour map of figures: viridis, cividis, diverging or grey (default:
    /// diverging for values of both signs, else viridis).
    #[arg(long = "colour-map", alias = "color-map")]
    pub colour_map: Option<String>,
    /// Map figures: contour interval in the grid's units, or "auto".
    #[arg(long, allow_hyphen_values = true)]
    pub contours: Option<String>,
    /// Map figures: shade the colours by the grid's relief.
    #[arg(long)]
    pub hillshade: bool,
    /// Section figures: holes and data within this distance of the line are
    /// projected onto it, metres (default: the project's setting, else one core cell).
    #[arg(long = "hole-distance-m")]
    pub hole_distance_m: Option<f64>,
}

/// Figure options from the command line over the project's export settings.
fn style_of(a: &ExportArgs, p: &ProjectFile) -> Result<(pipeline::FigureStyle, f64), String> {
    use fieldstone_core::export::figure::{ColourMap, BASE_DPI, DPI_RANGE};
    let mut st = pipeline::FigureStyle::of(p);
    if let Some(name) = &a.colour_map {
        st.colour_map = Some(ColourMap::named(name).ok_or_else(|| {
            format!(
                "--colour-map: '{name}' is not one of {}",
                ColourMap::NAMES.join(", ")
            )
        })?);
    }
    if let Some(d) = a.hole_distance_m {
        if !(d.is_finite() && d >= 0.0) {
            return Err(format!(
                "--hole-distance-m: {d} is not a distance in metres (0 or more)"
            ));
        }
        st.hole_distance_m = Some(d);
    }
    st.hillshade = a.hillshade;
    st.contour_interval = match a.contours.as_deref() {
        None => None,
        Some("auto") => Some(f64::NAN),
        Some(t) => match t.parse::<f64>() {
            Ok(v) if v.is_finite() && v > 0.0 => Some(v),
            _ => {
                return Err(format!(
                    "--contours: '{t}' is not a positive interval in the grid's units or 'auto'"
                ))
            }
        },
    };
    let dpi = a.dpi.or(p.exports.figure_dpi).unwrap_or(BASE_DPI);
    if !DPI_RANGE.contains(&dpi) {
        return Err(format!(
            "--dpi: {dpi} is outside {} to {} dots per inch",
            DPI_RANGE.start(),
            DPI_RANGE.end()
        ));
    }
    Ok((st, dpi))
}

fn parse_line(s: &str) -> Result<Vec<[f64; 2]>, String> {
    if !s.contains(';') {
        let v: Vec<f64> = s
            .split(',')
            .map(|t| t.trim().parse::<f64>())
            .collect::<Result<_, _>>()
            .map_err(|_| format!("--line: '{s}' is not x1,y1,x2,y2,... in metres"))?;
        if v.len() < 4 || !v.len().is_multiple_of(2) {
            return Err(format!("--line: '{s}' needs at least two x,y pairs"));
        }
        return Ok(v.chunks(2).map(|c| [c[0], c[1]]).collect());
    }
    s.split(';')
        .map(|v| {
            let xy: Vec<f64> = v
                .split(',')
                .map(|t| t.trim().parse::<f64>())
                .collect::<Result<_, _>>()
                .map_err(|_| format!("--line: '{v}' is not x,y in metres"))?;
            match xy.as_slice() {
                [x, y] => Ok([*x, *y]),
                _ => Err(format!("--line: '{v}' is not x,y in metres")),
            }
        })
        .collect()
}

fn refuse(what: What, f: Format) -> String {
    format!(
        "--what {what:?} cannot be written as {f:?}; use {}",
        match what {
            What::Model | What::Constraints => "vtr, npy or csv",
            What::Section => "csv, png or svg",
            What::Slice => "tif, csv, png or svg",
            What::Data => "csv",
            What::Grids => "tif, png or svg (into a folder)",
        }
    )
    .to_lowercase()
}

fn write_figure(
    out: &std::path::Path,
    fig: &fieldstone_core::export::figure::Figure,
    f: Format,
    dpi: f64,
) -> super::CliResult {
    let bytes = if f == Format::Png {
        fig.png_at_dpi(dpi)
    } else {
        fig.svg().into_bytes()
    };
    Ok(
        fieldstone_core::io::atomic::write_bytes_atomically(out, &bytes)
            .map_err(|e| e.to_string())?,
    )
}

fn level_text(l: SliceLevel) -> String {
    match l {
        SliceLevel::Depth(d) => format!("{d} m below the surface"),
        SliceLevel::Elevation(z) => format!("at {z} m elevation"),
    }
}

/// Station positions for a map of a data grid: gravity stations for
/// gravity grids, magnetic readings (every one up to 5,000, then thinned)
/// for magnetic grids, none for others.
fn grid_stations(dir: &std::path::Path, stem: &str) -> Vec<[f64; 2]> {
    let file = if stem.starts_with("gravity") {
        "gravity_stations.csv"
    } else if stem.starts_with("magnetic") {
        "magnetic_points.csv"
    } else {
        return vec![];
    };
    match pipeline::load_points(&dir.join("data").join(file)) {
        Ok(pts) => {
            let step = pts.xyz.len().div_ceil(5000).max(1);
            pts.xyz.iter().step_by(step).map(|p| [p[0], p[1]]).collect()
        }
        Err(_) => vec![],
    }
}

/// Units of a data grid: its own, else guessed from its name.
fn grid_units(stem: &str, g: &fieldstone_core::grid::Grid2) -> String {
    if !g.units.is_empty() {
        g.units.clone()
    } else if stem.starts_with("gravity") {
        "mGal".into()
    } else if stem.starts_with("magnetic") {
        "nT".into()
    } else {
        String::new()
    }
}

pub fn run(a: &ExportArgs) -> super::CliResult {
    let p = ProjectFile::load(&a.project_dir)
        .map_err(|e| e.to_string())?
        .project;
    let s = p
        .scenarios
        .iter()
        .find(|s| s.name == a.scenario)
        .ok_or_else(|| {
            format!(
                "no scenario '{}' (there are: {})",
                a.scenario,
                p.scenarios
                    .iter()
                    .map(|s| s.name.as_str())
                    .collect::<Vec<_>>()
                    .join(", ")
            )
        })?;
    let (style, dpi) = style_of(a, &p)?;
    let m = pipeline::load_model_context(&a.project_dir, &p)?;
    let (mu, du) = pipeline::units_of(s.data);
    let model = || {
        pipeline::load_model(&a.project_dir, &s.name, m.mesh.n_cells()).map_err(|e| {
            format!(
                "{e} (run the scenario first: fieldstone run {} --scenario {})",
                a.project_dir.display(),
                s.name
            )
        })
    };
    let pv = pipeline::prov(&p, &format!("scenario '{}'", s.name), mu);
    let e = |e: fieldstone_core::export::voxel::ExportError| e.to_string();
    match (a.what, a.format) {
        (What::Model, Format::Vtr) => write_vtr(
            &a.out,
            &m.mesh,
            &[CellArray {
                name: "model",
                values: &model()?,
            }],
            &pv,
            true,
        )
        .map_err(e)?,
        (What::Model, Format::Npy) => write_npy(&a.out, &m.mesh, &model()?).map_err(e)?,
        (What::Model, Format::Csv) => write_cell_table(
            &a.out,
            &m.mesh,
            &m.active.active,
            &[CellArray {
                name: "model",
                values: &model()?,
            }],
            &pv,
        )
        .map_err(e)?,
        (What::Constraints, f @ (Format::Vtr | Format::Csv | Format::Npy)) => {
            let (c, _) = pipeline::constraints_of(&m, s)?;
            match f {
                Format::Vtr => pipeline::write_constraints(&a.out, &m.mesh, &c, &p, s)?,
                Format::Csv => write_cell_table(&a.out, &m.mesh, &c.active, &[CellArray { name: "lower", values: &c.lower }, CellArray { name: "upper", values: &c.upper }, CellArray { name: "reference", values: &c.reference }, CellArray { name: "reference_weight", values: &c.reference_weight }, CellArray { name: "starting", values: &c.starting }], &pv).map_err(e)?,
                _ => return Err("constraints as .npy: use fieldstone constraints, which writes one .npy per array".into()),
            }
        }
        (What::Section, f @ (Format::Csv | Format::Png | Format::Svg)) => {
            let [(i0, i1), (j0, j1), _] = m.mesh.core;
            let yc = 0.5 * (m.mesh.y[j0] + m.mesh.y[j1]);
            let line = match a.line.as_deref() {
                Some(l) => parse_line(l)?,
                None => vec![[m.mesh.x[i0], yc], [m.mesh.x[i1], yc]],
            };
            let step = m.mesh.x[m.mesh.core[0].0 + 1] - m.mesh.x[m.mesh.core[0].0];
            let samples = section(&m.mesh, &model()?, &line, step).map_err(e)?;
            match f {
                Format::Csv => {
                    let mut t = format!("# section of scenario '{}', {mu}; NaN in air\ndistance_m,x,y,elevation_m,value\n", s.name);
                    for q in &samples {
                        writeln!(
                            t,
                            "{:.2},{:.2},{:.2},{:.2},{:.6}",
                            q.distance_m, q.x, q.y, q.elevation_m, q.value
                        )
                        .ok();
                    }
                    pipeline::write_text(&a.out, &t)?;
                }
                _ => {
                    let fig = pipeline::run_section_figure(
                        &a.project_dir,
                        &p,
                        &m,
                        s,
                        &samples,
                        &line,
                        &format!("{} — section", s.name),
                        &style,
                    );
                    write_figure(&a.out, &fig, f, dpi)?;
                }
            }
        }
        (What::Slice, f @ (Format::Tif | Format::Csv | Format::Png | Format::Svg)) => {
            let level = match (a.depth_m, a.elevation_m) {
                (Some(d), None) => SliceLevel::Depth(d),
                (None, Some(z)) => SliceLevel::Elevation(z),
                (None, None) => {
                    let (k0, k1) = m.mesh.core[2];
                    SliceLevel::Depth(0.5 * (m.mesh.z[k1] - m.mesh.z[k0]))
                }
                _ => {
                    return Err(
                        "--what slice takes one of --depth-m or --elevation-m, not both".into(),
                    )
                }
            };
            let g = plan_slice(&m.mesh, &model()?, level, Some(&m.active.surface_m)).map_err(e)?;
            match f {
                Format::Tif => write_geotiff(&a.out, &g).map_err(|er| er.to_string())?,
                Format::Csv => {
                    let mut t = format!(
                        "# plan slice of scenario '{}' at {level:?}, {mu}\nx,y,value\n",
                        s.name
                    );
                    for j in 0..g.ny {
                        for i in 0..g.nx {
                            let v = g.get(i, j);
                            if v.is_finite() {
                                writeln!(t, "{:.2},{:.2},{v:.6}", g.x_of(i), g.y_of(j)).ok();
                            }
                        }
                    }
                    pipeline::write_text(&a.out, &t)?;
                }
                _ => {
                    let fig = pipeline::run_slice_figure(
                        &p,
                        &m,
                        s,
                        &g,
                        format!("{} — plan slice {}", s.name, level_text(level)),
                        &style,
                    );
                    write_figure(&a.out, &fig, f, dpi)?;
                }
            }
        }
        (What::Data, Format::Csv) => {
            let src = pipeline::run_dir(&a.project_dir, &s.name).join("predicted.csv");
            std::fs::copy(&src, &a.out)
                .map_err(|er| format!("{}: {er} (run the scenario first)", src.display()))?;
            let _ = du;
        }
        (What::Grids, f @ (Format::Tif | Format::Png | Format::Svg)) => {
            std::fs::create_dir_all(&a.out).map_err(|er| format!("{}: {er}", a.out.display()))?;
            let data = a.project_dir.join("data");
            let mut n = 0;
            let mut paths: Vec<PathBuf> = std::fs::read_dir(&data)
                .map_err(|er| format!("{}: {er} (run the project first)", data.display()))?
                .filter_map(|e| e.ok().map(|e| e.path()))
                .filter(|p| p.extension().is_some_and(|e| e == "tif"))
                .collect();
            paths.sort();
            // The run's own grids: predicted data and misfit.
            let rd = pipeline::run_dir(&a.project_dir, &s.name);
            let run_grids: Vec<PathBuf> = ["predicted.tif", "misfit.tif"]
                .iter()
                .map(|f| rd.join(f))
                .filter(|p| p.exists())
                .collect();
            let prefix = pipeline::safe_name(&s.name);
            for path in paths.into_iter().chain(run_grids.iter().cloned()) {
                let from_run = run_grids.contains(&path);
                let file = path
                    .file_name()
                    .unwrap_or_default()
                    .to_string_lossy()
                    .to_string();
                let name: std::ffi::OsString = if from_run {
                    format!("{prefix}_{file}").into()
                } else {
                    file.into()
                };
                if f == Format::Tif {
                    let to = a.out.join(&name);
                    std::fs::copy(&path, &to).map_err(|er| format!("{}: {er}", to.display()))?;
                } else {
                    let g = fieldstone_core::grid::geotiff::read_geotiff(&path)
                        .map_err(|er| format!("{}: {er}", path.display()))?;
                    let stem = std::path::Path::new(&name)
                        .file_stem()
                        .unwrap_or_default()
                        .to_string_lossy()
                        .to_string();
                    let stations = if from_run {
                        vec![]
                    } else {
                        grid_stations(&a.project_dir, &stem)
                    };
                    let units = if from_run {
                        du.to_string()
                    } else {
                        grid_units(&stem, &g)
                    };
                    let opts = pipeline::map_options(
                        &p,
                        Some(&m),
                        None,
                        stations,
                        &style,
                        stem.replace('_', " "),
                        &units,
                    );
                    let fig = fieldstone_core::export::figure::map_figure(&g, &opts);
                    let ext = if f == Format::Png { "png" } else { "svg" };
                    write_figure(&a.out.join(format!("{stem}.{ext}")), &fig, f, dpi)?;
                }
                n += 1;
            }
            eprintln!("{n} grids written");
        }
        (w, f) => return Err(refuse(w, f).into()),
    }
    eprintln!(
        "export: {:?} of '{}' -> {}",
        a.what,
        s.name,
        a.out.display()
    );
    Ok(())
}
