//! `fieldstone demo OUT_DIR [--small]`

use clap::Args;
use fieldstone_core::demo::{write_demo, DemoSize};
use fieldstone_core::progress::Observer;
use std::path::PathBuf;

#[derive(Debug, Args)]
pub struct DemoArgs {
    /// Folder to write the invented demo project into (created; must not hold a project).
    pub out_dir: PathBuf,
    /// A coarser demo (50 m stations on 200 m lines, a 50 m mesh) that runs in seconds.
    #[arg(long)]
    pub small: bool,
}

/// Prints each stage on standard error.
pub struct Printer;
impl Observer for Printer {
    fn message(&self, text: &str) {
        eprintln!("{text}");
    }
}

pub fn run(a: &DemoArgs) -> super::CliResult {
    std::fs::create_dir_all(&a.out_dir).map_err(|e| format!("{}: {e}", a.out_dir.display()))?;
    let size = if a.small {
        DemoSize::Small
    } else {
        DemoSize::Full
    };
    let r = write_demo(&a.out_dir, size, &Printer).map_err(|e| e.to_string())?;
    eprintln!(
        "demo project (INVENTED data) written to {}: {} gravity stations ({} readings with base loops), {} magnetic readings, {} drill holes, {} files. Run it with: fieldstone run {} --all-scenarios",
        r.folder.display(),
        r.gravity_stations,
        r.gravity_readings,
        r.magnetic_readings,
        r.holes,
        r.files.len(),
        r.folder.display()
    );
    Ok(())
}
