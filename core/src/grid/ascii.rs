//! ESRI ASCII grids (`.asc`): a header of keywords and values, then the
//! node values row by row from the north (the layout Esri documents as the
//! "ESRI ASCII raster format" in its ArcGIS help; GDAL reads and writes the
//! same, with `dx`/`dy` for unequal spacing).
//!
//! ```text
//! ncols         4
//! nrows         3
//! xllcorner     451000.0      (or xllcenter: the centre of the corner cell)
//! yllcorner     5400000.0     (or yllcenter)
//! cellsize      50.0          (or dx and dy)
//! NODATA_value  -9999         (optional)
//! 312.5 313.0 ...
//! ```
//!
//! The values may wrap over any number of lines. A `.prj` beside the file
//! with an EPSG authority in its WKT gives the grid's reference.

use super::{Grid2, GridError};
use crate::table::sniff::decode_line;
use std::path::{Path, PathBuf};
use thiserror::Error;

#[derive(Debug, Error)]
pub enum AsciiGridError {
    #[error("cannot read {file}: {source}")]
    Read {
        file: PathBuf,
        source: std::io::Error,
    },
    #[error("{file}: line {line}: {message}")]
    Header {
        file: PathBuf,
        line: u64,
        message: String,
    },
    #[error("{file}: line {line}: '{text}' is not a number")]
    NotNumber {
        file: PathBuf,
        line: u64,
        text: String,
    },
    #[error(
        "{file}: the header gives {ncols} × {nrows} = {expected} values; the file holds {found}"
    )]
    Count {
        file: PathBuf,
        ncols: usize,
        nrows: usize,
        expected: usize,
        found: usize,
    },
    #[error("{file}: {source}")]
    Size { file: PathBuf, source: GridError },
}

/// Reads an ESRI ASCII grid and the EPSG code of the `.prj` beside it.
pub fn read_ascii_grid(path: &Path) -> Result<Grid2, AsciiGridError> {
    let bytes = std::fs::read(path).map_err(|source| AsciiGridError::Read {
        file: path.to_path_buf(),
        source,
    })?;
    let mut g = read_ascii_grid_bytes(&bytes, path)?;
    let prj = path.with_extension("prj");
    if let Ok(wkt) = std::fs::read_to_string(&prj) {
        g.epsg = crate::geodesy::wkt::epsg_of_wkt(&wkt);
    }
    Ok(g)
}

/// Header values read so far.
#[derive(Default)]
struct Header {
    ncols: Option<usize>,
    nrows: Option<usize>,
    /// (value, true when the keyword named the corner).
    x: Option<(f64, bool)>,
    y: Option<(f64, bool)>,
    cell: Option<f64>,
    dx: Option<f64>,
    dy: Option<f64>,
    nodata: Option<f64>,
}

/// Reads an ESRI ASCII grid from bytes; `path` is named in messages.
pub fn read_ascii_grid_bytes(bytes: &[u8], path: &Path) -> Result<Grid2, AsciiGridError> {
    let file = path.to_path_buf();
    let herr = |line: u64, message: String| AsciiGridError::Header {
        file: file.clone(),
        line,
        message,
    };
    let mut h = Header::default();
    let mut lines = bytes.split(|&b| b == b'\n').enumerate().peekable();
    // The header: lines that start with a keyword.
    while let Some((k, raw)) = lines.peek() {
        let line_no = *k as u64 + 1;
        let text = decode_line(raw);
        let t = text.trim();
        if t.is_empty() {
            lines.next();
            continue;
        }
        let mut it = t.split_whitespace();
        let key = it.next().unwrap_or("").to_ascii_lowercase();
        if !key.starts_with(|c: char| c.is_ascii_alphabetic()) {
            break;
        }
        let value = it
            .next()
            .ok_or_else(|| herr(line_no, format!("the keyword '{key}' has no value")))?;
        let num = || -> Result<f64, AsciiGridError> {
            value
                .parse::<f64>()
                .ok()
                .filter(|v| v.is_finite())
                .ok_or_else(|| herr(line_no, format!("{key}: '{value}' is not a number")))
        };
        let count = || -> Result<usize, AsciiGridError> {
            value
                .parse::<usize>()
                .ok()
                .filter(|n| *n > 0)
                .ok_or_else(|| herr(line_no, format!("{key}: '{value}' is not a count of nodes")))
        };
        match key.as_str() {
            "ncols" => h.ncols = Some(count()?),
            "nrows" => h.nrows = Some(count()?),
            "xllcorner" => h.x = Some((num()?, true)),
            "xllcenter" => h.x = Some((num()?, false)),
            "yllcorner" => h.y = Some((num()?, true)),
            "yllcenter" => h.y = Some((num()?, false)),
            "cellsize" => h.cell = Some(num()?),
            "dx" => h.dx = Some(num()?),
            "dy" => h.dy = Some(num()?),
            "nodata_value" => h.nodata = Some(num()?),
            _ => {
                return Err(herr(
                    line_no,
                    format!("'{key}' is not a keyword of an ESRI ASCII grid (ncols, nrows, xllcorner, yllcorner, cellsize, NODATA_value)"),
                ))
            }
        }
        lines.next();
    }
    let missing = |what: &str| herr(1, format!("the header has no {what}"));
    let ncols = h.ncols.ok_or_else(|| missing("ncols"))?;
    let nrows = h.nrows.ok_or_else(|| missing("nrows"))?;
    let (x, x_corner) = h.x.ok_or_else(|| missing("xllcorner or xllcenter"))?;
    let (y, y_corner) = h.y.ok_or_else(|| missing("yllcorner or yllcenter"))?;
    let (dx, dy) = match (h.cell, h.dx, h.dy) {
        (Some(c), _, _) => (c, c),
        (None, Some(a), Some(b)) => (a, b),
        _ => return Err(missing("cellsize (or dx and dy)")),
    };
    if !(dx > 0.0 && dy > 0.0) {
        return Err(herr(
            1,
            format!("the cell size {dx} × {dy} must be positive"),
        ));
    }
    let x0 = if x_corner { x + dx / 2.0 } else { x };
    let y0 = if y_corner { y + dy / 2.0 } else { y };
    let mut g =
        Grid2::new_empty(x0, y0, dx, dy, ncols, nrows).map_err(|source| AsciiGridError::Size {
            file: file.clone(),
            source,
        })?;
    let expected = ncols * nrows;
    let mut found = 0usize;
    for (k, raw) in lines {
        let text = decode_line(raw);
        for tok in text.split_whitespace() {
            let v = tok.parse::<f64>().map_err(|_| AsciiGridError::NotNumber {
                file: file.clone(),
                line: k as u64 + 1,
                text: tok.chars().take(40).collect(),
            })?;
            if found < expected {
                // Rows run from the north; the grid's row 0 is the south.
                let (row, col) = (found / ncols, found % ncols);
                let j = nrows - 1 - row;
                let nodata = h
                    .nodata
                    .is_some_and(|n| (v - n).abs() <= 1e-9 * n.abs().max(1.0));
                g.values[col + ncols * j] = if nodata || !v.is_finite() {
                    f64::NAN
                } else {
                    v
                };
            }
            found += 1;
        }
    }
    if found != expected {
        return Err(AsciiGridError::Count {
            file,
            ncols,
            nrows,
            expected,
            found,
        });
    }
    g.note = format!("read from {}", path.display());
    Ok(g)
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn corner_and_centre_registration_place_the_nodes() {
        let text = b"ncols 3\nnrows 2\nxllcorner 100\nyllcorner 200\ncellsize 10\nNODATA_value -9999\n1 2 3\n4 -9999 6\n";
        let g = read_ascii_grid_bytes(text, Path::new("a.asc")).unwrap();
        assert_eq!((g.nx, g.ny, g.x0, g.y0, g.dx), (3, 2, 105.0, 205.0, 10.0));
        // The first row written is the north one.
        assert_eq!(g.get(0, 1), 1.0);
        assert_eq!(g.get(2, 0), 6.0);
        assert!(g.get(1, 0).is_nan());
        let text = b"NCOLS 2\nNROWS 2\nXLLCENTER 100\nYLLCENTER 200\nDX 10\nDY 20\n1 2 3 4\n";
        let g = read_ascii_grid_bytes(text, Path::new("a.asc")).unwrap();
        assert_eq!((g.x0, g.y0, g.dx, g.dy), (100.0, 200.0, 10.0, 20.0));
        assert_eq!(g.get(0, 0), 3.0);
    }
}
