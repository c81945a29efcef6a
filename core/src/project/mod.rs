//! The project: one file that records every step.
//!
//! * [`file`]: `project.json` — schema version, names, coordinate reference,
//!   units, background density, inducing field and every step's parameters as
//!   plain data; atomic save; newer-than-known files open read-only.
//! * [`provenance`]: content hashes of inputs and parameters, step records,
//!   and staleness (a step whose inputs or parameters changed is stale, and so
//!   is everything after it).
//! * [`paths`]: paths inside a project resolve inside its folder.

pub mod file;
pub mod paths;
pub mod provenance;
