//! Survey line data: column roles and units, import, lines and QC.
//!
//! * [`columns`]: the typed role of each column, its unit, and guesses from
//!   common header spellings.
//! * [`time`]: dates and times in the formats field data use.
//! * [`import`]: a delimited file → [`import::Survey`], with every value
//!   converted once to the program's units and coordinates projected.
//! * [`lines`]: grouping rows into survey lines (by a line column or by gaps
//!   and turns).
//! * [`qc`]: per-line statistics, spike detection, repeat stations, spacing,
//!   and non-destructive flags.

pub mod columns;
pub mod import;
pub mod lines;
pub mod qc;
/// Dates and times (a utility below the survey; kept here by its old path).
pub use crate::time;
