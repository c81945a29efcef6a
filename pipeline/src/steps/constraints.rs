//! Constraints: a scenario's constraint layers turned into cell arrays on
//! the mesh (bounds, reference and its weight, starting model, fixed
//! cells; `runs/<scenario>/constraints.vtr`).

use super::{planned_run_dir, planned_scenario, Stage, StepJob};
use crate::context::ModelContext;
use crate::error::Result;
use crate::paths::run_dir;
use crate::runfiles::{prov, units_of};
use fieldstone_core::constraint::build::{build, ConstraintArrays, Defaults};
use fieldstone_core::export::voxel::{write_vtr, CellArray};
use fieldstone_core::mesh::TensorMesh;
use fieldstone_core::project::file::{DataKind, ProjectFile, Scenario};
use fieldstone_core::project::provenance::hash_json;
use std::path::{Path, PathBuf};

/// The constraints step.
pub struct Constraints;

impl Stage for Constraints {
    fn key(&self) -> &'static str {
        "constraints"
    }
    fn title(&self) -> &'static str {
        "build the scenario's constraint arrays"
    }
    fn per_scenario(&self) -> bool {
        true
    }
    fn parameters(&self, _p: &ProjectFile, s: Option<&Scenario>) -> String {
        let s = planned_scenario(s);
        hash_json(&(&s.layers, s.data))
    }
    fn outputs(&self, dir: &Path, _p: &ProjectFile, s: Option<&Scenario>) -> Vec<PathBuf> {
        vec![planned_run_dir(dir, s).join("constraints.vtr")]
    }
    fn run(&self, job: &mut StepJob<'_>) -> Result<String> {
        let s = job.scenario()?;
        let p = job.project;
        let m = job.context.model(p)?;
        let (c, warnings) = constraints_of(m, s)?;
        let rd = run_dir(job.dir, &s.name);
        std::fs::create_dir_all(&rd).map_err(|e| format!("{}: {e}", rd.display()))?;
        write_constraints(&rd.join("constraints.vtr"), &m.mesh, &c, p, s)?;
        for w in &warnings {
            job.observer.warning(w);
        }
        let free = c
            .active
            .iter()
            .zip(&c.fixed)
            .filter(|(a, f)| **a && !**f)
            .count();
        Ok(format!(
            "{} layers, {free} free active cells, {} warnings",
            s.layers.iter().filter(|l| l.enabled).count(),
            warnings.len()
        ))
    }
}

/// The constraint arrays of a scenario.
pub fn constraints_of(m: &ModelContext, s: &Scenario) -> Result<(ConstraintArrays, Vec<String>)> {
    let d = match s.data {
        DataKind::Gravity => Defaults::density(),
        DataKind::Magnetic => Defaults::susceptibility(),
    };
    Ok(build(&m.mesh, &m.active, &s.layers, d, &m.inputs).map_err(|e| e.to_string())?)
}

fn finite_or_nan(v: &[f64]) -> Vec<f64> {
    v.iter()
        .map(|x| if x.is_finite() { *x } else { f64::NAN })
        .collect()
}

pub fn write_constraints(
    path: &Path,
    mesh: &TensorMesh,
    c: &ConstraintArrays,
    p: &ProjectFile,
    s: &Scenario,
) -> Result<()> {
    let (lo, hi) = (finite_or_nan(&c.lower), finite_or_nan(&c.upper));
    let fixed: Vec<f64> = c.fixed.iter().map(|f| if *f { 1.0 } else { 0.0 }).collect();
    let active: Vec<f64> = c
        .active
        .iter()
        .map(|f| if *f { 1.0 } else { 0.0 })
        .collect();
    let arrays = [
        CellArray {
            name: "lower_bound",
            values: &lo,
        },
        CellArray {
            name: "upper_bound",
            values: &hi,
        },
        CellArray {
            name: "reference",
            values: &c.reference,
        },
        CellArray {
            name: "reference_weight",
            values: &c.reference_weight,
        },
        CellArray {
            name: "starting",
            values: &c.starting,
        },
        CellArray {
            name: "fixed",
            values: &fixed,
        },
        CellArray {
            name: "active",
            values: &active,
        },
    ];
    let pv = prov(
        p,
        &format!(
            "constraints of scenario '{}' (unbounded shown as NaN)",
            s.name
        ),
        units_of(s.data).0,
    );
    Ok(write_vtr(path, mesh, &arrays, &pv, true).map_err(|e| e.to_string())?)
}
