//! Grid: each data kind's stations gridded by minimum curvature at the
//! project's cell size (`data/<kind>_grid.tif`).

use super::{further_kinds, kinds, Stage, StepJob};
use crate::error::Result;
use crate::gridding::{grid_points, GridJob, Method};
use crate::paths::data_path;
use crate::reduction::ReadOptions;
use fieldstone_core::progress::Observer;
use fieldstone_core::project::file::{ProjectFile, Scenario};
use fieldstone_core::project::provenance::hash_json;
use std::path::{Path, PathBuf};

/// The grid step.
pub struct Grid;

impl Stage for Grid {
    fn key(&self) -> &'static str {
        "grid"
    }
    fn title(&self) -> &'static str {
        "grid the anomalies"
    }
    fn parameters(&self, p: &ProjectFile, _s: Option<&Scenario>) -> String {
        hash_json(&p.gridding)
    }
    fn outputs(&self, dir: &Path, p: &ProjectFile, _s: Option<&Scenario>) -> Vec<PathBuf> {
        kinds(p)
            .iter()
            .map(|(k, ..)| k.to_string())
            .chain(further_kinds(p).into_iter().map(|f| f.0))
            .map(|k| data_path(dir, &format!("{k}_grid.tif")))
            .collect()
    }
    fn run(&self, job: &mut StepJob<'_>) -> Result<String> {
        grid(job.dir, job.project, job.observer)
    }
}

fn grid(dir: &Path, p: &ProjectFile, obs: &dyn Observer) -> Result<String> {
    let gs = p
        .gridding
        .clone()
        .ok_or("the project has no gridding settings")?;
    let mut parts = Vec::new();
    let all: Vec<(String, String, &str, &str)> = kinds(p)
        .into_iter()
        .map(|(k, f, c, u)| (k.to_string(), f.to_string(), c, u))
        .chain(further_kinds(p))
        .collect();
    for (kind, file, col, units) in &all {
        let out = data_path(dir, &format!("{kind}_grid.tif"));
        grid_points(
            &GridJob {
                input: data_path(dir, file),
                value: col.to_string(),
                read: ReadOptions {
                    columns: vec![("x".into(), "x".into()), ("y".into(), "y".into())],
                    units: Vec::new(),
                    epsg: p.epsg,
                },
                cell_m: gs.cell_m,
                out: out.clone(),
                tension: gs.tension,
                blank_m: None,
                hull: false,
                outline: None,
                method: Method::MinCurvature,
                units: units.to_string(),
            },
            obs,
        )?;
        parts.push(format!("{kind} gridded at {} m", gs.cell_m));
    }
    Ok(parts.join(", "))
}
