//! The steps of a project, as one ordered registry.
//!
//! Each step is a type implementing [`Stage`] in its own file: its key, its
//! inputs and parameter hash (which decide staleness), its outputs and its
//! work. Planning, staleness, provenance records, the command line's step
//! lines and the window's step states all read [`REGISTRY`]; adding a step
//! is adding a file and a line here.

pub mod appraisal;
pub mod constraints;
pub mod exports;
pub mod grid;
pub mod import;
pub mod inversion;
pub mod mesh;
pub mod reduce;
pub mod regional;

use crate::context::Context;
use crate::error::{Error, Result};
use fieldstone_core::progress::Observer;
use fieldstone_core::project::file::{ProjectFile, Scenario};
use std::path::{Path, PathBuf};

/// What a step's work is given.
pub struct StepJob<'a> {
    /// The project folder.
    pub dir: &'a Path,
    pub project: &'a ProjectFile,
    /// The scenario, for steps that run per scenario.
    pub scenario: Option<&'a Scenario>,
    /// The mesh and inputs, loaded once per run.
    pub context: &'a mut Context,
    /// Progress, messages, warnings and the cancel flag.
    pub observer: &'a dyn Observer,
}

impl<'a> StepJob<'a> {
    /// The scenario of a per-scenario step.
    pub fn scenario(&self) -> Result<&'a Scenario> {
        self.scenario
            .ok_or_else(|| Error::internal("a per-scenario step was run without a scenario"))
    }
}

/// One step of the pipeline.
pub trait Stage: Sync {
    /// The key recorded in the provenance (per-scenario steps add
    /// `/<scenario>`).
    fn key(&self) -> &'static str;
    /// What the step does, in a few words (the command line's step list).
    fn title(&self) -> &'static str;
    /// Whether the step runs once per scenario (after the shared steps).
    fn per_scenario(&self) -> bool {
        false
    }
    /// Whether the step is part of the chain (e.g. an appraisal only when
    /// the scenario asks for one).
    fn applies(&self, _p: &ProjectFile, _s: Option<&Scenario>) -> bool {
        true
    }
    /// The step's inputs: by default the fingerprint of the step before it,
    /// so any change upstream makes this step stale.
    fn inputs(
        &self,
        _dir: &Path,
        _p: &ProjectFile,
        upstream: Option<&str>,
    ) -> Result<Vec<(String, String)>> {
        Ok(upstream
            .map(|u| vec![("upstream".to_string(), u.to_string())])
            .unwrap_or_default())
    }
    /// The hash of the step's parameters.
    fn parameters(&self, p: &ProjectFile, s: Option<&Scenario>) -> String;
    /// The files the step writes; a step whose outputs are missing is stale.
    fn outputs(&self, dir: &Path, p: &ProjectFile, s: Option<&Scenario>) -> Vec<PathBuf>;
    /// Does the work; returns a one-line summary.
    fn run(&self, job: &mut StepJob<'_>) -> Result<String>;
}

/// Every step, in the order they run: the shared chain, then the chain each
/// scenario runs.
pub static REGISTRY: [&dyn Stage; 9] = [
    &import::Import,
    &reduce::Reduce,
    &grid::Grid,
    &regional::Regional,
    &mesh::Mesh,
    &constraints::Constraints,
    &inversion::Inversion,
    &appraisal::Appraisal,
    &exports::Exports,
];

/// The registered step with this key (`inversion`, or `inversion/<scenario>`).
pub fn stage(key: &str) -> Option<&'static dyn Stage> {
    let base = key.split('/').next().unwrap_or(key);
    REGISTRY.iter().copied().find(|s| s.key() == base)
}

/// The scenario a per-scenario step is planned for (the planner always
/// passes one to such steps).
pub(crate) fn planned_scenario(s: Option<&Scenario>) -> &Scenario {
    s.expect("the planner passes the scenario to every per-scenario step")
}

/// The run folder of the scenario a per-scenario step is planned for.
pub(crate) fn planned_run_dir(dir: &Path, s: Option<&Scenario>) -> PathBuf {
    crate::paths::run_dir(dir, &planned_scenario(s).name)
}

/// The data kinds a project holds, with their point file, value column and
/// units: (kind, points file, value column, units).
pub(crate) fn kinds(
    p: &ProjectFile,
) -> Vec<(&'static str, &'static str, &'static str, &'static str)> {
    let mut v = Vec::new();
    if p.gravity.is_some() {
        v.push(("gravity", "gravity_stations.csv", "cba_mgal", "mGal"));
    }
    if p.magnetic.is_some() {
        v.push(("magnetic", "magnetic_points.csv", "tmi_nt", "nT"));
    }
    v
}

/// The further surveys' gridding inputs: (file prefix, stations file,
/// value column, unit), `data/<prefix>_grid.tif` out.
pub(crate) fn further_kinds(p: &ProjectFile) -> Vec<(String, String, &'static str, &'static str)> {
    let mut v = Vec::new();
    for f in &p.more_gravity {
        let prefix = reduce::further_prefix("gravity", &f.name);
        v.push((
            prefix.clone(),
            format!("{prefix}_stations.csv"),
            "cba_mgal",
            "mGal",
        ));
    }
    for f in &p.more_magnetic {
        let prefix = reduce::further_prefix("magnetic", &f.name);
        v.push((
            prefix.clone(),
            format!("{prefix}_points.csv"),
            "tmi_nt",
            "nT",
        ));
    }
    v
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn keys_are_unique_and_shared_steps_come_first() {
        let keys: Vec<&str> = REGISTRY.iter().map(|s| s.key()).collect();
        let mut sorted = keys.clone();
        sorted.sort();
        sorted.dedup();
        assert_eq!(sorted.len(), keys.len(), "{keys:?}");
        let first_per = REGISTRY.iter().position(|s| s.per_scenario()).unwrap();
        assert!(REGISTRY[first_per..].iter().all(|s| s.per_scenario()));
        assert_eq!(
            stage("inversion/smooth").map(|s| s.key()),
            Some("inversion")
        );
        assert!(stage("nothing").is_none());
    }
}
