//! Constraints: where geology enters the inversion.
//!
//! * [`wireframe`]: closed triangulated surfaces and inside tests.
//! * [`region`]: the regions a layer can cover (whole volume, above, below or
//!   between surfaces, a band around a surface, an extruded polygon, a box, a
//!   tabular body, a wireframe, drill-hole cylinders).
//! * [`build`]: layers (region × assignments) applied in order into the cell
//!   and face arrays of a run, checked for consistency.

pub mod build;
pub mod region;
pub mod wireframe;

use thiserror::Error;

#[derive(Debug, Error, PartialEq)]
pub enum ConstraintError {
    #[error("no {kind} named '{name}' is loaded (loaded: {known})")]
    UnknownInput {
        kind: &'static str,
        name: String,
        known: String,
    },
    #[error("surface '{name}' has no value at ({x:.1}, {y:.1})")]
    SurfaceGap { name: String, x: f64, y: f64 },
    #[error("{0}")]
    Geometry(String),
    #[error("layer '{layer}': {field} {message}")]
    Value {
        layer: String,
        field: &'static str,
        message: String,
    },
    #[error("layer '{layer}': {inner}")]
    InLayer { layer: String, inner: String },
    #[error("{cells} cells have a lower bound above the upper bound (the first, cell {first}, has {lower} > {upper}; its bounds were last set by {layer})")]
    Bounds {
        cells: usize,
        first: usize,
        lower: f64,
        upper: f64,
        layer: String,
    },
    #[error("cell {cell} is fixed at {value}, outside its bounds [{lower}, {upper}]")]
    FixedOutside {
        cell: usize,
        value: f64,
        lower: f64,
        upper: f64,
    },
}

impl ConstraintError {
    /// The same error, saying which layer it came from.
    pub fn in_layer(self, layer: &str) -> ConstraintError {
        match self {
            e @ (ConstraintError::Value { .. } | ConstraintError::InLayer { .. }) => e,
            e => ConstraintError::InLayer {
                layer: layer.to_string(),
                inner: e.to_string(),
            },
        }
    }
}
