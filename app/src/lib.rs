//! The `fieldstone` program: the project window and the headless commands,
//! over `fieldstone-core`.

pub mod commands;
pub mod pipeline;
pub mod window;
