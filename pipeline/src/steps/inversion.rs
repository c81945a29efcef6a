//! Inversion: the scenario's model from its data, operator, constraints
//! and settings (`runs/<scenario>/`: model.npy and .vtr, summary.json,
//! log.csv and log.json, predicted.csv).

use super::{planned_run_dir, planned_scenario, Stage, StepJob};
use crate::context::Context;
use crate::data::write_text;
use crate::error::Result;
use crate::operator::scenario_setup;
use crate::paths::run_dir;
use crate::runfiles::{prov, units_of, RunFile, CAUTION};
use crate::truth::{compare, truth_on_mesh};
use fieldstone_core::export::voxel::{write_npy, write_vtr, CellArray};
use fieldstone_core::invert::solver::invert;
use fieldstone_core::progress::Observer;
use fieldstone_core::project::file::{ProjectFile, Scenario};
use fieldstone_core::project::provenance::hash_json;
use std::fmt::Write as _;
use std::path::{Path, PathBuf};

/// The inversion step.
pub struct Inversion;

impl Stage for Inversion {
    fn key(&self) -> &'static str {
        "inversion"
    }
    fn title(&self) -> &'static str {
        "invert the scenario's data"
    }
    fn per_scenario(&self) -> bool {
        true
    }
    fn parameters(&self, p: &ProjectFile, s: Option<&Scenario>) -> String {
        let s = planned_scenario(s);
        // The default heights leave the hash as it was before the field
        // existed, so runs recorded then stay up to date.
        if s.fft_heights == Default::default() {
            hash_json(&(&s.settings, s.operator, s.data, p.inducing_field))
        } else {
            hash_json(&(
                &s.settings,
                s.operator,
                s.data,
                p.inducing_field,
                s.fft_heights,
            ))
        }
    }
    fn outputs(&self, dir: &Path, _p: &ProjectFile, s: Option<&Scenario>) -> Vec<PathBuf> {
        let rd = planned_run_dir(dir, s);
        [
            "model.npy",
            "model.vtr",
            "summary.json",
            "log.csv",
            "predicted.csv",
        ]
        .iter()
        .map(|f| rd.join(f))
        .collect()
    }
    fn run(&self, job: &mut StepJob<'_>) -> Result<String> {
        let s = job.scenario()?;
        inversion(job.dir, job.project, job.context, s, job.observer)
    }
}

fn inversion(
    dir: &Path,
    p: &ProjectFile,
    ctx: &mut Context,
    s: &Scenario,
    obs: &dyn Observer,
) -> Result<String> {
    let (m, c, prep) = scenario_setup(dir, p, ctx, s, obs)?;
    let pb = prep.problem(&m.mesh, &c);
    let result = invert(&prep.op, &pb, &s.settings, obs)?;
    let (data_used, active_idx) = (&prep.data, &prep.active_idx);
    let rd = run_dir(dir, &s.name);
    std::fs::create_dir_all(&rd).map_err(|e| format!("{}: {e}", rd.display()))?;
    let mut full = vec![f64::NAN; m.mesh.n_cells()];
    for (v, &k) in result.model.iter().zip(active_idx) {
        full[k] = *v;
    }
    let (mu, du) = units_of(s.data);
    write_npy(&rd.join("model.npy"), &m.mesh, &full).map_err(|e| e.to_string())?;
    let truth = truth_on_mesh(dir, p, m, s.data)?;
    let comparison = truth.as_ref().map(|t| {
        let model0: Vec<f64> = full
            .iter()
            .map(|v| if v.is_finite() { *v } else { 0.0 })
            .collect();
        compare(&m.mesh, &c.active, &model0, t)
    });
    let pv = prov(p, &format!("inversion of scenario '{}'", s.name), mu);
    let mut arrays = vec![CellArray {
        name: "model",
        values: &full,
    }];
    let truth_nan: Option<Vec<f64>> = truth.as_ref().map(|t| {
        t.iter()
            .zip(&c.active)
            .map(|(v, a)| if *a { *v } else { f64::NAN })
            .collect()
    });
    if let Some(t) = &truth_nan {
        arrays.push(CellArray {
            name: "true_model_invented",
            values: t,
        });
        write_npy(&rd.join("true_model_invented.npy"), &m.mesh, t).map_err(|e| e.to_string())?;
    }
    write_vtr(&rd.join("model.vtr"), &m.mesh, &arrays, &pv, true).map_err(|e| e.to_string())?;
    // Predicted data and residuals.
    let mut csv = format!("# predicted data of scenario '{}', {du}\nx,y,z,observed,predicted,residual,uncertainty,normalised_residual\n", s.name);
    for k in 0..data_used.value.len() {
        let [x, y, z] = data_used.xyz[k];
        let (o, pr, u) = (
            data_used.value[k],
            result.predicted[k],
            data_used.uncertainty[k],
        );
        writeln!(
            csv,
            "{x:.3},{y:.3},{z:.3},{o:.6},{pr:.6},{:.6},{u:.6},{:.4}",
            o - pr,
            (o - pr) / u
        )
        .ok();
    }
    write_text(&rd.join("predicted.csv"), &csv)?;
    let mut log = String::from(
        "iteration,beta,phi_d,phi_m,chi_factor,cg_iterations,at_lower,at_upper,epsilon,elapsed_s\n",
    );
    for r in &result.log {
        writeln!(
            log,
            "{},{:.6e},{:.6e},{:.6e},{:.5},{},{},{},{},{:.3}",
            r.iteration,
            r.beta,
            r.phi_d,
            r.phi_m,
            r.chi_factor,
            r.cg_iterations,
            r.at_lower,
            r.at_upper,
            r.epsilon.map(|e| format!("{e:.3e}")).unwrap_or_default(),
            r.elapsed_s
        )
        .ok();
    }
    write_text(&rd.join("log.csv"), &log)?;
    write_text(
        &rd.join("log.json"),
        &serde_json::to_string_pretty(&result.log).unwrap_or_default(),
    )?;
    let rf = RunFile {
        scenario: s.name.clone(),
        data: s.data,
        model_units: mu.into(),
        data_units: du.into(),
        background: pv.background.clone(),
        program: pv.program.clone(),
        summary: result.summary.clone(),
        truth_comparison: comparison.clone(),
        operator_check: prep.check.clone(),
        recipe_hashes: [
            ("mesh", hash_json(&p.mesh)),
            ("layers", hash_json(&s.layers)),
            ("settings", hash_json(&s.settings)),
        ]
        .into_iter()
        .map(|(k, v)| (k.to_string(), v))
        .collect(),
        caution: CAUTION.into(),
    };
    write_text(
        &rd.join("summary.json"),
        &serde_json::to_string_pretty(&rf).map_err(|e| e.to_string())?,
    )?;
    Ok(format!(
        "{} data, {} cells, chi-factor {:.3}, {} iterations, {}{}",
        result.summary.n_data,
        result.summary.n_cells_active,
        result.summary.chi_factor,
        result.summary.iterations,
        result.summary.stopped_because,
        comparison
            .map(|c| format!(
                "; against the invented truth: RMS {:.4} in the core, {:.4} in the body",
                c.rms_difference_core, c.rms_difference_body
            ))
            .unwrap_or_default()
    ))
}
