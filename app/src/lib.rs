//! The `fieldstone` program: the command line and, with the default `gui`
//! feature, the project window; both over `fieldstone-pipeline` and
//! `fieldstone-core`.

pub mod commands;
#[cfg(feature = "gui")]
pub mod window;

pub use fieldstone_pipeline as pipeline;
