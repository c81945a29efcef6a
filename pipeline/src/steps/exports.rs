//! Exports: what the project's export settings ask for from a run — the
//! predicted and misfit grids, sections and plan slices as CSV, GeoTIFF and
//! figures (`runs/<scenario>/exports.json` lists them).

use super::{planned_run_dir, Stage, StepJob};
use crate::context::Context;
use crate::data::write_text;
use crate::error::{Error, Result};
use crate::figures::{run_section_figure, run_slice_figure, FigureStyle};
use crate::paths::{data_path, run_dir, safe_name};
use crate::runfiles::{load_model, read_predicted, units_of};
use fieldstone_core::export::figure::BASE_DPI;
use fieldstone_core::export::section::{plan_slice, section, SliceLevel};
use fieldstone_core::grid::geotiff::{read_geotiff, write_geotiff};
use fieldstone_core::io::atomic::write_bytes_atomically;
use fieldstone_core::progress::Observer;
use fieldstone_core::project::file::{DataKind, ProjectFile, Scenario};
use fieldstone_core::project::provenance::hash_json;
use std::fmt::Write as _;
use std::path::{Path, PathBuf};

/// The exports step.
pub struct Exports;

impl Stage for Exports {
    fn key(&self) -> &'static str {
        "exports"
    }
    fn title(&self) -> &'static str {
        "write sections, slices, grids and figures"
    }
    fn per_scenario(&self) -> bool {
        true
    }
    fn parameters(&self, p: &ProjectFile, _s: Option<&Scenario>) -> String {
        hash_json(&p.exports)
    }
    fn outputs(&self, dir: &Path, _p: &ProjectFile, s: Option<&Scenario>) -> Vec<PathBuf> {
        vec![planned_run_dir(dir, s).join("exports.json")]
    }
    fn run(&self, job: &mut StepJob<'_>) -> Result<String> {
        let s = job.scenario()?;
        exports(job.dir, job.project, job.context, s, job.observer)
    }
}

/// Predicted data and misfit (observed − predicted) of a run gridded on the
/// lattice of the residual grid it inverted (minimum curvature, blanked where
/// that grid is blank): `predicted.tif` and `misfit.tif` in the run folder.
fn fit_grids(dir: &Path, s: &Scenario, rd: &Path, observer: &dyn Observer) -> Result<Vec<String>> {
    let kind = match s.data {
        DataKind::Gravity => "gravity",
        DataKind::Magnetic => "magnetic",
    };
    let (_, du) = units_of(s.data);
    let Some((obs, pred)) = read_predicted(&rd.join("predicted.csv")) else {
        return Ok(vec![]);
    };
    let template = read_geotiff(&data_path(dir, &format!("{kind}_residual.tif")))
        .map_err(|e| e.to_string())?;
    let x: Vec<f64> = obs.xyz.iter().map(|p| p[0]).collect();
    let y: Vec<f64> = obs.xyz.iter().map(|p| p[1]).collect();
    let misfit: Vec<f64> = obs.value.iter().zip(&pred).map(|(o, q)| o - q).collect();
    let settings = fieldstone_core::grid::mincurv::MinCurvSettings::default();
    let mut files = vec![];
    for (name, v, what) in [
        ("predicted", &pred, "predicted data"),
        ("misfit", &misfit, "observed minus predicted"),
    ] {
        let mut g = fieldstone_core::grid::mincurv::min_curvature(
            &x, &y, v, &template, &settings, observer,
        )
        .map_err(|e| format!("gridding the {what} of '{}': {e}", s.name))?;
        for (gv, tv) in g.values.iter_mut().zip(&template.values) {
            if !tv.is_finite() {
                *gv = f64::NAN;
            }
        }
        g.units = du.into();
        g.epsg = template.epsg;
        g.note = format!(
            "{what} of scenario {}, gridded by minimum curvature",
            s.name
        );
        let f = format!("{name}.tif");
        write_geotiff(&rd.join(&f), &g).map_err(|e| e.to_string())?;
        files.push(f);
    }
    Ok(files)
}

fn exports(
    dir: &Path,
    p: &ProjectFile,
    ctx: &mut Context,
    s: &Scenario,
    obs: &dyn Observer,
) -> Result<String> {
    let stop = || -> Result<()> {
        if obs.cancelled() {
            Err(Error::Cancelled)
        } else {
            Ok(())
        }
    };
    let m = ctx.model(p)?;
    let model = load_model(dir, &s.name, m.mesh.n_cells())?;
    let rd = run_dir(dir, &s.name);
    let (mu, _) = units_of(s.data);
    stop()?;
    let mut files = fit_grids(dir, s, &rd, obs)?;
    let step = m.mesh.x[m.mesh.core[0].0 + 1] - m.mesh.x[m.mesh.core[0].0];
    for line in &p.exports.sections {
        stop()?;
        let samples = section(&m.mesh, &model, &line.vertices, step).map_err(|e| e.to_string())?;
        let mut csv = format!(
            "# section '{}' of scenario '{}', {mu}; NaN in air\ndistance_m,x,y,elevation_m,value\n",
            line.name, s.name
        );
        for q in &samples {
            writeln!(
                csv,
                "{:.2},{:.2},{:.2},{:.2},{:.6}",
                q.distance_m, q.x, q.y, q.elevation_m, q.value
            )
            .ok();
        }
        let f = format!("section_{}.csv", safe_name(&line.name));
        write_text(&rd.join(&f), &csv)?;
        files.push(f);
        if p.exports.figures {
            let fig = run_section_figure(
                dir,
                p,
                m,
                s,
                &samples,
                &line.vertices,
                &format!("{} — section {}", s.name, line.name),
                &FigureStyle::of(p),
            );
            let dpi = p.exports.figure_dpi.unwrap_or(BASE_DPI);
            for (ext, bytes) in [
                ("png", fig.png_at_dpi(dpi)),
                ("svg", fig.svg().into_bytes()),
            ] {
                let f = format!("section_{}.{ext}", safe_name(&line.name));
                write_bytes_atomically(&rd.join(&f), &bytes).map_err(|e| e.to_string())?;
                files.push(f);
            }
        }
    }
    for d in &p.exports.slice_depths_m {
        stop()?;
        let g = plan_slice(
            &m.mesh,
            &model,
            SliceLevel::Depth(*d),
            Some(&m.active.surface_m),
        )
        .map_err(|e| e.to_string())?;
        let f = format!("slice_{d}m_depth.tif");
        write_geotiff(&rd.join(&f), &g).map_err(|e| e.to_string())?;
        files.push(f);
        if p.exports.figures {
            let fig = run_slice_figure(
                p,
                m,
                s,
                &g,
                format!("{} — plan slice {d} m below the surface", s.name),
                &FigureStyle::of(p),
            );
            let dpi = p.exports.figure_dpi.unwrap_or(BASE_DPI);
            for (ext, bytes) in [
                ("png", fig.png_at_dpi(dpi)),
                ("svg", fig.svg().into_bytes()),
            ] {
                let f = format!("slice_{d}m_depth.{ext}");
                write_bytes_atomically(&rd.join(&f), &bytes).map_err(|e| e.to_string())?;
                files.push(f);
            }
        }
    }
    write_text(
        &rd.join("exports.json"),
        &serde_json::to_string_pretty(&files).unwrap_or_default(),
    )?;
    Ok(format!("{} files", files.len()))
}
