//! Content hashes, step records and staleness.

use serde::{Deserialize, Serialize};
use sha2::{Digest, Sha256};

/// The steps of the pipeline, in order.
pub const STEPS: [&str; 8] = [
    "import",
    "reduce",
    "grid",
    "regional",
    "mesh",
    "constraints",
    "inversion",
    "exports",
];

/// SHA-256 of bytes, hex.
pub fn hash_bytes(b: &[u8]) -> String {
    let mut h = Sha256::new();
    h.update(b);
    h.finalize().iter().map(|x| format!("{x:02x}")).collect()
}

/// SHA-256 of the JSON form of a value (the parameters of a step).
pub fn hash_json<T: Serialize>(v: &T) -> String {
    hash_bytes(serde_json::to_string(v).unwrap_or_default().as_bytes())
}

/// What a step ran on and with.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct StepRecord {
    pub step: String,
    /// (input name, content hash).
    pub inputs: Vec<(String, String)>,
    pub parameters_hash: String,
    pub program_version: String,
    /// ISO 8601 UTC.
    pub started: String,
    pub finished: String,
}

/// A step's current inputs and parameters: (step, [(input, hash)], parameters hash).
pub type CurrentStep = (String, Vec<(String, String)>, String);

/// The state of a step.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize, Deserialize)]
#[serde(rename_all = "snake_case")]
pub enum StepState {
    NotStarted,
    Done,
    Stale,
}

/// States of every step: a step is stale when its current inputs or
/// parameters differ from its record, or when any earlier step is stale or
/// not done; not started when it has no record.
pub fn staleness(records: &[StepRecord], current: &[CurrentStep]) -> Vec<(String, StepState)> {
    let mut out = Vec::new();
    let mut upstream_changed = false;
    for step in STEPS {
        let rec = records.iter().find(|r| r.step == step);
        let cur = current.iter().find(|c| c.0 == step);
        let state = match (rec, cur) {
            (None, _) => StepState::NotStarted,
            (Some(r), Some((_, inputs, params)))
                if !upstream_changed && &r.inputs == inputs && &r.parameters_hash == params =>
            {
                StepState::Done
            }
            (Some(_), None) if !upstream_changed => StepState::Done,
            _ => StepState::Stale,
        };
        if state != StepState::Done {
            upstream_changed = true;
        }
        out.push((step.to_string(), state));
    }
    out
}

#[cfg(test)]
mod tests {
    use super::*;

    fn rec(step: &str, params: &str) -> StepRecord {
        StepRecord {
            step: step.into(),
            inputs: vec![],
            parameters_hash: params.into(),
            program_version: "0.1.0".into(),
            started: String::new(),
            finished: String::new(),
        }
    }

    #[test]
    fn a_changed_step_makes_it_and_everything_after_stale_and_nothing_before() {
        let records: Vec<StepRecord> = STEPS.iter().map(|s| rec(s, &hash_json(&s.len()))).collect();
        let mut current: Vec<CurrentStep> = STEPS
            .iter()
            .map(|s| (s.to_string(), vec![], hash_json(&s.len())))
            .collect();
        assert!(staleness(&records, &current)
            .iter()
            .all(|(_, st)| *st == StepState::Done));
        // The reduction density changes: the reduce parameters hash changes.
        current[1].2 = hash_json(&"density 2.60");
        let st = staleness(&records, &current);
        assert_eq!(st[0].1, StepState::Done);
        assert!(
            st[1..].iter().all(|(_, s)| *s == StepState::Stale),
            "{st:?}"
        );
        assert_eq!(
            hash_bytes(b"abc"),
            "ba7816bf8f01cfea414140de5dae2223b00361a396177a9cb410ff61f20015ad",
            "FIPS 180-2 example"
        );
    }
}
