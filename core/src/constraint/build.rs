//! Constraint layers and the arrays they build.
//!
//! Layers apply in order; a later layer overrides an earlier one on the cells
//! (or faces) they share; a layer that is switched off does nothing. The
//! result is a set of cell arrays (bounds, reference and its weight, starting
//! model, fixed mask, active mask) and face arrays (smoothness weights and
//! reference gradients in x, y, z). Face arrays are indexed like cells, with
//! one fewer entry along their axis: x-faces i + (nx−1)(j + ny·k), y-faces
//! i + nx(j + (ny−1)k), z-faces i + nx(j + ny·k) for k < nz − 1.

use super::region::{hole_cells, membership, surface_at_columns, Inputs, Region};
use super::ConstraintError;
use crate::mesh::topo::ActiveCells;
use crate::mesh::TensorMesh;
use serde::{Deserialize, Serialize};

/// Where a sharp contact runs.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
#[serde(tag = "kind", rename_all = "snake_case")]
pub enum ContactAlong {
    /// Every face between a cell of the region and one outside it.
    RegionBoundary,
    /// Every face whose two cells lie on opposite sides of a named surface.
    Surface { name: String },
}

/// A sharp contact: the smoothness weight of each crossed face is multiplied
/// by `factor` (< 1 lets the model change abruptly there).
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct Contact {
    pub factor: f64,
    pub along: ContactAlong,
}

/// Reference values from drill-hole logs: the length-and-distance weighted
/// mean of the logged column over the intervals whose cylinders reach a cell,
/// minus the background (so it is a contrast, like the model).
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct HoleValues {
    pub column: String,
    /// The background the model is relative to (the reduction density for
    /// gravity, 0 for susceptibility), in the logged unit.
    pub background: f64,
    pub radius_m: f64,
    pub decay: bool,
}

/// What a layer sets on its cells. `None` leaves the value as it was.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize, Default)]
pub struct Assignments {
    pub lower: Option<f64>,
    pub upper: Option<f64>,
    pub reference: Option<f64>,
    /// How closely the result should honour the reference (relative to the
    /// default 1): high where drilling is trusted, orders of magnitude lower
    /// where the value is a guess.
    pub reference_weight: Option<f64>,
    pub starting: Option<f64>,
    /// Hold the cells at their starting value.
    #[serde(default)]
    pub fixed: bool,
    /// Smoothness factors (east-west, north-south, vertical) on faces inside the region.
    pub smoothness: Option<[f64; 3]>,
    pub sharp_contact: Option<Contact>,
    /// A relative value from which reference gradients are computed.
    pub relative_value: Option<f64>,
    pub from_holes: Option<HoleValues>,
}

#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct Layer {
    pub name: String,
    #[serde(default = "yes")]
    pub enabled: bool,
    pub region: Region,
    pub assign: Assignments,
}

fn yes() -> bool {
    true
}

/// Values before any layer.
#[derive(Debug, Clone, Copy, PartialEq, Serialize, Deserialize)]
pub struct Defaults {
    pub lower: f64,
    pub upper: f64,
    pub reference: f64,
    pub reference_weight: f64,
    pub starting: f64,
}

impl Defaults {
    /// Density contrast, g/cm³: unbounded (±∞), reference 0.
    pub fn density() -> Defaults {
        Defaults {
            lower: f64::NEG_INFINITY,
            upper: f64::INFINITY,
            reference: 0.0,
            reference_weight: 1.0,
            starting: 0.0,
        }
    }
    /// Susceptibility, SI: non-negative, reference 0.
    pub fn susceptibility() -> Defaults {
        Defaults {
            lower: 0.0,
            upper: f64::INFINITY,
            reference: 0.0,
            reference_weight: 1.0,
            starting: 0.0,
        }
    }
}

/// The arrays a run uses.
#[derive(Debug, Clone, PartialEq)]
pub struct ConstraintArrays {
    pub shape: [usize; 3],
    pub lower: Vec<f64>,
    pub upper: Vec<f64>,
    pub reference: Vec<f64>,
    pub reference_weight: Vec<f64>,
    pub starting: Vec<f64>,
    pub fixed: Vec<bool>,
    pub active: Vec<bool>,
    pub smooth_x: Vec<f64>,
    pub smooth_y: Vec<f64>,
    pub smooth_z: Vec<f64>,
    pub ref_grad_x: Vec<f64>,
    pub ref_grad_y: Vec<f64>,
    pub ref_grad_z: Vec<f64>,
}

/// Face pairs (cell a, cell b, face index) along an axis.
pub fn faces(shape: [usize; 3], axis: usize) -> impl Iterator<Item = (usize, usize, usize)> {
    let [nx, ny, nz] = shape;
    let (fx, fy, fz) = match axis {
        0 => (nx - 1, ny, nz),
        1 => (nx, ny - 1, nz),
        _ => (nx, ny, nz - 1),
    };
    (0..fz).flat_map(move |k| {
        (0..fy).flat_map(move |j| {
            (0..fx).map(move |i| {
                let a = i + nx * (j + ny * k);
                let b = match axis {
                    0 => a + 1,
                    1 => a + nx,
                    _ => a + nx * ny,
                };
                (a, b, i + fx * (j + fy * k))
            })
        })
    })
}

/// A per-face array shown on cells, for previews: each cell gets `combine`
/// of the values on its two faces along `axis` (one at the mesh's edge).
/// Smoothness factors use the minimum, so a sharp contact shows on both
/// cells beside it.
pub fn faces_on_cells(
    shape: [usize; 3],
    axis: usize,
    face: &[f64],
    combine: impl Fn(f64, f64) -> f64,
) -> Vec<f64> {
    let n = shape[0] * shape[1] * shape[2];
    let mut out = vec![f64::NAN; n];
    if face.len() != face_count(shape, axis) {
        return out;
    }
    for (a, b, f) in faces(shape, axis) {
        let v = face[f];
        for c in [a, b] {
            out[c] = if out[c].is_nan() {
                v
            } else {
                combine(out[c], v)
            };
        }
    }
    out
}

fn face_count(shape: [usize; 3], axis: usize) -> usize {
    let [nx, ny, nz] = shape;
    match axis {
        0 => nx.saturating_sub(1) * ny * nz,
        1 => nx * ny.saturating_sub(1) * nz,
        _ => nx * ny * nz.saturating_sub(1),
    }
}

/// Builds the arrays; returns warnings (clipped starting values).
pub fn build(
    mesh: &TensorMesh,
    active: &ActiveCells,
    layers: &[Layer],
    d: Defaults,
    inputs: &Inputs,
) -> Result<(ConstraintArrays, Vec<String>), ConstraintError> {
    let shape = mesh.shape();
    let n = mesh.n_cells();
    let mut a = ConstraintArrays {
        shape,
        lower: vec![d.lower; n],
        upper: vec![d.upper; n],
        reference: vec![d.reference; n],
        reference_weight: vec![d.reference_weight; n],
        starting: vec![d.starting; n],
        fixed: vec![false; n],
        active: active.active.clone(),
        smooth_x: vec![1.0; face_count(shape, 0)],
        smooth_y: vec![1.0; face_count(shape, 1)],
        smooth_z: vec![1.0; face_count(shape, 2)],
        ref_grad_x: vec![0.0; face_count(shape, 0)],
        ref_grad_y: vec![0.0; face_count(shape, 1)],
        ref_grad_z: vec![0.0; face_count(shape, 2)],
    };
    let mut bound_layer = vec![usize::MAX; n];
    let mut relative: Option<Vec<f64>> = None;
    for (li, layer) in layers.iter().enumerate().filter(|(_, l)| l.enabled) {
        let s = &layer.assign;
        for (field, v) in [("reference_weight", s.reference_weight)] {
            if let Some(v) = v {
                if !(v.is_finite() && v >= 0.0) {
                    return Err(ConstraintError::Value {
                        layer: layer.name.clone(),
                        field,
                        message: format!("{v} must be zero or positive"),
                    });
                }
            }
        }
        if let Some(f) = s.smoothness {
            if f.iter().any(|v| !(v.is_finite() && *v > 0.0)) {
                return Err(ConstraintError::Value {
                    layer: layer.name.clone(),
                    field: "smoothness",
                    message: format!("{f:?}: factors must be positive"),
                });
            }
        }
        if let Some(c) = &s.sharp_contact {
            if !(c.factor.is_finite() && c.factor > 0.0) {
                return Err(ConstraintError::Value {
                    layer: layer.name.clone(),
                    field: "sharp_contact.factor",
                    message: format!("{} must be positive", c.factor),
                });
            }
        }
        let w = membership(&layer.region, mesh, inputs).map_err(|e| e.in_layer(&layer.name))?;
        for c in 0..n {
            if w[c] <= 0.0 || !a.active[c] {
                continue;
            }
            if let Some(v) = s.lower {
                a.lower[c] = v;
                bound_layer[c] = li;
            }
            if let Some(v) = s.upper {
                a.upper[c] = v;
                bound_layer[c] = li;
            }
            if let Some(v) = s.reference {
                a.reference[c] = v;
            }
            if let Some(v) = s.reference_weight {
                a.reference_weight[c] = v * w[c] as f64;
            }
            if let Some(v) = s.starting {
                a.starting[c] = v;
            }
            if s.fixed {
                a.fixed[c] = true;
            }
            if let Some(v) = s.relative_value {
                relative.get_or_insert_with(|| vec![0.0; n])[c] = v;
            }
        }
        if let Some(hv) = &s.from_holes {
            let holes = inputs.holes.as_ref().ok_or_else(|| {
                ConstraintError::UnknownInput {
                    kind: "drill holes",
                    name: "(none loaded)".into(),
                    known: String::new(),
                }
                .in_layer(&layer.name)
            })?;
            let col = holes
                .value_names
                .iter()
                .position(|v| v.eq_ignore_ascii_case(&hv.column))
                .ok_or_else(|| {
                    ConstraintError::UnknownInput {
                        kind: "drill-hole value column",
                        name: hv.column.clone(),
                        known: holes.value_names.join(", "),
                    }
                    .in_layer(&layer.name)
                })?;
            for (cell, (wmax, list)) in hole_cells(mesh, holes, hv.radius_m, hv.decay) {
                if !a.active[cell] || w[cell] <= 0.0 {
                    continue;
                }
                let (mut sv, mut sw) = (0.0, 0.0);
                for (h, iv, wt) in list {
                    let interval = &holes.holes[h].intervals[iv];
                    let v = interval.values[col];
                    if v.is_finite() {
                        sv += wt * v;
                        sw += wt;
                    }
                }
                if sw > 0.0 {
                    a.reference[cell] = sv / sw - hv.background;
                    a.reference_weight[cell] =
                        s.reference_weight.unwrap_or(d.reference_weight) * wmax;
                }
            }
        }
        let inside = |c: usize| w[c] > 0.0;
        if let Some(f) = s.smoothness {
            for (axis, arr) in [
                (0, &mut a.smooth_x),
                (1, &mut a.smooth_y),
                (2, &mut a.smooth_z),
            ] {
                for (p, q, fi) in faces(shape, axis) {
                    if inside(p) && inside(q) {
                        arr[fi] = f[axis];
                    }
                }
            }
        }
        if let Some(contact) = &s.sharp_contact {
            let crossed: Box<dyn Fn(usize, usize) -> bool> = match &contact.along {
                ContactAlong::RegionBoundary => Box::new(move |p, q| inside(p) != inside(q)),
                ContactAlong::Surface { name } => {
                    let g = inputs.surfaces.get(name).ok_or_else(|| {
                        ConstraintError::UnknownInput {
                            kind: "surface",
                            name: name.clone(),
                            known: inputs
                                .surfaces
                                .keys()
                                .cloned()
                                .collect::<Vec<_>>()
                                .join(", "),
                        }
                        .in_layer(&layer.name)
                    })?;
                    let surf = surface_at_columns(mesh, g)?;
                    let [nx, ny, _] = shape;
                    let above = move |c: usize| {
                        let (i, j, k) = (c % nx, (c / nx) % ny, c / (nx * ny));
                        mesh.centre(i, j, k)[2] > surf[i + nx * j]
                    };
                    Box::new(move |p, q| above(p) != above(q))
                }
            };
            for (axis, arr) in [
                (0, &mut a.smooth_x),
                (1, &mut a.smooth_y),
                (2, &mut a.smooth_z),
            ] {
                for (p, q, fi) in faces(shape, axis) {
                    if crossed(p, q) {
                        arr[fi] *= contact.factor;
                    }
                }
            }
        }
    }
    // Reference gradients from the relative model (finite differences between
    // cell centres).
    if let Some(r) = &relative {
        for (axis, arr) in [
            (0, &mut a.ref_grad_x),
            (1, &mut a.ref_grad_y),
            (2, &mut a.ref_grad_z),
        ] {
            for (p, q, fi) in faces(shape, axis) {
                let (cp, cq) = (centre_of(mesh, p), centre_of(mesh, q));
                arr[fi] = (r[q] - r[p]) / (cq[axis] - cp[axis]);
            }
        }
    }
    let warnings = check(&mut a, &bound_layer, layers)?;
    // Air cells: zero, fixed, outside the model.
    for c in 0..n {
        if !a.active[c] {
            a.lower[c] = 0.0;
            a.upper[c] = 0.0;
            a.reference[c] = 0.0;
            a.starting[c] = 0.0;
            a.fixed[c] = true;
        }
    }
    Ok((a, warnings))
}

fn centre_of(mesh: &TensorMesh, c: usize) -> [f64; 3] {
    let [nx, ny, _] = mesh.shape();
    mesh.centre(c % nx, (c / nx) % ny, c / (nx * ny))
}

/// lower ≤ upper everywhere; starting inside bounds (clipped with a warning);
/// fixed cells inside bounds.
fn check(
    a: &mut ConstraintArrays,
    bound_layer: &[usize],
    layers: &[Layer],
) -> Result<Vec<String>, ConstraintError> {
    let mut warnings = Vec::new();
    let n = a.lower.len();
    let bad: Vec<usize> = (0..n)
        .filter(|&c| a.active[c] && a.lower[c] > a.upper[c])
        .collect();
    if let Some(&c) = bad.first() {
        let layer = layers
            .get(bound_layer[c])
            .map(|l| l.name.clone())
            .unwrap_or_else(|| "the defaults".into());
        return Err(ConstraintError::Bounds {
            cells: bad.len(),
            first: c,
            lower: a.lower[c],
            upper: a.upper[c],
            layer,
        });
    }
    let mut clipped = 0;
    for c in 0..n {
        if !a.active[c] {
            continue;
        }
        let s = a.starting[c].clamp(a.lower[c], a.upper[c]);
        if s != a.starting[c] {
            if a.fixed[c] {
                return Err(ConstraintError::FixedOutside {
                    cell: c,
                    value: a.starting[c],
                    lower: a.lower[c],
                    upper: a.upper[c],
                });
            }
            a.starting[c] = s;
            clipped += 1;
        }
    }
    if clipped > 0 {
        warnings.push(format!("{clipped} starting values were outside their bounds and were moved to the nearest bound"));
    }
    Ok(warnings)
}

#[cfg(test)]
mod face_preview_tests {
    use super::*;

    #[test]
    fn a_cell_takes_the_smaller_factor_of_its_two_faces() {
        // 3 × 1 × 2 cells; vertical faces: 3 (one layer of faces).
        let shape = [3, 1, 2];
        let faces_z = vec![1.0, 0.05, 1.0];
        let v = faces_on_cells(shape, 2, &faces_z, f64::min);
        assert_eq!(v, vec![1.0, 0.05, 1.0, 1.0, 0.05, 1.0]);
        // East–west faces: 2 per row, 2 rows.
        let fx = vec![0.5, 1.0, 1.0, 0.2];
        let v = faces_on_cells(shape, 0, &fx, f64::min);
        assert_eq!(v, vec![0.5, 0.5, 1.0, 1.0, 0.2, 0.2]);
        assert!(
            faces_on_cells(shape, 0, &[1.0], f64::min)[0].is_nan(),
            "wrong length"
        );
    }
}
