//! Reductions: from meter and magnetometer readings to anomalies.
//!
//! * [`gravity`]: normal gravity, height, atmospheric, slab and curvature
//!   corrections, and the free-air, Bouguer and complete Bouguer anomalies.
//! * [`tide`]: earth tide by Longman (1959).
//! * [`drift`]: base-station loops, linear drift, tie to absolute bases.
//! * [`network`]: least-squares adjustment of a network of bases read in
//!   several files, some of known absolute gravity.
//! * [`meter`]: meter calibration tables (counter units to mGal).
//! * [`terrain`]: terrain correction from a DEM by prisms and line masses.
//! * [`nettleton`]: reduction density by Nettleton's (1939) method.
//! * [`magnetic`]: diurnal correction from a base station, main-field removal,
//!   and the survey's inducing field.

pub mod drift;
pub mod gravity;
pub mod magnetic;
pub mod meter;
pub mod nettleton;
pub mod network;
pub mod terrain;
pub mod tide;
