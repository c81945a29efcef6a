//! Regional: the regional field of each gridded kind and the residual,
//! as grids (`data/<kind>_regional.tif`, `_residual.tif`) and at the data
//! points with their uncertainties (`data/<kind>_data.csv`), which the
//! inversions fit.

use super::{kinds, Stage, StepJob};
use crate::data::{load_points, write_points, Points};
use crate::error::Result;
use crate::paths::data_path;
use fieldstone_core::filter::regional::{separate, RegionalMethod};
use fieldstone_core::grid::geotiff::{read_geotiff, write_geotiff};
use fieldstone_core::progress::Observer;
use fieldstone_core::project::file::{ProjectFile, Scenario};
use fieldstone_core::project::provenance::hash_json;
use std::path::{Path, PathBuf};

/// The regional step.
pub struct Regional;

impl Stage for Regional {
    fn key(&self) -> &'static str {
        "regional"
    }
    fn title(&self) -> &'static str {
        "separate regional and residual"
    }
    fn parameters(&self, p: &ProjectFile, _s: Option<&Scenario>) -> String {
        hash_json(&(&p.regional, &p.magnetic_regional))
    }
    fn outputs(&self, dir: &Path, p: &ProjectFile, _s: Option<&Scenario>) -> Vec<PathBuf> {
        kinds(p)
            .iter()
            .flat_map(|(k, ..)| {
                [
                    data_path(dir, &format!("{k}_regional.tif")),
                    data_path(dir, &format!("{k}_residual.tif")),
                    data_path(dir, &format!("{k}_data.csv")),
                ]
            })
            .collect()
    }
    fn run(&self, job: &mut StepJob<'_>) -> Result<String> {
        regional(job.dir, job.project, job.observer)
    }
}

fn regional(dir: &Path, p: &ProjectFile, obs: &dyn Observer) -> Result<String> {
    let mut parts = Vec::new();
    for (kind, file, col, _) in kinds(p) {
        let method = match kind {
            "gravity" => p
                .regional
                .clone()
                .ok_or("the project has no regional method for gravity")?,
            _ => p
                .magnetic_regional
                .clone()
                .unwrap_or(RegionalMethod::Plane {
                    origin_m: [0.0, 0.0],
                    value: 0.0,
                    gradient_per_km: [0.0, 0.0],
                }),
        };
        let g = read_geotiff(&data_path(dir, &format!("{kind}_grid.tif")))
            .map_err(|e| e.to_string())?;
        let (reg, res) = separate(&g, &method, obs).map_err(|e| e.to_string())?;
        write_geotiff(&data_path(dir, &format!("{kind}_regional.tif")), &reg)
            .map_err(|e| e.to_string())?;
        write_geotiff(&data_path(dir, &format!("{kind}_residual.tif")), &res)
            .map_err(|e| e.to_string())?;
        let pts = load_points(&data_path(dir, file))?;
        let (floor, pct) = match kind {
            "gravity" => p
                .gravity
                .as_ref()
                .map(|g| (g.uncertainty_floor_mgal, g.uncertainty_percent))
                .unwrap_or((0.02, 0.0)),
            _ => p
                .magnetic
                .as_ref()
                .map(|m| (m.uncertainty_floor_nt, m.uncertainty_percent))
                .unwrap_or((1.0, 2.0)),
        };
        let mut out = Points::default();
        let mut skipped = 0;
        for k in 0..pts.value.len() {
            match reg.sample(pts.xyz[k][0], pts.xyz[k][1]) {
                Ok(r) if r.is_finite() => {
                    let v = pts.value[k] - r;
                    out.xyz.push(pts.xyz[k]);
                    out.value.push(v);
                    out.uncertainty.push(floor + 0.01 * pct * v.abs());
                }
                _ => skipped += 1,
            }
        }
        write_points(&data_path(dir, &format!("{kind}_data.csv")), &out, &format!("residual_{col}"), &format!("residual after the regional ({method:?}) at the data points, with the data uncertainty (floor {floor} + {pct} %)"))?;
        parts.push(format!(
            "{kind}: {} residual data{}",
            out.value.len(),
            if skipped > 0 {
                format!(" ({skipped} outside the regional grid left out)")
            } else {
                String::new()
            }
        ));
    }
    Ok(parts.join("; "))
}
