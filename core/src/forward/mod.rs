//! Forward modelling of simple bodies at stations.
//!
//! * [`bodies`]: the body file (JSON), parsed and checked with JSON paths in
//!   every message.
//! * stations are read with [`crate::table::passthrough`] (x, y, z plus
//!   columns carried through to the output).
//! * [`ForwardModel::evaluate`]: the fields of all bodies at all stations, in
//!   parallel over stations.

pub mod bodies;

use crate::physics::{gravity, magnetic, magnetic::InducingField, Prism};
use rayon::prelude::*;
use thiserror::Error;

/// One body: a prism with a density contrast and, optionally, a total
/// magnetization vector (induced, remanent or both, in A/m).
#[derive(Debug, Clone, PartialEq)]
pub struct Body {
    pub name: String,
    pub prism: Prism,
    /// Density contrast in g/cm³ relative to the background.
    pub density_g_cc: f64,
    /// Total magnetization in A/m in the project frame (x east, y north, z up).
    pub magnetization_a_m: Option<[f64; 3]>,
}

/// Bodies and the inducing field used to project B onto the total field.
#[derive(Debug, Clone, PartialEq)]
pub struct ForwardModel {
    pub bodies: Vec<Body>,
    pub inducing_field: Option<InducingField>,
}

/// The fields at one station. Magnetic entries are present when the model
/// has an inducing field.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct StationField {
    pub gz_mgal: f64,
    /// (B_x east, B_y north, B_z up) in nT.
    pub b_nt: Option<[f64; 3]>,
    pub tmi_nt: Option<f64>,
}

/// Why the fields at a station could not be computed.
#[derive(Debug, Error, PartialEq)]
pub enum FieldError {
    #[error("station {station} at ({x}, {y}, {z}) lies on an edge of body '{body}', where the magnetic field is infinite; move the station off the edge")]
    OnEdge {
        station: usize,
        body: String,
        x: f64,
        y: f64,
        z: f64,
    },
    #[error("station {station} at ({x}, {y}, {z}) lies inside magnetized body '{body}'; the forward command computes fields outside bodies only")]
    InsideMagnetized {
        station: usize,
        body: String,
        x: f64,
        y: f64,
        z: f64,
    },
}

impl ForwardModel {
    /// True when magnetic outputs are defined (an inducing field is given).
    pub fn has_magnetics(&self) -> bool {
        self.inducing_field.is_some()
    }

    /// The fields of all bodies at one station (index `station` for messages).
    pub fn field_at(&self, station: usize, p: [f64; 3]) -> Result<StationField, FieldError> {
        let mut gz = 0.0;
        let mut b = [0.0; 3];
        for body in &self.bodies {
            if body.density_g_cc != 0.0 {
                gz += gravity::prism_gz_mgal(&body.prism, p, body.density_g_cc);
            }
            if let (Some(m), true) = (body.magnetization_a_m, self.has_magnetics()) {
                if m == [0.0; 3] {
                    continue;
                }
                let at = |body: &Body| (station, body.name.clone(), p[0], p[1], p[2]);
                if body.prism.contains_strictly(p) {
                    let (station, body, x, y, z) = at(body);
                    return Err(FieldError::InsideMagnetized {
                        station,
                        body,
                        x,
                        y,
                        z,
                    });
                }
                let Some(bb) = magnetic::prism_field_nt(&body.prism, p, m) else {
                    let (station, body, x, y, z) = at(body);
                    return Err(FieldError::OnEdge {
                        station,
                        body,
                        x,
                        y,
                        z,
                    });
                };
                for a in 0..3 {
                    b[a] += bb[a];
                }
            }
        }
        let (b_nt, tmi_nt) = match &self.inducing_field {
            Some(f) => (Some(b), Some(magnetic::tmi_nt(b, f.unit()))),
            None => (None, None),
        };
        Ok(StationField {
            gz_mgal: gz,
            b_nt,
            tmi_nt,
        })
    }

    /// The fields at every station, in parallel. The first failing station
    /// (lowest index) is reported.
    pub fn evaluate(&self, stations: &[[f64; 3]]) -> Result<Vec<StationField>, FieldError> {
        let each: Vec<Result<StationField, FieldError>> = stations
            .par_iter()
            .enumerate()
            .map(|(i, &p)| self.field_at(i, p))
            .collect();
        each.into_iter().collect()
    }
}
