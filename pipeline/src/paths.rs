//! Where a project's files live: inputs named in `project.json` (always
//! inside the folder), `data/` between the shared steps, `runs/<scenario>/`.

use crate::error::Result;
use std::path::{Path, PathBuf};

/// Resolves a project-relative path, refusing one that leaves the folder.
pub fn at(dir: &Path, rel: &str) -> Result<PathBuf> {
    fieldstone_core::project::paths::resolve_inside(dir, rel).map_err(|e| e.to_string().into())
}

/// A file under the project's `data/` folder.
pub fn data_path(dir: &Path, f: &str) -> PathBuf {
    dir.join("data").join(f)
}

/// The folder of a scenario's run.
pub fn run_dir(dir: &Path, scenario: &str) -> PathBuf {
    dir.join("runs").join(safe_name(scenario))
}

/// A file-system-safe form of a scenario name.
pub fn safe_name(s: &str) -> String {
    s.chars()
        .map(|c| {
            if c.is_ascii_alphanumeric() || c == '-' || c == '_' {
                c
            } else {
                '_'
            }
        })
        .collect()
}

/// The time now, ISO 8601 UTC to the second.
pub fn now_iso() -> String {
    let t = std::time::SystemTime::now()
        .duration_since(std::time::UNIX_EPOCH)
        .map(|d| d.as_secs_f64())
        .unwrap_or(0.0);
    fieldstone_core::survey::time::format_iso(t.floor())
}

/// Today's date, YYYY-MM-DD (UTC), for figure captions.
pub fn now_date() -> String {
    now_iso().chars().take(10).collect()
}
