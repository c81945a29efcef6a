//! `fieldstone export PROJECT_DIR --scenario NAME --what WHAT --format FORMAT --out FILE`

use crate::pipeline::{self};
use clap::{Args, ValueEnum};
use fieldstone_core::export::figure::grid_figure;
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
            What::Grids => "tif (into a folder)",
        }
    )
    .to_lowercase()
}

fn write_figure(
    out: &std::path::Path,
    fig: &fieldstone_core::export::figure::Figure,
    f: Format,
) -> Result<(), String> {
    let bytes = if f == Format::Png {
        fig.png()
    } else {
        fig.svg().into_bytes()
    };
    std::fs::write(out, bytes).map_err(|er| format!("{}: {er}", out.display()))
}

pub fn run(a: &ExportArgs) -> Result<(), String> {
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
                    );
                    write_figure(&a.out, &fig, f)?;
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
                    let fig = grid_figure(&g, &format!("{} — plan slice {level:?}", s.name), mu);
                    write_figure(&a.out, &fig, f)?;
                }
            }
        }
        (What::Data, Format::Csv) => {
            let src = pipeline::run_dir(&a.project_dir, &s.name).join("predicted.csv");
            std::fs::copy(&src, &a.out)
                .map_err(|er| format!("{}: {er} (run the scenario first)", src.display()))?;
            let _ = du;
        }
        (What::Grids, Format::Tif) => {
            std::fs::create_dir_all(&a.out).map_err(|er| format!("{}: {er}", a.out.display()))?;
            let data = a.project_dir.join("data");
            let mut n = 0;
            for entry in std::fs::read_dir(&data)
                .map_err(|er| format!("{}: {er} (run the project first)", data.display()))?
            {
                let path = entry.map_err(|er| er.to_string())?.path();
                if path.extension().is_some_and(|e| e == "tif") {
                    let to = a.out.join(path.file_name().unwrap_or_default());
                    std::fs::copy(&path, &to).map_err(|er| format!("{}: {er}", to.display()))?;
                    n += 1;
                }
            }
            eprintln!("{n} grids copied");
        }
        (w, f) => return Err(refuse(w, f)),
    }
    eprintln!(
        "export: {:?} of '{}' -> {}",
        a.what,
        s.name,
        a.out.display()
    );
    Ok(())
}
