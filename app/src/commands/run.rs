//! `fieldstone run PROJECT_DIR [--scenario NAME] [--all-scenarios] [--force]`

use super::Stderr;
use clap::Args;
use fieldstone_pipeline::{run as run_pipeline, Selection};
use std::path::PathBuf;

#[derive(Debug, Args)]
pub struct RunArgs {
    /// The project folder (holding project.json).
    pub project_dir: PathBuf,
    /// Run this scenario (the first one when neither this nor --all-scenarios is given).
    #[arg(long, conflicts_with = "all_scenarios")]
    pub scenario: Option<String>,
    /// Run every scenario.
    #[arg(long)]
    pub all_scenarios: bool,
    /// Rerun every step even when it is up to date.
    #[arg(long)]
    pub force: bool,
    /// Print every inversion iteration.
    #[arg(long)]
    pub verbose: bool,
}

pub fn run(a: &RunArgs) -> super::CliResult {
    let sel = match (&a.scenario, a.all_scenarios) {
        (Some(n), _) => Selection::Named(n.clone()),
        (None, true) => Selection::All,
        (None, false) => Selection::First,
    };
    let r = run_pipeline(
        &a.project_dir,
        &sel,
        a.force,
        &Stderr { verbose: a.verbose },
    )?;
    eprintln!(
        "run: {} steps ran, {} up to date",
        r.ran(),
        r.steps.len() - r.ran()
    );
    Ok(())
}
