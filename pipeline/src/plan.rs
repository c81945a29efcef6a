//! The plan: every registered step that applies to the project, in order,
//! with its current inputs, parameter hash and outputs; and the state of
//! each against its provenance record.
//!
//! A step's inputs are the content hashes of the files it reads (the first
//! step) or the fingerprint of the step before it, so a changed file or
//! parameter makes that step and everything after it stale.

use crate::error::Result;
use crate::steps::{Stage, REGISTRY};
use fieldstone_core::project::file::{ProjectFile, Scenario};
use fieldstone_core::project::provenance::{hash_json, StepRecord, StepState};
use std::path::{Path, PathBuf};

/// A step of the chain as it stands now.
#[derive(Debug, Clone)]
pub struct Planned {
    /// The key recorded in the provenance (`mesh`, `inversion/<scenario>`).
    pub key: String,
    /// Position of the step in [`REGISTRY`].
    pub stage: usize,
    pub inputs: Vec<(String, String)>,
    pub parameters_hash: String,
    pub outputs: Vec<PathBuf>,
}

impl Planned {
    /// The registered step.
    pub fn stage(&self) -> &'static dyn Stage {
        REGISTRY[self.stage]
    }

    /// The fingerprint later steps take as their input.
    pub fn fingerprint(&self) -> String {
        hash_json(&(&self.inputs, &self.parameters_hash))
    }
}

/// The shared chain, and each scenario's name with its chain.
#[derive(Debug, Clone)]
pub struct Plan {
    pub shared: Vec<Planned>,
    pub scenarios: Vec<(String, Vec<Planned>)>,
}

impl Plan {
    /// The shared chain followed by the chain of `scenario`.
    pub fn chain_of(&self, scenario: &str) -> Option<Vec<&Planned>> {
        let (_, own) = self.scenarios.iter().find(|(n, _)| n == scenario)?;
        Some(self.shared.iter().chain(own.iter()).collect())
    }
}

fn planned(
    index: usize,
    stage: &dyn Stage,
    dir: &Path,
    p: &ProjectFile,
    s: Option<&Scenario>,
    upstream: Option<&str>,
) -> Result<Planned> {
    Ok(Planned {
        key: match s {
            Some(s) => format!("{}/{}", stage.key(), s.name),
            None => stage.key().to_string(),
        },
        stage: index,
        inputs: stage.inputs(dir, p, upstream)?,
        parameters_hash: stage.parameters(p, s),
        outputs: stage.outputs(dir, p, s),
    })
}

/// The shared chain and the chain of each scenario, with current hashes.
/// Reads and hashes every input file the project names.
pub fn plan(dir: &Path, p: &ProjectFile) -> Result<Plan> {
    let mut shared: Vec<Planned> = Vec::new();
    for (i, stage) in REGISTRY.iter().enumerate() {
        if stage.per_scenario() || !stage.applies(p, None) {
            continue;
        }
        let up = shared.last().map(Planned::fingerprint);
        shared.push(planned(i, *stage, dir, p, None, up.as_deref())?);
    }
    let shared_fp = shared.last().map(Planned::fingerprint);
    let mut scenarios = Vec::new();
    for s in &p.scenarios {
        let mut chain: Vec<Planned> = Vec::new();
        for (i, stage) in REGISTRY.iter().enumerate() {
            if !stage.per_scenario() || !stage.applies(p, Some(s)) {
                continue;
            }
            let up = chain.last().map(Planned::fingerprint).or(shared_fp.clone());
            chain.push(planned(i, *stage, dir, p, Some(s), up.as_deref())?);
        }
        scenarios.push((s.name.clone(), chain));
    }
    Ok(Plan { shared, scenarios })
}

/// States of a chain: done when the record matches and the outputs exist;
/// everything after a step that is not done is stale (or not started).
pub fn states(records: &[StepRecord], chain: &[&Planned]) -> Vec<StepState> {
    let mut upstream_ok = true;
    chain
        .iter()
        .map(|pl| {
            let rec = records.iter().find(|r| r.step == pl.key);
            let st = match rec {
                None => StepState::NotStarted,
                Some(r)
                    if upstream_ok
                        && r.inputs == pl.inputs
                        && r.parameters_hash == pl.parameters_hash
                        && pl.outputs.iter().all(|o| o.exists()) =>
                {
                    StepState::Done
                }
                Some(_) => StepState::Stale,
            };
            if st != StepState::Done {
                upstream_ok = false;
            }
            st
        })
        .collect()
}

/// The state of every step of a project: the shared chain, then each
/// scenario's chain.
pub fn project_states(dir: &Path, p: &ProjectFile) -> Result<Vec<(String, StepState)>> {
    let plan = plan(dir, p)?;
    let mut out = Vec::new();
    let sh: Vec<&Planned> = plan.shared.iter().collect();
    for (pl, st) in plan.shared.iter().zip(states(&p.provenance, &sh)) {
        out.push((pl.key.clone(), st));
    }
    for (name, own) in &plan.scenarios {
        let c = plan.chain_of(name).expect("planned scenario");
        let st = states(&p.provenance, &c);
        for (pl, s) in own.iter().zip(&st[plan.shared.len()..]) {
            out.push((pl.key.clone(), *s));
        }
    }
    Ok(out)
}

#[cfg(test)]
mod tests {
    use super::*;

    fn planned(key: &str, params: &str) -> Planned {
        Planned {
            key: key.into(),
            stage: 0,
            inputs: vec![("upstream".into(), "u".into())],
            parameters_hash: params.into(),
            outputs: vec![],
        }
    }

    fn record(pl: &Planned) -> StepRecord {
        StepRecord {
            step: pl.key.clone(),
            inputs: pl.inputs.clone(),
            parameters_hash: pl.parameters_hash.clone(),
            program_version: "test".into(),
            started: String::new(),
            finished: String::new(),
        }
    }

    #[test]
    fn a_changed_step_makes_it_and_everything_after_stale_and_nothing_before() {
        let chain: Vec<Planned> = ["import", "reduce", "grid", "regional"]
            .iter()
            .map(|k| planned(k, "p"))
            .collect();
        let records: Vec<StepRecord> = chain.iter().map(record).collect();
        let refs: Vec<&Planned> = chain.iter().collect();
        assert!(states(&records, &refs)
            .iter()
            .all(|s| *s == StepState::Done));
        let mut changed = chain.clone();
        changed[1].parameters_hash = "q".into();
        let refs: Vec<&Planned> = changed.iter().collect();
        assert_eq!(
            states(&records, &refs),
            vec![
                StepState::Done,
                StepState::Stale,
                StepState::Stale,
                StepState::Stale
            ]
        );
        // Steps without a record are not started.
        let refs: Vec<&Planned> = chain.iter().collect();
        assert_eq!(
            states(&records[..2], &refs),
            vec![
                StepState::Done,
                StepState::Done,
                StepState::NotStarted,
                StepState::NotStarted
            ]
        );
        // A step whose record is older than a rerun step before it is stale.
        let mut rerun = records.clone();
        rerun[3].parameters_hash = "old".into();
        assert_eq!(states(&rerun, &refs)[3], StepState::Stale);
        // A missing output makes its step stale.
        let mut gone = chain.clone();
        gone[0].outputs = vec![PathBuf::from("/nonexistent/fieldstone-output")];
        let refs: Vec<&Planned> = gone.iter().collect();
        assert_eq!(states(&records, &refs)[0], StepState::Stale);
    }

    #[test]
    fn fingerprints_follow_inputs_and_parameters() {
        let a = planned("mesh", "p");
        let mut b = a.clone();
        assert_eq!(a.fingerprint(), b.fingerprint());
        b.parameters_hash = "q".into();
        assert_ne!(a.fingerprint(), b.fingerprint());
    }
}
