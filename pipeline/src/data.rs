//! The point tables the pipeline writes between steps (`data/*_data.csv`).

use crate::error::Result;
use crate::paths::data_path;
use fieldstone_core::project::file::{DataKind, Scenario};
use fieldstone_core::table::read::read_table;
use fieldstone_core::table::{ColumnData, TextOptions};
use std::fmt::Write as _;
use std::path::Path;

/// Data points: position (x, y, elevation, metres), value and uncertainty.
#[derive(Debug, Clone, Default, PartialEq)]
pub struct Points {
    pub xyz: Vec<[f64; 3]>,
    pub value: Vec<f64>,
    pub uncertainty: Vec<f64>,
}

/// Writes `x,y,z,<value_name>,uncertainty` with a comment line.
pub fn write_points(path: &Path, p: &Points, value_name: &str, comment: &str) -> Result<()> {
    let mut s = format!("# {comment}\nx,y,z,{value_name},uncertainty\n");
    for k in 0..p.value.len() {
        let [x, y, z] = p.xyz[k];
        writeln!(
            s,
            "{x:.3},{y:.3},{z:.3},{:.6},{:.6}",
            p.value[k], p.uncertainty[k]
        )
        .ok();
    }
    write_text(path, &s)
}

/// Writes text atomically.
pub fn write_text(path: &Path, s: &str) -> Result<()> {
    fieldstone_core::io::atomic::write_atomically::<StringError>(path, |w| {
        w.write_all(s.as_bytes())
            .map_err(|e| StringError(format!("{}: {e}", path.display())))
    })
    .map_err(|e| crate::error::Error::Internal(e.0))
}

impl From<fieldstone_core::io::atomic::WriteError> for StringError {
    fn from(e: fieldstone_core::io::atomic::WriteError) -> Self {
        StringError(e.to_string())
    }
}

/// A String error that atomic writes can produce.
pub struct StringError(pub String);

/// Reads a table written by [`write_points`]: columns x, y, z, the value
/// (fourth column) and uncertainty.
pub fn load_points(path: &Path) -> Result<Points> {
    let t = read_table(path, &TextOptions::default(), None).map_err(|e| e.to_string())?;
    let col = |name: &str| -> Result<Vec<f64>> {
        let i = t
            .column_index(name)
            .ok_or_else(|| format!("{}: no column '{name}'", path.display()))?;
        match &t.columns[i] {
            ColumnData::Number(v) => Ok(v.clone()),
            _ => Err(format!("{}: column '{name}' is not numeric", path.display()).into()),
        }
    };
    let (x, y, z) = (col("x")?, col("y")?, col("z")?);
    let value = match t.columns.get(3) {
        Some(ColumnData::Number(v)) => v.clone(),
        _ => return Err(format!("{}: the fourth column is not numeric", path.display()).into()),
    };
    let unc = col("uncertainty")?;
    Ok(Points {
        xyz: (0..x.len()).map(|k| [x[k], y[k], z[k]]).collect(),
        value,
        uncertainty: unc,
    })
}

/// The data of a scenario.
pub fn scenario_data(dir: &Path, s: &Scenario) -> Result<Points> {
    load_points(&data_path(
        dir,
        match s.data {
            DataKind::Gravity => "gravity_data.csv",
            DataKind::Magnetic => "magnetic_data.csv",
        },
    ))
}
