//! Constraints: where geology enters the inversion.
//!
//! * [`wireframe`]: closed triangulated surfaces and inside tests.
pub mod wireframe;
