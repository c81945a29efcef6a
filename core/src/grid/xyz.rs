//! Gridded XYZ text: one node per row (x, y, value), in any order, on a
//! regular lattice; missing nodes become nodata.

use super::{Grid2, GridError};
use crate::table::read::read_table;
use crate::table::{ColumnData, TableError, TextOptions};
use std::path::{Path, PathBuf};
use thiserror::Error;

#[derive(Debug, Error)]
pub enum XyzError {
    #[error(transparent)]
    Table(#[from] TableError),
    #[error("{file}: an XYZ grid needs three numeric columns (x, y, value); found {found}")]
    Columns { file: PathBuf, found: usize },
    #[error("{file}: line {line}: point ({x}, {y}) is not on the regular lattice of spacing {dx} × {dy} found in the file")]
    OffLattice {
        file: PathBuf,
        line: u64,
        x: f64,
        y: f64,
        dx: f64,
        dy: f64,
    },
    #[error(
        "{file}: the points do not span a grid (need at least two distinct x and two distinct y)"
    )]
    Degenerate { file: PathBuf },
    #[error("{file}: line {line}: node ({x}, {y}) appears twice")]
    Duplicate {
        file: PathBuf,
        line: u64,
        x: f64,
        y: f64,
    },
    #[error("{file}: {source}")]
    Size { file: PathBuf, source: GridError },
}

/// Reads an XYZ grid; columns named x/y/(z|value|...) are used when present,
/// otherwise the first three numeric columns.
pub fn read_xyz(path: &Path, opts: &TextOptions) -> Result<Grid2, XyzError> {
    xyz_from_table(read_table(path, opts, None)?, path)
}

/// Reads an XYZ grid from bytes in memory (tests, fuzzing); `path` is used
/// in messages only.
pub fn read_xyz_bytes(bytes: &[u8], path: &Path, opts: &TextOptions) -> Result<Grid2, XyzError> {
    xyz_from_table(
        crate::table::read::read_table_bytes(bytes, path, opts, None)?,
        path,
    )
}

fn xyz_from_table(t: crate::table::Table, path: &Path) -> Result<Grid2, XyzError> {
    let file = path.to_path_buf();
    let numeric: Vec<usize> = (0..t.columns.len())
        .filter(|&i| matches!(t.columns[i], ColumnData::Number(_)))
        .collect();
    let pick = |names: &[&str]| {
        names
            .iter()
            .find_map(|n| t.column_index(n))
            .filter(|i| numeric.contains(i))
    };
    let ix = pick(&["x", "easting", "east"]).or(numeric.first().copied());
    let iy = pick(&["y", "northing", "north"]).or(numeric.get(1).copied());
    let iz = pick(&["z", "value", "elevation", "elev", "height"]).or(numeric.get(2).copied());
    let (Some(ix), Some(iy), Some(iz)) = (ix, iy, iz) else {
        return Err(XyzError::Columns {
            file,
            found: numeric.len(),
        });
    };
    let col = |i: usize| t.columns[i].as_numbers().unwrap_or(&[]);
    let (xs, ys, zs) = (col(ix), col(iy), col(iz));
    let lattice = |v: &[f64]| -> Option<(f64, f64)> {
        let mut u: Vec<f64> = v.iter().copied().filter(|a| a.is_finite()).collect();
        u.sort_by(|a, b| a.total_cmp(b));
        u.dedup_by(|a, b| (*a - *b).abs() <= 1e-9 * a.abs().max(1.0));
        if u.len() < 2 {
            return None;
        }
        let d = u
            .windows(2)
            .map(|w| w[1] - w[0])
            .fold(f64::INFINITY, f64::min);
        Some((u[0], d))
    };
    let (Some((x0, dx)), Some((y0, dy))) = (lattice(xs), lattice(ys)) else {
        return Err(XyzError::Degenerate { file });
    };
    let xmax = xs
        .iter()
        .copied()
        .filter(|a| a.is_finite())
        .fold(f64::NEG_INFINITY, f64::max);
    let ymax = ys
        .iter()
        .copied()
        .filter(|a| a.is_finite())
        .fold(f64::NEG_INFINITY, f64::max);
    // Node counts as floats first: a stray huge coordinate must become a
    // "too big" refusal, not a count that wraps around (found by the
    // xyz_grid fuzz target).
    let count = |span: f64, d: f64| {
        let n = (span / d).round() + 1.0;
        if n.is_finite() && n < 1e12 {
            n as usize
        } else {
            usize::MAX / 4
        }
    };
    let (nx, ny) = (count(xmax - x0, dx), count(ymax - y0, dy));
    let mut g = Grid2::new_empty(x0, y0, dx, dy, nx, ny).map_err(|source| XyzError::Size {
        file: file.clone(),
        source,
    })?;
    let mut seen = vec![false; nx * ny];
    for k in 0..t.n_rows() {
        let (x, y) = (xs[k], ys[k]);
        if !x.is_finite() || !y.is_finite() {
            continue;
        }
        let (fi, fj) = ((x - x0) / dx, (y - y0) / dy);
        let (i, j) = (fi.round(), fj.round());
        if (fi - i).abs() > 1e-6 || (fj - j).abs() > 1e-6 {
            return Err(XyzError::OffLattice {
                file,
                line: t.lines[k],
                x,
                y,
                dx,
                dy,
            });
        }
        let idx = i as usize + nx * j as usize;
        if seen[idx] {
            return Err(XyzError::Duplicate {
                file,
                line: t.lines[k],
                x,
                y,
            });
        }
        seen[idx] = true;
        g.values[idx] = zs[k];
    }
    g.note = format!("read from {}", path.display());
    Ok(g)
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn xyz_grids_read_in_any_order_with_gaps() {
        let p = std::env::temp_dir().join(format!("fieldstone-xyz-{}.xyz", std::process::id()));
        std::fs::write(
            &p,
            "x y z\n10 20 1\n0 0 5\n10 0 6\n0 10 3\n10 10 4\n20 0 7\n",
        )
        .unwrap();
        let g = read_xyz(&p, &TextOptions::default()).unwrap();
        assert_eq!((g.nx, g.ny, g.dx, g.dy), (3, 3, 10.0, 10.0));
        assert_eq!(g.get(1, 2), 1.0);
        assert_eq!(g.get(2, 0), 7.0);
        assert!(g.get(2, 2).is_nan());
        std::fs::write(&p, "x y z\n0 0 1\n10 0 1\n0 10 1\n3 10 1\n").unwrap();
        let e = read_xyz(&p, &TextOptions::default())
            .unwrap_err()
            .to_string();
        assert!(e.contains("line 5") || e.contains("lattice"), "{e}");
        std::fs::remove_file(&p).unwrap();
    }
}
