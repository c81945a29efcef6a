//! `fieldstone constraints PROJECT_DIR [--scenario NAME] --out DIR`

use crate::pipeline::{self, Selection};
use clap::Args;
use fieldstone_core::export::voxel::{mesh_description, write_npy};
use fieldstone_core::project::file::ProjectFile;
use fieldstone_core::project::provenance::hash_json;
use std::path::PathBuf;

#[derive(Debug, Args)]
pub struct ConstraintsArgs {
    /// The project folder.
    pub project_dir: PathBuf,
    /// Only this scenario (every scenario when omitted).
    #[arg(long)]
    pub scenario: Option<String>,
    /// Folder for the arrays: <scenario>.vtr, <scenario>_<array>.npy, mesh.json, constraints.json.
    #[arg(long)]
    pub out: PathBuf,
}

pub fn run(a: &ConstraintsArgs) -> super::CliResult {
    // The mesh needs the shared steps (terrain, data extent); run what is stale.
    pipeline::run(
        &a.project_dir,
        &Selection::None,
        false,
        &super::Stderr::default(),
    )?;
    let p = ProjectFile::load(&a.project_dir)
        .map_err(|e| e.to_string())?
        .project;
    let m = pipeline::load_model_context(&a.project_dir, &p)?;
    std::fs::create_dir_all(&a.out).map_err(|e| format!("{}: {e}", a.out.display()))?;
    let chosen: Vec<_> = p
        .scenarios
        .iter()
        .filter(|s| a.scenario.as_ref().is_none_or(|n| &s.name == n))
        .collect();
    if chosen.is_empty() {
        return Err(format!(
            "no scenario {} in the project (there are: {})",
            a.scenario.clone().unwrap_or_default(),
            p.scenarios
                .iter()
                .map(|s| s.name.as_str())
                .collect::<Vec<_>>()
                .join(", ")
        )
        .into());
    }
    let pv = pipeline::prov(&p, "mesh recipe of project.json", "m");
    let mut report = Vec::new();
    for s in chosen {
        let (c, warnings) = pipeline::constraints_of(&m, s)?;
        let name = pipeline::safe_name(&s.name);
        pipeline::write_constraints(&a.out.join(format!("{name}.vtr")), &m.mesh, &c, &p, s)?;
        let flag = |v: &[bool]| {
            v.iter()
                .map(|b| if *b { 1.0 } else { 0.0 })
                .collect::<Vec<f64>>()
        };
        for (arr, v) in [
            ("lower", c.lower.clone()),
            ("upper", c.upper.clone()),
            ("reference", c.reference.clone()),
            ("reference_weight", c.reference_weight.clone()),
            ("starting", c.starting.clone()),
            ("fixed", flag(&c.fixed)),
            ("active", flag(&c.active)),
        ] {
            write_npy(&a.out.join(format!("{name}_{arr}.npy")), &m.mesh, &v)
                .map_err(|e| e.to_string())?;
        }
        let active = c.active.iter().filter(|x| **x).count();
        let bounded = c
            .active
            .iter()
            .zip(c.lower.iter().zip(&c.upper))
            .filter(|(a, (l, u))| **a && (l.is_finite() || u.is_finite()))
            .count();
        let fixed = c
            .active
            .iter()
            .zip(&c.fixed)
            .filter(|(a, f)| **a && **f)
            .count();
        eprintln!(
            "{}: {} layers, {active} active cells, {bounded} bounded, {fixed} fixed, {} warnings",
            s.name,
            s.layers.iter().filter(|l| l.enabled).count(),
            warnings.len()
        );
        for w in &warnings {
            eprintln!("  warning: {w}");
        }
        report.push(serde_json::json!({
            "scenario": s.name,
            "layers_hash": hash_json(&s.layers),
            "mesh_recipe_hash": hash_json(&p.mesh),
            "active_cells": active,
            "bounded_cells": bounded,
            "fixed_cells": fixed,
            "warnings": warnings,
        }));
    }
    pipeline::write_text(
        &a.out.join("mesh.json"),
        &serde_json::to_string_pretty(&mesh_description(&m.mesh, &pv))
            .map_err(|e| e.to_string())?,
    )?;
    pipeline::write_text(
        &a.out.join("constraints.json"),
        &serde_json::to_string_pretty(&report).map_err(|e| e.to_string())?,
    )?;
    eprintln!("constraints written to {} (unbounded values appear as NaN in the .vtr files and as ±inf in the .npy files)", a.out.display());
    Ok(())
}
