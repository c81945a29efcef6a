//! Exports for the geologist's 3D package, a GIS and scripts.
//!
//! * [`voxel`]: VTK XML RectilinearGrid (`.vtr`, ASCII or appended raw
//!   binary), NumPy `.npy` with a JSON mesh description, and a point table of
//!   active cells.
//! * [`section`]: sections along polylines and plan slices at an elevation or
//!   a depth below topography, sampled by cell lookup.

pub mod figure;
pub mod section;
pub mod voxel;
