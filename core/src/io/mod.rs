//! File-system helpers shared by every writer.

pub mod atomic;
pub mod text;
pub mod undo;
