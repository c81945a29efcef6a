//! `fieldstone forward --bodies BODIES.json --stations STATIONS.csv --out OUT.csv`

use clap::Args;
use fieldstone_core::forward::bodies;
use fieldstone_core::io::atomic::{write_atomically, WriteError};
use fieldstone_core::table::passthrough::{read_passthrough, write_with_columns};
use std::path::PathBuf;
use std::time::Instant;

#[derive(Debug, Args)]
pub struct ForwardArgs {
    /// Body file (JSON): prisms with density contrast (g/cm³), susceptibility
    /// (SI) or magnetization (A/m), and an optional inducing field.
    #[arg(long, value_name = "BODIES.json")]
    pub bodies: PathBuf,
    /// Station table (CSV) with a header naming x, y, z in metres (z is
    /// elevation, up); other columns are copied to the output unchanged.
    #[arg(long, value_name = "STATIONS.csv")]
    pub stations: PathBuf,
    /// Output table: the input columns plus gz_mgal and, with an inducing
    /// field, bx_nt, by_nt, bz_nt, tmi_nt (x east, y north, z up).
    #[arg(long, value_name = "OUT.csv")]
    pub out: PathBuf,
}

const GRAVITY_COLUMNS: [&str; 1] = ["gz_mgal"];
const ALL_COLUMNS: [&str; 5] = ["gz_mgal", "bx_nt", "by_nt", "bz_nt", "tmi_nt"];

pub fn run(args: &ForwardArgs) -> super::CliResult {
    let start = Instant::now();
    if same_file(&args.out, &args.stations) || same_file(&args.out, &args.bodies) {
        return Err(format!(
            "--out {} is one of the input files; choose another name so the input is kept",
            args.out.display()
        )
        .into());
    }
    let body_file = bodies::read_body_file(&args.bodies).map_err(|e| e.to_string())?;
    for note in &body_file.notes {
        eprintln!("note: {note}");
    }
    let model = body_file.model;
    let names: &[&str] = if model.has_magnetics() {
        &ALL_COLUMNS
    } else {
        &GRAVITY_COLUMNS
    };
    let table = read_passthrough(&args.stations, names).map_err(|e| e.to_string())?;
    let hint = "the station file needs x, y, z in metres (z is elevation, up)";
    let cols = [
        table.require("x", hint),
        table.require("y", hint),
        table.require("z", hint),
    ];
    let mut coords = Vec::with_capacity(3);
    for c in cols {
        let c = c.map_err(|e| e.to_string())?;
        coords.push(table.numbers(c, true).map_err(|e| e.to_string())?);
    }
    let positions: Vec<[f64; 3]> = (0..table.n_rows())
        .map(|i| [coords[0][i], coords[1][i], coords[2][i]])
        .collect();
    let fields = model.evaluate(&positions).map_err(|e| {
        // Name the file line of the failing station rather than its index.
        let line = match &e {
            fieldstone_core::forward::FieldError::OnEdge { station, .. }
            | fieldstone_core::forward::FieldError::InsideMagnetized { station, .. } => {
                table.lines[*station]
            }
        };
        format!("{}: line {line}: {e}", args.stations.display())
    })?;
    let result: Result<(), OutError> = write_atomically(&args.out, |w| {
        write_with_columns(
            &table,
            names,
            |i| {
                let f = &fields[i];
                match (f.b_nt, f.tmi_nt) {
                    (Some(b), Some(t)) => vec![f.gz_mgal, b[0], b[1], b[2], t],
                    _ => vec![f.gz_mgal],
                }
            },
            w,
        )
        .map_err(|e| OutError(format!("could not write {}: {e}", args.out.display())))
    });
    result.map_err(|e| e.0)?;
    eprintln!(
        "forward: {} bodies at {} stations -> {} ({:.3} s)",
        model.bodies.len(),
        positions.len(),
        args.out.display(),
        start.elapsed().as_secs_f64()
    );
    Ok(())
}

struct OutError(String);

impl From<WriteError> for OutError {
    fn from(e: WriteError) -> Self {
        OutError(e.to_string())
    }
}

fn same_file(a: &std::path::Path, b: &std::path::Path) -> bool {
    match (a.canonicalize(), b.canonicalize()) {
        (Ok(x), Ok(y)) => x == y,
        _ => a == b,
    }
}
