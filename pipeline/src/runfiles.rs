//! The files of a run folder (`runs/<scenario>/`): the summary, the model
//! and other per-cell arrays, the predicted data; what every output says
//! about the model's units and background.

use crate::data::Points;
use crate::error::Result;
use crate::paths::run_dir;
use fieldstone_core::export::voxel::Provenance;
use fieldstone_core::project::file::{DataKind, ProjectFile};
use std::path::Path;

pub use crate::truth::TruthComparison;

pub fn prov(p: &ProjectFile, source: &str, units: &str) -> Provenance {
    Provenance {
        program: format!("Fieldstone {}", env!("CARGO_PKG_VERSION")),
        source: source.into(),
        units: units.into(),
        background: format!(
            "density contrasts relative to {} g/cm³",
            p.background_density_g_cc
        ),
        epsg: p.epsg,
    }
}

pub fn units_of(k: DataKind) -> (&'static str, &'static str) {
    match k {
        DataKind::Gravity => ("g/cm³ (density contrast)", "mGal"),
        DataKind::Magnetic => ("SI (susceptibility)", "nT"),
    }
}

/// Everything in a run's `summary.json`.
#[derive(Debug, Clone, serde::Serialize, serde::Deserialize)]
pub struct RunFile {
    pub scenario: String,
    pub data: DataKind,
    pub model_units: String,
    pub data_units: String,
    pub background: String,
    pub program: String,
    #[serde(flatten)]
    pub summary: fieldstone_core::invert::RunSummary,
    pub truth_comparison: Option<TruthComparison>,
    /// For the FFT operator: its rows against exact rows at sample data.
    #[serde(default)]
    pub operator_check: Option<fieldstone_core::operator::fft::RowCheck>,
    /// SHA-256 of the JSON of the mesh recipe, the constraint layers and the
    /// inversion settings this model came from.
    #[serde(default)]
    pub recipe_hashes: std::collections::BTreeMap<String, String>,
    pub caution: String,
}

pub const CAUTION: &str = "Potential-field models are non-unique: this model is one of infinitely many that fit the data, and the constraints decided which one you see. Interpretation and public reporting of exploration results follow the reporting codes of the jurisdiction and the judgement of a qualified person.";

/// Loads a run's model (full mesh, NaN in air) from `model.npy`.
pub fn load_model(dir: &Path, scenario: &str, n_cells: usize) -> Result<Vec<f64>> {
    load_run_array(dir, scenario, "model.npy", n_cells)
}

/// Loads a per-cell array of a run (`model.npy`, `doi.npy`, …; full mesh,
/// NaN in air).
pub fn load_run_array(dir: &Path, scenario: &str, file: &str, n_cells: usize) -> Result<Vec<f64>> {
    let path = run_dir(dir, scenario).join(file);
    let bytes = std::fs::read(&path).map_err(|e| format!("{}: {e}", path.display()))?;
    if bytes.len() < 10 || &bytes[..6] != b"\x93NUMPY" {
        return Err(format!("{} is not a NumPy file", path.display()).into());
    }
    let hl = u16::from_le_bytes([bytes[8], bytes[9]]) as usize;
    let body = bytes
        .get(10 + hl..)
        .ok_or_else(|| format!("{} is cut short inside its header", path.display()))?;
    if body.len() != n_cells * 8 {
        return Err(format!(
            "{} holds {} values but the mesh has {n_cells} cells; rerun the scenario",
            path.display(),
            body.len() / 8
        )
        .into());
    }
    Ok(body
        .chunks_exact(8)
        .map(|c| f64::from_le_bytes(c.try_into().expect("8 bytes")))
        .collect())
}

/// Observed points (with uncertainty) and predicted values from a run's `predicted.csv`.
pub fn read_predicted(path: &Path) -> Option<(Points, Vec<f64>)> {
    let text = std::fs::read_to_string(path).ok()?;
    let mut obs = Points::default();
    let mut pred = Vec::new();
    for line in text.lines().filter(|l| !l.starts_with('#')).skip(1) {
        let v: Vec<f64> = line.split(',').filter_map(|s| s.parse().ok()).collect();
        if v.len() >= 7 {
            obs.xyz.push([v[0], v[1], v[2]]);
            obs.value.push(v[3]);
            pred.push(v[4]);
            obs.uncertainty.push(v[6]);
        }
    }
    Some((obs, pred))
}
