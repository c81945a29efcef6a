//! The invented demo project: a complete project folder generated
//! deterministically by this program's own forward modelling from a known
//! model ([`truth::TrueModel`]) with realistic noise.
//!
//! The scenario, "Harrow Fen (invented)", is fiction: a buried, dipping,
//! dense and magnetic intrusive body offset by an east–west fault beneath
//! 20–40 m of light, non-magnetic glacial cover on gently rolling terrain, in
//! UTM zone 17N (so normal gravity and the main field are computed for a
//! real latitude). It has a ground gravity survey with base-station loops,
//! meter drift and earth tide; a ground magnetic survey on the same lines
//! with a base-station diurnal record; a terrain model; six shallow drill
//! holes with logged densities and susceptibilities; an interpreted base of
//! cover; and one geologist's wireframe of the intrusive.

pub mod generate;
pub mod truth;

pub use generate::{write_demo, DemoError, DemoReport, DemoSize};
