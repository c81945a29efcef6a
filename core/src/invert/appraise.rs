//! Model appraisal: what of a model the data decided.
//!
//! * [`depth_of_investigation`]: the depth-of-investigation index of
//!   Oldenburg & Li (1999). A second run with the reference model shifted by
//!   δ; R = (m₂ − m₁)/(r₂ − r₁) = (m₂ − m₁)/δ is near 0 where the data fixed the
//!   value (both runs agree) and near 1 where the model just followed its
//!   reference. The second run's data are moved by the mean field of the
//!   shift (see the function).
//! * [`depth_of_investigation_pattern`]: the same with a shift that varies
//!   from cell to cell. For potential fields a uniform shift over a wide
//!   mesh is nearly a slab, whose field is a near-constant offset: residual
//!   data cannot see it (so the index flattens towards 1 at every depth once
//!   the offset is allowed for) or must cancel it (so the index goes negative
//!   at depth where it is not). [`DoiPattern::Checkerboard`] shifts the
//!   reference by +δ and −δ in square blocks, the same in every layer, so
//!   the shift has no mean field and its field fades with depth like that of
//!   any structure of the block's size: the index then says down to which
//!   depth the data decide structure of that size. This pattern is a choice
//!   of this program, not part of the published method.
//! * [`feature_test`]: "is this feature required?". The cells of a region are
//!   held at the background (fixed, or referenced with a high weight), the
//!   inversion is run again, and the report says whether the target misfit is
//!   still reached and by how much the model objective grew.
//!
//! Both reuse [`invert`](super::solver::invert) with modified constraint
//! arrays; nothing here changes the first run.

use super::solver::{invert, model_objective, InversionError, Problem, RunResult};
use super::InversionSettings;
use crate::constraint::build::ConstraintArrays;
use crate::operator::Operator;
use crate::progress::Observer;
use serde::{Deserialize, Serialize};

/// How the reference is moved for the depth-of-investigation index.
#[derive(Debug, Clone, Copy, PartialEq, Serialize, Deserialize)]
#[serde(tag = "kind", rename_all = "snake_case")]
pub enum DoiPattern {
    /// +δ in every free cell (Oldenburg & Li 1999).
    Uniform,
    /// +δ and −δ in square blocks of this side (metres; none: a quarter of
    /// the core's shorter side, at least two cells), the same in every layer.
    Checkerboard { block_m: Option<f64> },
}

impl Default for DoiPattern {
    fn default() -> Self {
        DoiPattern::Checkerboard { block_m: None }
    }
}

/// The reference shift of every mesh cell for the index: `shift` times the
/// pattern's sign on free active cells, 0 elsewhere; and the block side used.
pub fn doi_shift(pb: &Problem, shift: f64, pattern: DoiPattern) -> (Vec<f64>, Option<f64>) {
    let mesh = pb.mesh;
    let c = pb.constraints;
    let [nx, ny, _] = mesh.shape();
    let block = match pattern {
        DoiPattern::Uniform => None,
        DoiPattern::Checkerboard { block_m } => Some(block_m.unwrap_or_else(|| {
            let side = |nodes: &[f64], (a, b): (usize, usize)| nodes[b] - nodes[a];
            let short = side(&mesh.x, mesh.core[0]).min(side(&mesh.y, mesh.core[1]));
            let cell = (mesh.x[mesh.core[0].0 + 1] - mesh.x[mesh.core[0].0])
                .max(mesh.y[mesh.core[1].0 + 1] - mesh.y[mesh.core[1].0]);
            ((0.25 * short / cell).round().max(2.0)) * cell
        })),
    };
    let (x0, y0) = (mesh.x[mesh.core[0].0], mesh.y[mesh.core[1].0]);
    let out = (0..mesh.n_cells())
        .map(|cell| {
            if !c.active[cell] || c.fixed[cell] {
                return 0.0;
            }
            match block {
                None => shift,
                Some(b) => {
                    let p = mesh.centre(cell % nx, (cell / nx) % ny, 0);
                    let (bx, by) = (
                        ((p[0] - x0) / b).floor() as i64,
                        ((p[1] - y0) / b).floor() as i64,
                    );
                    if (bx + by).rem_euclid(2) == 0 {
                        shift
                    } else {
                        -shift
                    }
                }
            }
        })
        .collect();
    (out, block)
}

/// What to appraise after a scenario's inversion, as plain data.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct AppraisalSettings {
    /// Reference shift (model units: g/cm³ or SI) of the second run for the
    /// depth-of-investigation index; none: no index.
    #[serde(default)]
    pub doi_reference_shift: Option<f64>,
    /// Normalised index above which a layer counts as decided by the
    /// reference rather than the data (a judgement; 0.4 by default).
    #[serde(default = "default_doi_cutoff")]
    pub doi_cutoff: f64,
    /// How the shift is laid out over the cells.
    #[serde(default)]
    pub doi_pattern: DoiPattern,
    /// "Is this feature required?" reruns.
    #[serde(default)]
    pub feature_tests: Vec<FeatureTestSpec>,
}

/// The default cut-off of the normalised depth-of-investigation index.
pub fn default_doi_cutoff() -> f64 {
    0.4
}

impl Default for AppraisalSettings {
    fn default() -> Self {
        AppraisalSettings {
            doi_reference_shift: None,
            doi_cutoff: default_doi_cutoff(),
            doi_pattern: DoiPattern::default(),
            feature_tests: Vec::new(),
        }
    }
}

/// One feature test: a named region held at a background value.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct FeatureTestSpec {
    pub name: String,
    pub region: crate::constraint::region::Region,
    /// Model units (0: the reduction background itself).
    #[serde(default)]
    pub background: f64,
    pub hold: Hold,
}

/// The index of one run pair.
#[derive(Debug, Clone)]
pub struct DoiResult {
    /// R per operator column (active cell); NaN for fixed cells.
    pub index: Vec<f64>,
    /// R / max |R| over the free cells (Oldenburg & Li's normalised index).
    pub normalised: Vec<f64>,
    /// The second run (reference shifted by δ).
    pub shifted: RunResult,
    /// Free cells whose shifted reference lies outside their bounds (there
    /// the index is cut off by the bound, not decided by the data).
    pub shifted_outside_bounds: usize,
    /// The base level added to the second run's data: the mean field of the
    /// shift at the stations (data units).
    pub data_level_shift: f64,
}

/// Median of the index per mesh layer (top first) with the layer's depth
/// below `reference_elevation_m`, and the depth where the median first
/// exceeds `cutoff`.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct DoiProfile {
    /// (depth of the layer centre below the reference elevation, m; median
    /// normalised index; free cells in the layer).
    pub layers: Vec<(f64, f64, usize)>,
    pub cutoff: f64,
    /// Depth below which the layer medians stay above the cut-off (None:
    /// they never exceed it).
    pub depth_m: Option<f64>,
}

/// Runs the second inversion with the reference moved by `shift` (model
/// units) on every free active cell and forms the index against `base`,
/// the run with the unshifted reference.
pub fn depth_of_investigation<O: Operator>(
    op: &O,
    pb: &Problem,
    s: &InversionSettings,
    base: &RunResult,
    shift: f64,
    obs: &dyn Observer,
) -> Result<DoiResult, InversionError> {
    if !(shift.is_finite() && shift != 0.0) {
        return Err(InversionError::Setup(format!(
            "the reference shift for the depth-of-investigation index must be a non-zero number (got {shift})"
        )));
    }
    let (cell_shift, _) = doi_shift(pb, shift, DoiPattern::Uniform);
    depth_of_investigation_pattern(op, pb, s, base, &cell_shift, obs)
}

/// Runs the second inversion with the reference moved by `cell_shift` (one
/// value per mesh cell, model units; 0 leaves a cell alone) and forms the
/// index (m₂ − m₁)/shift against `base`. Where neighbouring free cells are
/// shifted differently the reference gradient across their face moves with
/// the shift too, so the shifted reference is one whole model: following it
/// costs nothing more in smoothness than following the first one.
pub fn depth_of_investigation_pattern<O: Operator>(
    op: &O,
    pb: &Problem,
    s: &InversionSettings,
    base: &RunResult,
    cell_shift: &[f64],
    obs: &dyn Observer,
) -> Result<DoiResult, InversionError> {
    let c = pb.constraints;
    if cell_shift.len() != c.active.len()
        || cell_shift.iter().any(|v| !v.is_finite())
        || pb.active.iter().all(|&k| cell_shift[k] == 0.0)
    {
        return Err(InversionError::Setup(
            "the reference shift for the depth-of-investigation index must be finite, one per cell, and not zero everywhere".into(),
        ));
    }
    same_cells(pb, base)?;
    let mut k: ConstraintArrays = c.clone();
    let mut outside = 0;
    for &cell in pb.active {
        let d = cell_shift[cell];
        if c.fixed[cell] || d == 0.0 {
            continue;
        }
        let r = c.reference[cell] + d;
        if r < c.lower[cell] || r > c.upper[cell] {
            outside += 1;
        }
        k.reference[cell] = r;
    }
    let mesh = pb.mesh;
    let shape = mesh.shape();
    let [nx, ny, _] = shape;
    let centre = |cell: usize| mesh.centre(cell % nx, (cell / nx) % ny, cell / (nx * ny));
    let free = |cell: usize| c.active[cell] && !c.fixed[cell];
    for (axis, grad) in [
        (0usize, &mut k.ref_grad_x),
        (1, &mut k.ref_grad_y),
        (2, &mut k.ref_grad_z),
    ] {
        for (a, b, f) in crate::constraint::build::faces(shape, axis) {
            let d = cell_shift[b] - cell_shift[a];
            if d != 0.0 && free(a) && free(b) {
                grad[f] += d / (centre(b)[axis] - centre(a)[axis]);
            }
        }
    }
    // The field of the shift over the stations. A uniform shift over a wide
    // mesh is nearly an infinite slab: for gravity it adds a near-constant
    // 2πGδh to every datum, which the second run would otherwise cancel with
    // spurious structure wherever that is cheapest. Residual data carry no
    // meaningful base level, so the second run's data are moved by the mean
    // of that field (for magnetics, and for a checkerboard shift, it is close
    // to zero). What remains of the shift's field is left for the data to
    // decide.
    let delta: Vec<f64> = pb
        .active
        .iter()
        .map(|&cell| if c.fixed[cell] { 0.0 } else { cell_shift[cell] })
        .collect();
    let mut field = vec![0.0; pb.data.len()];
    op.apply(&delta, &mut field);
    let level = field.iter().sum::<f64>() / field.len().max(1) as f64;
    let data2: Vec<f64> = pb.data.iter().map(|d| d + level).collect();
    let pb2 = Problem {
        constraints: &k,
        data: &data2,
        ..*pb
    };
    let shifted = invert(op, &pb2, s, obs)?;
    let index: Vec<f64> = pb
        .active
        .iter()
        .enumerate()
        .map(|(a, &cell)| {
            if c.fixed[cell] || delta[a] == 0.0 {
                f64::NAN
            } else {
                (shifted.model[a] - base.model[a]) / delta[a]
            }
        })
        .collect();
    let rmax = index
        .iter()
        .filter(|v| v.is_finite())
        .fold(0.0f64, |m, v| m.max(v.abs()));
    let normalised = index
        .iter()
        .map(|v| if rmax > 0.0 { v / rmax } else { *v })
        .collect();
    Ok(DoiResult {
        index,
        normalised,
        shifted,
        shifted_outside_bounds: outside,
        data_level_shift: level,
    })
}

/// The first run must be of the same active cells as the problem.
fn same_cells(pb: &Problem, base: &RunResult) -> Result<(), InversionError> {
    if base.model.len() == pb.active.len() {
        return Ok(());
    }
    Err(InversionError::Setup(format!(
        "the first run has {} cells, the problem {}",
        base.model.len(),
        pb.active.len()
    )))
}

/// Layer medians of an index over the active cells (`values` per operator
/// column), top layer first.
pub fn doi_profile(pb: &Problem, values: &[f64], cutoff: f64) -> DoiProfile {
    let mesh = pb.mesh;
    let [nx, ny, nz] = mesh.shape();
    let mut per: Vec<Vec<f64>> = vec![Vec::new(); nz];
    for (a, &cell) in pb.active.iter().enumerate() {
        if values[a].is_finite() {
            per[cell / (nx * ny)].push(values[a]);
        }
    }
    let mut layers = Vec::new();
    for k in (0..nz).rev() {
        let v = &mut per[k];
        if v.is_empty() {
            continue;
        }
        v.sort_by(|a, b| a.total_cmp(b));
        let med = v[v.len() / 2];
        let zc = 0.5 * (mesh.z[k] + mesh.z[k + 1]);
        layers.push((pb.reference_elevation_m - zc, med, v.len()));
    }
    // The shallowest layer from which every deeper median is above the cut-off.
    let mut depth = None;
    for i in (0..layers.len()).rev() {
        if layers[i].1 > cutoff {
            depth = Some(layers[i].0);
        } else {
            break;
        }
    }
    DoiProfile {
        layers,
        cutoff,
        depth_m: depth,
    }
}

/// How a region is held at the background for a feature test.
#[derive(Debug, Clone, Copy, PartialEq, Serialize, Deserialize)]
#[serde(tag = "kind", rename_all = "snake_case")]
pub enum Hold {
    /// The cells are fixed at the background value.
    Fixed,
    /// The cells keep their bounds but get the background as reference
    /// with this reference weight (relative to the default 1).
    Referenced { weight: f64 },
}

/// What the feature test found.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct FeatureReport {
    pub region_cells: usize,
    pub background: f64,
    pub hold: Hold,
    /// Chi-factor of the first run and of the run with the region held.
    pub chi_factor_base: f64,
    pub chi_factor_held: f64,
    pub target_chi_factor: f64,
    /// The held run reached the target misfit (within the run's tolerance)
    /// or fitted the data better than it.
    pub target_reached: bool,
    /// φ_m of both models under the first run's model objective in its
    /// least-squares form (same weights for both, no focusing weights), and
    /// the relative change.
    pub phi_m_base: f64,
    pub phi_m_held: f64,
    pub phi_m_change: f64,
    /// Largest change of a predicted datum between the two runs (data units)
    /// and the largest normalised residual of the held run.
    pub max_predicted_change: f64,
    pub max_abs_normalised_residual_held: f64,
    /// "required", "preferred" or "not required", and one sentence why.
    pub verdict: String,
    pub explanation: String,
    pub stopped_because_held: String,
}

/// Above this relative growth of φ_m a feature that is not strictly needed
/// is reported as "preferred" (a judgement, stated in every report).
pub const PREFERRED_PHI_M_CHANGE: f64 = 0.5;

/// Reruns with the cells of `region` (a flag per mesh cell) held at
/// `background` and compares with `base`.
#[allow(clippy::too_many_arguments)]
pub fn feature_test<O: Operator>(
    op: &O,
    pb: &Problem,
    s: &InversionSettings,
    base: &RunResult,
    region: &[bool],
    background: f64,
    hold: Hold,
    obs: &dyn Observer,
) -> Result<(FeatureReport, RunResult), InversionError> {
    let c = pb.constraints;
    if region.len() != c.active.len() {
        return Err(InversionError::Setup(format!(
            "the region has {} cells, the mesh {}",
            region.len(),
            c.active.len()
        )));
    }
    same_cells(pb, base)?;
    if let Hold::Referenced { weight } = hold {
        if !(weight.is_finite() && weight > 0.0) {
            return Err(InversionError::Setup(format!(
                "the reference weight of a held region must be positive (got {weight})"
            )));
        }
    }
    let mut k = c.clone();
    let mut n_region = 0;
    for &cell in pb.active {
        if !region[cell] || c.fixed[cell] {
            continue;
        }
        n_region += 1;
        let b = background.clamp(c.lower[cell], c.upper[cell]);
        match hold {
            Hold::Fixed => {
                k.fixed[cell] = true;
                k.starting[cell] = b;
            }
            Hold::Referenced { weight } => {
                k.reference[cell] = b;
                k.reference_weight[cell] = weight;
            }
        }
    }
    if n_region == 0 {
        return Err(InversionError::Setup(
            "the region of the feature test holds no free active cell".into(),
        ));
    }
    let pb2 = Problem {
        constraints: &k,
        ..*pb
    };
    let held = invert(op, &pb2, s, obs)?;
    // Both models under the first run's objective (least-squares form).
    let (obj, _, _) = model_objective(op, pb, s)?;
    let phi_base = obj.value(&base.model).total;
    let phi_held = obj.value(&held.model).total;
    let change = if phi_base > 0.0 {
        phi_held / phi_base - 1.0
    } else {
        f64::INFINITY
    };
    let nd = pb.data.len().max(1) as f64;
    let target_chi = held.summary.target_phi_d / nd;
    let reached = held.summary.chi_factor <= target_chi * (1.0 + s.target_tolerance);
    let max_pred = held
        .predicted
        .iter()
        .zip(&base.predicted)
        .map(|(a, b)| (a - b).abs())
        .fold(0.0, f64::max);
    let max_res = held
        .predicted
        .iter()
        .zip(pb.data)
        .zip(pb.uncertainty)
        .map(|((p, d), u)| ((d - p) / u).abs())
        .fold(0.0, f64::max);
    let (verdict, explanation) = if !reached {
        ("required", format!("with the region held at {background} the best fit has chi-factor {:.3} against the target {:.3}: the data need something in the region", held.summary.chi_factor, target_chi))
    } else if change > PREFERRED_PHI_M_CHANGE {
        ("preferred", format!("the data are fitted without it (chi-factor {:.3}), but the model objective grows by {:.0} % (more than {:.0} %): the data can be explained otherwise, at the cost of structure elsewhere", held.summary.chi_factor, 100.0 * change, 100.0 * PREFERRED_PHI_M_CHANGE))
    } else {
        ("not required", format!("the data are fitted as well without it (chi-factor {:.3}) and the model objective changes by {:+.0} %: the data do not demand a feature there", held.summary.chi_factor, 100.0 * change))
    };
    Ok((
        FeatureReport {
            region_cells: n_region,
            background,
            hold,
            chi_factor_base: base.summary.chi_factor,
            chi_factor_held: held.summary.chi_factor,
            target_chi_factor: target_chi,
            target_reached: reached,
            phi_m_base: phi_base,
            phi_m_held: phi_held,
            phi_m_change: change,
            max_predicted_change: max_pred,
            max_abs_normalised_residual_held: max_res,
            verdict: verdict.into(),
            explanation,
            stopped_because_held: held.summary.stopped_because.clone(),
        },
        held,
    ))
}
