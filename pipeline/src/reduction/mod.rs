//! Reductions of a survey file: read the table, reduce every reading with
//! core's formulas, write the input's columns with the results after them.
//!
//! The pipeline's reduce step and the `reduce` commands both call these,
//! with plain settings; the command line only translates its options into
//! them. Messages (drift loops, the Nettleton check, the inducing field)
//! go to the observer, so the run log and the terminal show the same lines.

pub mod gravity;
pub mod magnetic;
pub mod survey_files;
mod table;

pub use gravity::{reduce_gravity, BaseTie, GravityJob, ReducedReading, TerrainInputs};
pub use magnetic::{reduce_magnetic, MagneticJob};
pub use survey_files::{split_pair, ReadOptions, SOURCE_COLUMN};
