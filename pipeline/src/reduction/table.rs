//! What both reductions share: positions of the rows, times, the output.

use crate::error::{Error, Result};
use fieldstone_core::io::atomic::{write_atomically, WriteError};
use fieldstone_core::survey::time::{
    parse_date, parse_datetime, parse_time_of_day, DateOrder, TimeFormat,
};
use fieldstone_core::table::passthrough::{
    write_tables_with_columns, PassThroughError, PassThroughTable,
};
use std::path::Path;

/// A pass-through table error as a pipeline error.
pub(crate) fn table_error(e: PassThroughError) -> Error {
    Error::Input(e.to_string())
}

/// Times (seconds since 1970 UTC) of a time column: ISO date-times, or times
/// of day (clock, decimal hours, seconds of day) on `date` (YYYY-MM-DD).
pub(crate) fn times(t: &PassThroughTable, col: usize, date: Option<&str>) -> Result<Vec<f64>> {
    let day = match date {
        Some(d) => Some(
            parse_date(d, DateOrder::YearMonthDay).map_err(|e| format!("survey date: {e}"))? as f64
                * 86_400.0,
        ),
        None => None,
    };
    let texts: Vec<String> = (0..t.n_rows()).map(|r| t.text(r, col)).collect();
    let below_24 = texts
        .iter()
        .filter_map(|s| s.parse::<f64>().ok())
        .all(|v| v < 24.0);
    let mut out = Vec::with_capacity(texts.len());
    for (r, s) in texts.iter().enumerate() {
        let at = |m: String| {
            format!(
                "{}: line {}, column '{}': {m}",
                t.file.display(),
                t.lines[r],
                t.names[col]
            )
        };
        let is_datetime =
            s.contains('T') || s.get(1..).is_some_and(|rest| rest.contains('-')) && s.len() >= 8;
        let v =
            if is_datetime {
                parse_datetime(s, DateOrder::YearMonthDay).map_err(at)?
            } else {
                let sod = parse_time_of_day(s, TimeFormat::Auto, below_24).map_err(at)?;
                match day {
                    Some(d) => d + sod,
                    None => return Err(at(
                        "this is a time of day; give the survey date (--date on the command line)"
                            .into(),
                    )
                    .into()),
                }
            };
        out.push(v);
    }
    Ok(out)
}

/// Writes `out` atomically with a CSV writer `write`.
fn write_csv_atomically<D: std::fmt::Display>(
    out: &Path,
    write: impl FnOnce(&mut dyn std::io::Write) -> std::result::Result<(), D>,
) -> Result<()> {
    struct E(Error);
    impl From<WriteError> for E {
        fn from(e: WriteError) -> Self {
            E(Error::Internal(e.to_string()))
        }
    }
    let r: std::result::Result<(), E> = write_atomically(out, |w| {
        write(w).map_err(|e| {
            E(Error::Internal(format!(
                "could not write {}: {e}",
                out.display()
            )))
        })
    });
    r.map_err(|e| e.0)
}

/// Writes several tables as one (their columns, `source` naming each row's
/// file, then `names`), atomically.
pub(crate) fn write_tables(
    out: &Path,
    tables: &[&PassThroughTable],
    source: &str,
    sources: &[String],
    names: &[&str],
    rows: impl FnMut(usize, usize) -> Vec<f64>,
) -> Result<()> {
    write_csv_atomically(out, |w| {
        write_tables_with_columns(tables, source, sources, names, rows, w)
    })
}

/// Refuses an output path that is one of the inputs, so no input is lost.
pub(crate) fn guard_inputs(out: &Path, inputs: &[&Path]) -> Result<()> {
    for i in inputs {
        let same = match (out.canonicalize(), i.canonicalize()) {
            (Ok(a), Ok(b)) => a == b,
            _ => out == *i,
        };
        if same {
            return Err(format!(
                "the output {} is one of the input files; choose another name so the input is kept",
                out.display()
            )
            .into());
        }
    }
    Ok(())
}
