//! Content hashes, step records and step states. Which steps exist and
//! when one is stale is the pipeline's registry (`fieldstone-pipeline`).

use serde::{Deserialize, Serialize};
use sha2::{Digest, Sha256};

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

/// The state of a step.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize, Deserialize)]
#[serde(rename_all = "snake_case")]
pub enum StepState {
    NotStarted,
    Done,
    Stale,
}
