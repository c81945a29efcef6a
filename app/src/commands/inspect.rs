//! `fieldstone inspect FILE [--delimiter D] [--no-header] [--header] [--dummy V]`
//!
//! Prints what an import would see: delimiter and header (detected or given),
//! each column's guessed role, unit and kind, the row count, dummy counts and
//! min / mean / max of numeric columns, and the line count when a column has
//! the line role.

use clap::Args;
use fieldstone_core::survey::columns::{guess_column, Role};
use fieldstone_core::table::read::read_table;
use fieldstone_core::table::{ColumnData, Delimiter, TextOptions};
use std::collections::HashSet;
use std::path::PathBuf;

#[derive(Debug, Args)]
pub struct InspectArgs {
    /// Delimited text file (line data, drill-hole table, XYZ grid...).
    pub file: PathBuf,
    /// Field separator: comma, tab, semicolon or whitespace (detected when omitted).
    #[arg(long)]
    pub delimiter: Option<String>,
    /// The first line is data, not a header.
    #[arg(long, conflicts_with = "header")]
    pub no_header: bool,
    /// The first line is a header.
    #[arg(long)]
    pub header: bool,
    /// A numeric dummy value such as -99999, counted as missing.
    #[arg(long, allow_hyphen_values = true)]
    pub dummy: Option<f64>,
}

pub fn run(args: &InspectArgs) -> super::CliResult {
    let delimiter = match &args.delimiter {
        Some(d) => Some(Delimiter::parse(d).ok_or_else(|| {
            format!("--delimiter '{d}' is not one of: comma, tab, semicolon, whitespace")
        })?),
        None => None,
    };
    let has_header = if args.no_header {
        Some(false)
    } else if args.header {
        Some(true)
    } else {
        None
    };
    let opts = TextOptions {
        delimiter,
        has_header,
        dummy_value: args.dummy,
    };
    let t = read_table(&args.file, &opts, None).map_err(|e| e.to_string())?;
    let said = |given: bool| if given { "given" } else { "detected" };
    println!("file: {}", args.file.display());
    println!(
        "delimiter: {} ({})",
        t.delimiter.name(),
        said(delimiter.is_some())
    );
    println!(
        "header: {} ({})",
        if t.has_header { "yes" } else { "no" },
        said(has_header.is_some())
    );
    println!("rows: {}", t.n_rows());
    println!("dummies: {}", t.dummies.iter().sum::<usize>());
    println!();
    println!(
        "{:>3}  {:<20} {:<22} {:<14} {:<6} {:>8} {:>14} {:>14} {:>14}",
        "#", "column", "role", "unit", "kind", "dummies", "min", "mean", "max"
    );
    let mut line_count = None;
    for (i, (name, col)) in t.names.iter().zip(&t.columns).enumerate() {
        let numeric = matches!(col, ColumnData::Number(_));
        let g = guess_column(name, numeric);
        let (kind, stats) = match col {
            ColumnData::Number(v) => {
                let (mut n, mut s, mut lo, mut hi) =
                    (0usize, 0.0, f64::INFINITY, f64::NEG_INFINITY);
                for &a in v.iter().filter(|a| a.is_finite()) {
                    n += 1;
                    s += a;
                    lo = lo.min(a);
                    hi = hi.max(a);
                }
                let st = if n > 0 {
                    format!("{:>14} {:>14} {:>14}", fmt(lo), fmt(s / n as f64), fmt(hi))
                } else {
                    format!("{:>14} {:>14} {:>14}", "-", "-", "-")
                };
                ("number", st)
            }
            ColumnData::Text(_) => ("text", String::new()),
        };
        if g.role == Role::Line && line_count.is_none() {
            let distinct: HashSet<String> = match col {
                ColumnData::Text(v) => v.iter().cloned().collect(),
                ColumnData::Number(v) => v.iter().map(|a| a.to_string()).collect(),
            };
            line_count = Some((name.clone(), distinct.len()));
        }
        println!(
            "{:>3}  {:<20} {:<22} {:<14} {:<6} {:>8} {}",
            i + 1,
            name,
            g.role.label(),
            g.unit.label(),
            kind,
            t.dummies[i],
            stats
        );
    }
    println!();
    match line_count {
        Some((name, n)) => println!("lines: {n} (from column '{name}')"),
        None => println!(
            "lines: no line column found (lines will be split at gaps and turns on import)"
        ),
    }
    Ok(())
}

fn fmt(v: f64) -> String {
    if v.abs() >= 1e7 || (v != 0.0 && v.abs() < 1e-3) {
        format!("{v:.6e}")
    } else {
        format!("{v:.3}")
    }
}
