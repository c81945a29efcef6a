//! Fieldstone core: every computation and file format of the program, with no
//! GUI dependency. See ARCHITECTURE.md for the map of modules and the
//! invariants they keep.

pub mod constraint;
pub mod demo;
pub mod drillhole;
pub mod export;
pub mod filter;
pub mod forward;
pub mod geodesy;
pub mod grid;
pub mod invert;
pub mod io;
pub mod memory;
pub mod mesh;
pub mod numeric;
pub mod operator;
pub mod outline;
pub mod physics;
pub mod progress;
pub mod project;
pub mod reduce;
pub mod survey;
pub mod table;
pub mod time;
pub mod units;
