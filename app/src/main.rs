//! `fieldstone`: the project window (no subcommand) and the headless commands.

use fieldstone::commands;

use clap::{Parser, Subcommand};
use std::path::PathBuf;
use std::process::ExitCode;

/// Fieldstone turns gravity and magnetic survey data into constrained 3D
/// density and susceptibility models.
#[derive(Debug, Parser)]
#[command(name = "fieldstone", version, about, long_about = None, after_help = commands::CAUTIONS)]
struct Cli {
    /// Project folder to open in the window (the bundled demo project when omitted).
    project: Option<PathBuf>,
    #[command(subcommand)]
    command: Option<Command>,
}

#[derive(Debug, Subcommand)]
enum Command {
    /// Forward-model prisms at stations: gravity (g_z, mGal) and, with an
    /// inducing field, the magnetic field and total-field anomaly (nT).
    Forward(commands::forward::ForwardArgs),
    /// Show how a delimited file will be read: delimiter, header, column roles
    /// and units, row and dummy counts, numeric ranges, line count.
    Inspect(commands::inspect::InspectArgs),
    /// Print the main geomagnetic field (IGRF-14) at a point and date as CSV.
    Igrf(commands::igrf::IgrfArgs),
    /// Grid scattered or line data (minimum curvature or biharmonic spline).
    Grid(commands::grid::GridArgs),
    /// Filter a grid: continuation, derivatives, reduction to the pole, band-pass, trend.
    Filter(commands::filter::FilterArgs),
    /// Reduce gravity or magnetic readings to anomalies.
    #[command(subcommand)]
    Reduce(commands::reduce::ReduceCommand),
    /// Write the invented demo project (a complete project folder).
    Demo(commands::demo::DemoArgs),
    /// Build a scenario's constraint arrays on the mesh and write them (VTK, NumPy).
    Constraints(commands::constraints::ConstraintsArgs),
    /// Export a run's model, constraints, sections, plan slices or data.
    Export(commands::export::ExportArgs),
    /// Run every stale step of a project: import, reduce, grid, regional,
    /// mesh, constraints, inversion, exports.
    Run(commands::run::RunArgs),
}

/// Opens the project window (the bundled demo when no project is given).
#[cfg(feature = "gui")]
fn open_window(project: Option<&std::path::Path>) -> commands::CliResult {
    fieldstone::window::open(project).map_err(commands::CliError::from)
}

/// A headless build has no window: say so and how to use it.
#[cfg(not(feature = "gui"))]
fn open_window(_project: Option<&std::path::Path>) -> commands::CliResult {
    Err("this fieldstone was built without the project window (no `gui` feature); give a command, e.g. `fieldstone run PROJECT_DIR`, or see `fieldstone --help`".into())
}

fn main() -> ExitCode {
    let cli = Cli::parse();
    let result = match cli.command {
        Some(Command::Forward(args)) => commands::forward::run(&args),
        Some(Command::Inspect(args)) => commands::inspect::run(&args),
        Some(Command::Igrf(args)) => commands::igrf::run(&args),
        Some(Command::Grid(args)) => commands::grid::run(&args),
        Some(Command::Filter(args)) => commands::filter::run(&args),
        Some(Command::Reduce(cmd)) => commands::reduce::run(&cmd),
        Some(Command::Demo(args)) => commands::demo::run(&args),
        Some(Command::Run(args)) => commands::run::run(&args),
        Some(Command::Constraints(args)) => commands::constraints::run(&args),
        Some(Command::Export(args)) => commands::export::run(&args),
        None => open_window(cli.project.as_deref()),
    };
    match result {
        Ok(()) => ExitCode::SUCCESS,
        Err(e) => {
            eprintln!("error: {e}");
            ExitCode::from(e.exit_code())
        }
    }
}
