//! File-system helpers shared by every writer.

pub mod atomic;
pub mod text;
pub mod undo;

/// The file's ending in lower case, without the dot (`"tif"` for
/// `DEM.TIF`); empty when it has none.
pub fn ending(path: &std::path::Path) -> String {
    path.extension()
        .and_then(|e| e.to_str())
        .map(|e| e.to_ascii_lowercase())
        .unwrap_or_default()
}
