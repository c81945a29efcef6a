//! `fieldstone run PROJECT_DIR [--scenario NAME] [--all-scenarios] [--force]`

use crate::pipeline::{run as run_pipeline, Selection};
use clap::Args;
use fieldstone_core::invert::IterationRecord;
use fieldstone_core::progress::Observer;
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

struct Lines {
    verbose: bool,
}

impl Observer for Lines {
    fn message(&self, text: &str) {
        eprintln!("{text}");
    }
    fn iteration(&self, r: &IterationRecord) {
        if self.verbose {
            eprintln!(
                "    iteration {:>3}: beta {:.3e}  phi_d {:.4e}  phi_m {:.4e}  chi {:.3}  CG {}  at bounds {}/{}",
                r.iteration, r.beta, r.phi_d, r.phi_m, r.chi_factor, r.cg_iterations, r.at_lower, r.at_upper
            );
        }
    }
}

pub fn run(a: &RunArgs) -> Result<(), String> {
    let sel = match (&a.scenario, a.all_scenarios) {
        (Some(n), _) => Selection::Named(n.clone()),
        (None, true) => Selection::All,
        (None, false) => Selection::First,
    };
    let r = run_pipeline(&a.project_dir, &sel, a.force, &Lines { verbose: a.verbose })?;
    eprintln!(
        "run: {} steps ran, {} up to date",
        r.ran(),
        r.steps.len() - r.ran()
    );
    Ok(())
}
