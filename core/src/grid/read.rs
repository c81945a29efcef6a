//! One entry for grids a user brings (terrain models, surfaces): GeoTIFF
//! (`.tif`, `.tiff`), ESRI ASCII grid (`.asc`) or gridded XYZ text (`.xyz`,
//! `.csv`, `.txt`), chosen by the file's ending.

use super::ascii::{read_ascii_grid, AsciiGridError};
use super::geotiff::{read_geotiff, GeoTiffError};
use super::xyz::{read_xyz, XyzError};
use super::Grid2;
use crate::table::TextOptions;
use std::path::{Path, PathBuf};
use thiserror::Error;

/// The grid formats read, for messages and file choosers.
pub const GRID_ENDINGS: [&str; 6] = ["tif", "tiff", "asc", "xyz", "csv", "txt"];

#[derive(Debug, Error)]
pub enum GridReadError {
    #[error(transparent)]
    GeoTiff(#[from] GeoTiffError),
    #[error(transparent)]
    Ascii(#[from] AsciiGridError),
    #[error(transparent)]
    Xyz(#[from] XyzError),
    #[error("{file}: a grid must be a GeoTIFF (.tif), an ESRI ASCII grid (.asc) or gridded XYZ text (.xyz, .csv, .txt)")]
    Format { file: PathBuf },
}

/// True for a file that can only be a grid (GeoTIFF, ESRI ASCII); XYZ,
/// CSV and text files may be tables as well.
pub fn is_grid_file(path: &Path) -> bool {
    matches!(crate::io::ending(path).as_str(), "tif" | "tiff" | "asc")
}

/// Reads a grid by its file ending.
pub fn read_grid(path: &Path) -> Result<Grid2, GridReadError> {
    let ext = crate::io::ending(path);
    match ext.as_str() {
        "tif" | "tiff" => Ok(read_geotiff(path)?),
        "asc" => Ok(read_ascii_grid(path)?),
        "xyz" | "csv" | "txt" => {
            let mut g = read_xyz(path, &TextOptions::default())?;
            // An XYZ file names no reference; a .prj beside it may.
            if let Ok(wkt) = std::fs::read_to_string(path.with_extension("prj")) {
                g.epsg = crate::geodesy::wkt::epsg_of_wkt(&wkt);
            }
            Ok(g)
        }
        _ => Err(GridReadError::Format {
            file: path.to_path_buf(),
        }),
    }
}
