//! The appraisal step of a scenario: what of its model the data decided.
//!
//! After the inversion, with the same operator and data, it runs the second
//! inversion of the depth-of-investigation index (Oldenburg & Li 1999) and
//! each "is this feature required?" test of the scenario, and writes
//! `appraisal.json`, `doi.npy` and `doi.vtr` (the index as a model) and one
//! `held_<test>.npy` per feature test into the run folder.

use super::{planned_run_dir, planned_scenario, Stage, StepJob};
use crate::context::Context;
use crate::data::write_text;
use crate::error::Result;
use crate::operator::scenario_setup;
use crate::paths::{run_dir, safe_name};
use crate::runfiles::{load_model, prov, units_of, RunFile, CAUTION};
use fieldstone_core::constraint::region::membership;
use fieldstone_core::export::voxel::{write_npy, write_vtr, CellArray};
use fieldstone_core::invert::appraise::{
    depth_of_investigation_pattern, doi_profile, doi_shift, feature_test, DoiPattern, DoiProfile,
    FeatureReport, PREFERRED_PHI_M_CHANGE,
};
use fieldstone_core::invert::solver::RunResult;
use fieldstone_core::operator::Operator;
use fieldstone_core::progress::Observer;
use fieldstone_core::project::file::{ProjectFile, Scenario};
use fieldstone_core::project::provenance::hash_json;
use serde::{Deserialize, Serialize};
use std::path::Path;
use std::path::PathBuf;

/// The appraisal step (only for scenarios that ask for one).
pub struct Appraisal;

impl Stage for Appraisal {
    fn key(&self) -> &'static str {
        "appraisal"
    }
    fn title(&self) -> &'static str {
        "appraise the model (depth of investigation, feature tests)"
    }
    fn per_scenario(&self) -> bool {
        true
    }
    fn applies(&self, _p: &ProjectFile, s: Option<&Scenario>) -> bool {
        s.is_some_and(|s| s.appraisal.is_some())
    }
    fn parameters(&self, _p: &ProjectFile, s: Option<&Scenario>) -> String {
        planned_scenario(s)
            .appraisal
            .as_ref()
            .map(hash_json)
            .unwrap_or_default()
    }
    fn outputs(&self, dir: &Path, _p: &ProjectFile, s: Option<&Scenario>) -> Vec<PathBuf> {
        let rd = planned_run_dir(dir, s);
        let s = planned_scenario(s);
        let mut outputs = vec![rd.join("appraisal.json")];
        if s.appraisal
            .as_ref()
            .is_some_and(|a| a.doi_reference_shift.is_some())
        {
            outputs.push(rd.join("doi.npy"));
        }
        outputs
    }
    fn run(&self, job: &mut StepJob<'_>) -> Result<String> {
        let s = job.scenario()?;
        run(job.dir, job.project, job.context, s, job.observer)
    }
}

/// `appraisal.json`.
#[derive(Debug, Clone, Serialize, Deserialize)]
pub struct AppraisalFile {
    pub scenario: String,
    pub model_units: String,
    pub doi: Option<DoiSummary>,
    pub feature_tests: Vec<FeatureEntry>,
    pub method: String,
    pub caution: String,
}

/// The depth-of-investigation part of `appraisal.json`.
#[derive(Debug, Clone, Serialize, Deserialize)]
pub struct DoiSummary {
    pub reference_shift: f64,
    pub pattern: DoiPattern,
    /// Side of the checkerboard blocks used, metres (none: uniform shift).
    pub block_m: Option<f64>,
    pub profile: DoiProfile,
    /// Free cells whose shifted reference lies outside their bounds.
    pub cells_shift_outside_bounds: usize,
    /// Base level added to the second run's data (data units).
    pub data_level_shift: f64,
    pub chi_factor_shifted: f64,
    pub stopped_because_shifted: String,
    /// Cells with a normalised index above the cut-off, of all free cells.
    pub cells_above_cutoff: usize,
    pub free_cells: usize,
}

/// One feature test in `appraisal.json`.
#[derive(Debug, Clone, Serialize, Deserialize)]
pub struct FeatureEntry {
    pub name: String,
    pub report: FeatureReport,
    pub model_file: String,
}

/// Reads a run's `appraisal.json`.
pub fn read_appraisal(dir: &Path, scenario: &str) -> Option<AppraisalFile> {
    let text = std::fs::read_to_string(run_dir(dir, scenario).join("appraisal.json")).ok()?;
    serde_json::from_str(&text).ok()
}

fn run(
    dir: &Path,
    p: &ProjectFile,
    ctx: &mut Context,
    s: &Scenario,
    obs: &dyn Observer,
) -> Result<String> {
    let Some(a) = &s.appraisal else {
        return Ok("nothing to appraise".into());
    };
    let (m, c, prep) = scenario_setup(dir, p, ctx, s, obs)?;
    let pb = prep.problem(&m.mesh, &c);
    let rd = run_dir(dir, &s.name);
    // The run being appraised, as the inversion step wrote it.
    let full = load_model(dir, &s.name, m.mesh.n_cells())?;
    let model: Vec<f64> = prep.active_idx.iter().map(|&k| full[k]).collect();
    if model.iter().any(|v| !v.is_finite()) {
        return Err(format!(
            "{} does not match the scenario's active cells; run the inversion again",
            rd.join("model.npy").display()
        )
        .into());
    }
    let sum_path = rd.join("summary.json");
    let rf: RunFile = serde_json::from_str(
        &std::fs::read_to_string(&sum_path).map_err(|e| format!("{}: {e}", sum_path.display()))?,
    )
    .map_err(|e| format!("{}: {e}", sum_path.display()))?;
    let mut predicted = vec![0.0; prep.op.n_data()];
    prep.op.apply(&model, &mut predicted);
    let base = RunResult {
        model,
        predicted,
        log: vec![],
        summary: rf.summary,
    };
    let (mu, _) = units_of(s.data);
    let n_mesh = m.mesh.n_cells();
    let mut out = AppraisalFile {
        scenario: s.name.clone(),
        model_units: mu.into(),
        doi: None,
        feature_tests: vec![],
        method: format!("Depth-of-investigation index (Oldenburg & Li 1999): a second inversion with the reference model shifted; the index is the change of the model over the shift, normalised by its largest value: near 0 the data decided the value, near 1 the reference did. By default the shift is +δ and −δ in square blocks, the same in every layer (a choice of this program: a uniform shift over a wide mesh acts as a slab whose near-constant field residual data cannot show), so the index says down to which depth the data decide structure of the block's size. The second run's data are raised by the mean field of the shift. Feature tests hold a region at a background value and rerun: 'required' when the target misfit can no longer be reached, 'preferred' when it can but the model objective grows by more than {:.0} % (a judgement), otherwise 'not required'.", 100.0 * PREFERRED_PHI_M_CHANGE),
        caution: CAUTION.into(),
    };
    let mut summary = Vec::new();
    if let Some(shift) = a.doi_reference_shift {
        let (cell_shift, block) = doi_shift(&pb, shift, a.doi_pattern);
        obs.message(&format!(
            "  depth of investigation: inverting again with the reference shifted by {}",
            match block {
                Some(b) => format!("±{shift} in blocks of {b:.0} m"),
                None => format!("{shift} everywhere"),
            }
        ));
        let doi =
            depth_of_investigation_pattern(&prep.op, &pb, &s.settings, &base, &cell_shift, obs)
                .map_err(|e| e.to_string())?;
        // Layer medians of the index itself: 0 where the data decided, 1
        // where the reference did (the normalised index divides by the
        // largest value, which a few overshooting cells can set).
        let profile = doi_profile(&pb, &doi.index, a.doi_cutoff);
        let mut norm_full = vec![f64::NAN; n_mesh];
        let mut raw_full = vec![f64::NAN; n_mesh];
        let mut shifted_full = vec![f64::NAN; n_mesh];
        for (i, &k) in prep.active_idx.iter().enumerate() {
            norm_full[k] = doi.normalised[i];
            raw_full[k] = doi.index[i];
            shifted_full[k] = doi.shifted.model[i];
        }
        write_npy(&rd.join("doi.npy"), &m.mesh, &raw_full).map_err(|e| e.to_string())?;
        let pv = prov(
            p,
            &format!(
                "depth-of-investigation index of scenario '{}' (reference shifted by {}{shift} {mu}{})",
                s.name,
                if block.is_some() { "±" } else { "" },
                block.map(|b| format!(" in blocks of {b:.0} m")).unwrap_or_default()
            ),
            "dimensionless index (0: decided by the data, 1: by the reference)",
        );
        write_vtr(
            &rd.join("doi.vtr"),
            &m.mesh,
            &[
                CellArray {
                    name: "doi_normalised",
                    values: &norm_full,
                },
                CellArray {
                    name: "doi_index",
                    values: &raw_full,
                },
                CellArray {
                    name: "model",
                    values: &full,
                },
                CellArray {
                    name: "model_reference_shifted",
                    values: &shifted_full,
                },
            ],
            &pv,
            true,
        )
        .map_err(|e| e.to_string())?;
        let finite: Vec<f64> = doi
            .index
            .iter()
            .copied()
            .filter(|v| v.is_finite())
            .collect();
        let above = finite.iter().filter(|v| **v > a.doi_cutoff).count();
        let top = profile.layers.first().map(|l| l.0);
        summary.push(match profile.depth_m {
            Some(d) if Some(d) == top => format!("index above {} from the top layer down: the data do not decide single layers (gravity and magnetic data see sums down each column)", a.doi_cutoff),
            Some(d) => format!("index above {} below {d:.0} m", a.doi_cutoff),
            None => format!("index stays below {} in every layer", a.doi_cutoff),
        });
        out.doi = Some(DoiSummary {
            reference_shift: shift,
            pattern: a.doi_pattern,
            block_m: block,
            profile,
            cells_shift_outside_bounds: doi.shifted_outside_bounds,
            data_level_shift: doi.data_level_shift,
            chi_factor_shifted: doi.shifted.summary.chi_factor,
            stopped_because_shifted: doi.shifted.summary.stopped_because.clone(),
            cells_above_cutoff: above,
            free_cells: finite.len(),
        });
    }
    for t in &a.feature_tests {
        obs.message(&format!(
            "  feature test '{}': inverting again with the region held at {}",
            t.name, t.background
        ));
        let w = membership(&t.region, &m.mesh, &m.inputs)
            .map_err(|e| format!("feature test '{}': {e}", t.name))?;
        let region: Vec<bool> = w.iter().map(|v| *v > 0.5).collect();
        let (report, held) = feature_test(
            &prep.op,
            &pb,
            &s.settings,
            &base,
            &region,
            t.background,
            t.hold,
            obs,
        )
        .map_err(|e| format!("feature test '{}': {e}", t.name))?;
        let mut held_full = vec![f64::NAN; n_mesh];
        for (i, &k) in prep.active_idx.iter().enumerate() {
            held_full[k] = held.model[i];
        }
        let file = format!("held_{}.npy", safe_name(&t.name));
        write_npy(&rd.join(&file), &m.mesh, &held_full).map_err(|e| e.to_string())?;
        obs.message(&format!("  {}: {}", report.verdict, report.explanation));
        summary.push(format!("'{}' {}", t.name, report.verdict));
        out.feature_tests.push(FeatureEntry {
            name: t.name.clone(),
            report,
            model_file: file,
        });
    }
    write_text(
        &rd.join("appraisal.json"),
        &serde_json::to_string_pretty(&out).map_err(|e| e.to_string())?,
    )?;
    Ok(if summary.is_empty() {
        "no index and no feature test asked for".into()
    } else {
        summary.join("; ")
    })
}
