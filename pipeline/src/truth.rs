//! Comparison of a model with the known truth of an invented project (the
//! demo); real surveys have no truth.

use crate::context::ModelContext;
use crate::error::Result;
use crate::paths::at;
use fieldstone_core::demo::truth::TrueModel;
use fieldstone_core::mesh::TensorMesh;
use fieldstone_core::project::file::{DataKind, ProjectFile};
use std::path::Path;

/// Comparison of a model with the known truth of an invented project.
#[derive(Debug, Clone, serde::Serialize, serde::Deserialize, PartialEq)]
pub struct TruthComparison {
    pub rms_difference_core: f64,
    pub rms_difference_body: f64,
    pub body_cells: usize,
    pub correlation_core: f64,
}

pub(crate) fn truth_on_mesh(
    dir: &Path,
    p: &ProjectFile,
    m: &ModelContext,
    kind: DataKind,
) -> Result<Option<Vec<f64>>> {
    let Some(t) = &p.truth else { return Ok(None) };
    let path = at(dir, t)?;
    let text = std::fs::read_to_string(&path).map_err(|e| format!("{}: {e}", path.display()))?;
    let tm: TrueModel =
        serde_json::from_str(&text).map_err(|e| format!("{}: {e}", path.display()))?;
    Ok(Some(match kind {
        DataKind::Gravity => tm.on_mesh(&m.mesh, &m.active.active, 3, |t, q| t.density_at(q)),
        DataKind::Magnetic => {
            tm.on_mesh(&m.mesh, &m.active.active, 3, |t, q| t.susceptibility_at(q))
        }
    }))
}

pub(crate) fn compare(
    mesh: &TensorMesh,
    active: &[bool],
    model: &[f64],
    truth: &[f64],
) -> TruthComparison {
    let [nx, ny, _] = mesh.shape();
    let in_core = |c: usize| {
        let (i, j, k) = (c % nx, (c / nx) % ny, c / (nx * ny));
        let [(i0, i1), (j0, j1), (k0, k1)] = mesh.core;
        (i0..i1).contains(&i) && (j0..j1).contains(&j) && (k0..k1).contains(&k)
    };
    let tmax = truth.iter().cloned().fold(0.0f64, f64::max);
    let (mut s2, mut n, mut b2, mut nb) = (0.0, 0usize, 0.0, 0usize);
    let (mut sm, mut st, mut smm, mut stt, mut smt) = (0.0, 0.0, 0.0, 0.0, 0.0);
    for c in 0..model.len() {
        if !active[c] || !in_core(c) {
            continue;
        }
        let d = model[c] - truth[c];
        s2 += d * d;
        n += 1;
        if tmax > 0.0 && truth[c] >= 0.5 * tmax {
            b2 += d * d;
            nb += 1;
        }
        sm += model[c];
        st += truth[c];
        smm += model[c] * model[c];
        stt += truth[c] * truth[c];
        smt += model[c] * truth[c];
    }
    let nf = n.max(1) as f64;
    let cov = smt / nf - sm * st / (nf * nf);
    let var = ((smm / nf - (sm / nf).powi(2)) * (stt / nf - (st / nf).powi(2))).sqrt();
    TruthComparison {
        rms_difference_core: (s2 / nf).sqrt(),
        rms_difference_body: (b2 / nb.max(1) as f64).sqrt(),
        body_cells: nb,
        correlation_core: if var > 0.0 { cov / var } else { 0.0 },
    }
}
