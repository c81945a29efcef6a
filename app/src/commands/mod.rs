//! One module per headless command; each turns its arguments into calls on
//! `fieldstone-core` and its errors into one message for the user.

pub mod constraints;
pub mod demo;
pub mod export;
pub mod filter;
pub mod forward;
pub mod grid;
pub mod igrf;
pub mod inspect;
pub mod reduce;
pub mod run;

/// The cautions printed with the help and shown in the window.
pub const CAUTIONS: &str = "Cautions: potential-field models are non-unique. Every model that fits the data is one of \
infinitely many, and the constraints decide which one you see. Interpretation and public reporting of \
exploration results follow the reporting codes of the jurisdiction and the judgement of a qualified person.";
