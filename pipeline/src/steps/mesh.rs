//! Mesh: the tensor mesh from the project's recipe, its active cells under
//! the terrain, the size estimate (`data/mesh.json`, `data/active.npy`).

use super::{kinds, Stage, StepJob};
use crate::context::Context;
use crate::data::{load_points, write_text};
use crate::error::Result;
use crate::paths::data_path;
use crate::runfiles::prov;
use fieldstone_core::export::voxel::{mesh_description, write_npy};
use fieldstone_core::memory::available_or_assumed;
use fieldstone_core::mesh::size::estimate;
use fieldstone_core::project::file::{ProjectFile, Scenario};
use fieldstone_core::project::provenance::hash_json;
use std::path::{Path, PathBuf};

/// The mesh step.
pub struct Mesh;

impl Stage for Mesh {
    fn key(&self) -> &'static str {
        "mesh"
    }
    fn title(&self) -> &'static str {
        "build the mesh and its active cells"
    }
    fn parameters(&self, p: &ProjectFile, _s: Option<&Scenario>) -> String {
        hash_json(&p.mesh)
    }
    fn outputs(&self, dir: &Path, _p: &ProjectFile, _s: Option<&Scenario>) -> Vec<PathBuf> {
        vec![data_path(dir, "mesh.json"), data_path(dir, "active.npy")]
    }
    fn run(&self, job: &mut StepJob<'_>) -> Result<String> {
        // A new recipe makes a new mesh: load it afresh.
        job.context.forget_model();
        mesh_step(job.dir, job.project, job.context)
    }
}

fn mesh_step(dir: &Path, p: &ProjectFile, ctx: &mut Context) -> Result<String> {
    let m = ctx.model(p)?;
    let n_data = kinds(p)
        .iter()
        .map(|(k, ..)| {
            load_points(&data_path(dir, &format!("{k}_data.csv")))
                .map(|d| d.value.len())
                .unwrap_or(0)
        })
        .max()
        .unwrap_or(0);
    let est = estimate(
        m.mesh.n_cells(),
        m.active.count(),
        n_data,
        Some(available_or_assumed()),
    );
    let pv = prov(p, "mesh recipe of project.json", "m");
    let mut desc =
        serde_json::to_value(mesh_description(&m.mesh, &pv)).map_err(|e| e.to_string())?;
    desc["active_cells"] = m.active.count().into();
    desc["size_estimate"] = serde_json::to_value(&est).map_err(|e| e.to_string())?;
    write_text(
        &data_path(dir, "mesh.json"),
        &serde_json::to_string_pretty(&desc).unwrap_or_default(),
    )?;
    let act: Vec<f64> = m.active.as_values();
    write_npy(&data_path(dir, "active.npy"), &m.mesh, &act).map_err(|e| e.to_string())?;
    let [nx, ny, nz] = m.mesh.shape();
    Ok(format!(
        "{nx} × {ny} × {nz} = {} cells, {} active; dense sensitivity {:.0} MB",
        m.mesh.n_cells(),
        m.active.count(),
        est.dense_bytes as f64 / 1e6
    ))
}
