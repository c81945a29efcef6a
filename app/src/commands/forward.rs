//! `fieldstone forward --bodies BODIES.json --stations STATIONS.csv --out OUT.csv`

use super::reduce::ReadArgs;
use clap::Args;
use fieldstone_core::forward::bodies;
use fieldstone_core::io::atomic::{write_atomically, WriteError};
use fieldstone_core::survey::columns::Role;
use fieldstone_core::table::passthrough::write_with_columns;
use fieldstone_pipeline::reduction::survey_files::read_survey_file;
use std::path::PathBuf;
use std::time::Instant;

#[derive(Debug, Args)]
pub struct ForwardArgs {
    /// Body file (JSON): prisms with density contrast (g/cm³), susceptibility
    /// (SI) or magnetization (A/m), and an optional inducing field.
    #[arg(long, value_name = "BODIES.json")]
    pub bodies: PathBuf,
    /// Station table: a delimited table whose header names the station
    /// positions (x, y or easting, northing in metres, or lon, lat; z or
    /// height, elevation up), or an ASEG-GDF2 .dat with its .dfn beside it;
    /// roles and units are guessed from the header (`fieldstone inspect`
    /// shows the guesses). Other columns are copied to the output unchanged.
    #[arg(long, value_name = "STATIONS.csv")]
    pub stations: PathBuf,
    /// EPSG code of the x, y columns (longitude/latitude are projected to
    /// the UTM zone of the station centre, which the body file must use).
    #[arg(long)]
    pub epsg: Option<u32>,
    #[command(flatten)]
    pub read: ReadArgs,
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
    let read = args.read.options(args.epsg)?;
    let file = &read_survey_file(&args.stations, &read, names)?;
    for w in &file.survey.warnings {
        eprintln!("{}: {w}", args.stations.display());
    }
    let heights = file.heights()?;
    let s = &file.survey;
    file.require_finite(&s.x, Role::Easting)?;
    file.require_finite(&s.y, Role::Northing)?;
    let positions: Vec<[f64; 3]> = (0..s.n_rows())
        .map(|i| [s.x[i], s.y[i], heights[i]])
        .collect();
    let table = &file.raw;
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
            table,
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
