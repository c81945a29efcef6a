//! Opening the project window.
//!
//! The window is not part of this build yet; until it is, calling the program
//! without a subcommand prints the help so that `cargo run --release` shows
//! what the program can do.

use std::path::Path;

pub fn open(project: Option<&Path>) -> Result<(), String> {
    use clap::CommandFactory;
    if let Some(p) = project {
        return Err(format!(
            "the project window is not available in this build, so {} cannot be opened; use the headless commands below",
            p.display()
        ));
    }
    let mut cmd = crate::Cli::command();
    cmd.print_help().map_err(|e| e.to_string())?;
    println!();
    Ok(())
}
