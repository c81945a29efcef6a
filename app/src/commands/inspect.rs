//! `fieldstone inspect FILE [--delimiter D] [--no-header] [--header] [--dummy V]`
//! and `fieldstone inspect --roles`
//!
//! Prints what an import would see: delimiter and header (detected or given),
//! each column's guessed role, unit and kind, the row count, dummy counts and
//! min / mean / max of numeric columns, the values that are not numbers in a
//! column of mostly numbers (file, line and text), and the line count when a
//! column has the line role. `--roles` lists the role keys that
//! `--column ROLE=HEADER` takes.

use clap::Args;
use fieldstone_core::survey::columns::{guess_column, Role};
use fieldstone_core::survey::import::ImportSpec;
use fieldstone_core::table::file::{read_table_file, sniff_file};
use fieldstone_core::table::sniff::parse_number;
use fieldstone_core::table::{ColumnData, Delimiter, TextOptions};
use fieldstone_core::table::{ColumnKind, TableError};
use std::collections::HashSet;
use std::path::PathBuf;

#[derive(Debug, Args)]
pub struct InspectArgs {
    /// Delimited text file (line data, drill-hole table, XYZ grid...).
    #[arg(required_unless_present = "roles")]
    pub file: Option<PathBuf>,
    /// List the roles a column can take (the keys of --column ROLE=HEADER).
    #[arg(long)]
    pub roles: bool,
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
    /// Roles and units as another command would be told them, to see
    /// their effect.
    #[command(flatten)]
    pub read: super::reduce::ReadArgs,
}

/// Lists the role keys with what each means and its units.
fn print_roles() {
    println!(
        "{:<18} {:<24} units (the first is the default)",
        "key", "meaning"
    );
    for r in Role::ALL {
        let units: Vec<&str> = r
            .units()
            .iter()
            .map(|u| u.label())
            .filter(|l| !l.is_empty())
            .collect();
        println!("{:<18} {:<24} {}", r.key(), r.label(), units.join(", "));
    }
    println!();
    println!("time columns take s, min or h (elapsed time), clock, hours_of_day or seconds_of_day with --unit HEADER=UNIT");
}

/// The unit shown for a column: its guessed unit, or for a time column the
/// elapsed-time unit its header names.
fn unit_label(g: &fieldstone_core::survey::columns::ColumnSpec, name: &str) -> &'static str {
    use fieldstone_core::survey::time::TimeFormat;
    match (
        g.role,
        fieldstone_core::survey::columns::time_format_hint(name),
    ) {
        (Role::Time, Some(TimeFormat::ElapsedSeconds)) => "s (elapsed)",
        (Role::Time, Some(TimeFormat::ElapsedMinutes)) => "min (elapsed)",
        (Role::Time, Some(TimeFormat::ElapsedHours)) => "h (elapsed)",
        _ => g.unit.label(),
    }
}

/// Most values that are not numbers reported per column.
const SHOWN_NOT_NUMBERS: usize = 5;

pub fn run(args: &InspectArgs) -> super::CliResult {
    if args.roles {
        print_roles();
        return Ok(());
    }
    let Some(file) = args.file.as_ref() else {
        return Err("give a FILE to inspect, or --roles".to_string().into());
    };
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
    // A column the first lines show as numbers is read again as text when a
    // value further down is not a number, and its stray values are shown.
    let sn = sniff_file(file, &opts).map_err(|e| e.to_string())?;
    // The importer's own guesses (first column of each role, units stated
    // in a definition file), so what is shown is what an import reads.
    let mut spec = ImportSpec::guess_for_file(file, &opts, None).map_err(|e| e.to_string())?;
    let overrides = args.read.options(None)?;
    for (key, header) in &overrides.columns {
        let role = Role::from_key(key).ok_or_else(|| {
            format!(
                "--column {key}={header}: '{key}' is not a role; `fieldstone inspect --roles` lists them"
            )
        })?;
        spec.set_role(role, header)
            .map_err(|e| format!("{}: {e}", file.display()))?;
    }
    for (header, unit) in &overrides.units {
        spec.set_unit(header, unit)
            .map_err(|e| format!("{}: {e}", file.display()))?;
    }
    let mut kinds = sn.kinds.clone();
    let mut demoted = vec![false; kinds.len()];
    let t = loop {
        match read_table_file(file, &opts, Some(&kinds)) {
            Err(TableError::NotNumber { column, .. }) => {
                match sn.names.iter().position(|n| *n == column) {
                    Some(i) if kinds[i] == ColumnKind::Number => {
                        kinds[i] = ColumnKind::Text;
                        demoted[i] = true;
                    }
                    _ => {
                        return Err(format!(
                            "{}: column '{column}' could not be read",
                            file.display()
                        )
                        .into())
                    }
                }
            }
            r => break r.map_err(|e| e.to_string())?,
        }
    };
    let said = |given: bool| if given { "given" } else { "detected" };
    println!("file: {}", file.display());
    match fieldstone_core::table::gdf::definition_beside(file) {
        Some(dfn) => println!(
            "format: ASEG-GDF2 records; names, units and nulls from {}",
            dfn.display()
        ),
        None => {
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
        }
    }
    println!("rows: {}", t.n_rows());
    println!("dummies: {}", t.dummies.iter().sum::<usize>());
    println!();
    let w = t
        .names
        .iter()
        .map(|n| n.chars().count())
        .max()
        .unwrap_or(0)
        .max(20);
    println!(
        "{:>3}  {:<w$} {:<22} {:<14} {:<6} {:>8} {:>14} {:>14} {:>14}",
        "#", "column", "role", "unit", "kind", "dummies", "min", "mean", "max"
    );
    let mut line_count = None;
    let mut not_numbers = Vec::new();
    for (i, (name, col)) in t.names.iter().zip(&t.columns).enumerate() {
        let numeric = matches!(col, ColumnData::Number(_)) || demoted[i];
        let g = match spec.columns.get(i) {
            Some(c) if &c.name == name => c.clone(),
            _ => guess_column(name, numeric),
        };
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
            ColumnData::Text(v) => {
                // A column of mostly numbers with a few that are not: the
                // import would read it as text, so show the culprits.
                let filled: Vec<usize> = (0..v.len())
                    .filter(|k| !fieldstone_core::table::is_dummy_token(&v[*k]))
                    .collect();
                let bad: Vec<usize> = filled
                    .iter()
                    .copied()
                    .filter(|k| parse_number(&v[*k], t.delimiter).is_none())
                    .collect();
                if g.role.is_numeric()
                    && !bad.is_empty()
                    && filled.len() >= 4
                    && bad.len() * 5 <= filled.len()
                {
                    not_numbers.push((
                        name.clone(),
                        bad.len(),
                        bad.iter()
                            .take(SHOWN_NOT_NUMBERS)
                            .map(|k| (t.lines[*k], v[*k].clone()))
                            .collect::<Vec<_>>(),
                    ));
                }
                ("text", String::new())
            }
        };
        if g.role == Role::Line && line_count.is_none() {
            let distinct: HashSet<String> = match col {
                ColumnData::Text(v) => v.iter().cloned().collect(),
                ColumnData::Number(v) => v.iter().map(|a| a.to_string()).collect(),
            };
            line_count = Some((name.clone(), distinct.len()));
        }
        println!(
            "{:>3}  {:<w$} {:<22} {:<14} {:<6} {:>8} {}",
            i + 1,
            name,
            g.role.label(),
            unit_label(&g, name),
            kind,
            t.dummies[i],
            stats
        );
    }
    for (name, n, shown) in &not_numbers {
        println!();
        println!(
            "column '{name}' holds numbers but {n} value(s) are not numbers, so it reads as text:"
        );
        for (line, text) in shown {
            println!("  {}: line {line}: '{text}'", file.display());
        }
        if *n > shown.len() {
            println!("  … and {} more", n - shown.len());
        }
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
