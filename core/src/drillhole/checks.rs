//! Consistency checks of drill-hole tables, as a report (nothing is dropped
//! silently; rows that cannot be used are named with their file and line).

use super::Hole;
use serde::Serialize;
use std::path::{Path, PathBuf};

/// One finding, with where it is.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct Issue {
    pub file: Option<PathBuf>,
    pub line: Option<u64>,
    pub hole: Option<String>,
    pub message: String,
}

impl Issue {
    pub fn at(file: &Path, line: u64, hole: &str, message: String) -> Issue {
        Issue {
            file: Some(file.to_path_buf()),
            line: Some(line),
            hole: Some(hole.to_string()),
            message,
        }
    }
    pub fn file(file: &Path, message: String) -> Issue {
        Issue {
            file: Some(file.to_path_buf()),
            line: None,
            hole: None,
            message,
        }
    }
    pub fn hole(hole: &str, message: String) -> Issue {
        Issue {
            file: None,
            line: None,
            hole: Some(hole.to_string()),
            message,
        }
    }
}

impl std::fmt::Display for Issue {
    fn fmt(&self, f: &mut std::fmt::Formatter<'_>) -> std::fmt::Result {
        if let Some(p) = &self.file {
            write!(f, "{}", p.display())?;
            if let Some(l) = self.line {
                write!(f, ": line {l}")?;
            }
            write!(f, ": ")?;
        } else if let Some(h) = &self.hole {
            write!(f, "hole '{h}': ")?;
        }
        write!(f, "{}", self.message)
    }
}

/// Intervals past total depth, overlapping intervals and gaps, per hole.
/// `intervals_file` names the interval table in the messages; intervals must
/// be sorted by their from depth.
pub fn check_holes(holes: &[Hole], intervals_file: &Path) -> Vec<Issue> {
    let mut out = Vec::new();
    for h in holes {
        if let Some(td) = h.total_depth_m {
            for iv in h.intervals.iter().filter(|iv| iv.to_m > td + 1e-6) {
                out.push(Issue::at(
                    intervals_file,
                    iv.line,
                    &h.id,
                    format!(
                        "interval {}–{} m runs past the total depth {td} m of hole '{}'",
                        iv.from_m, iv.to_m, h.id
                    ),
                ));
            }
        }
        for w in h.intervals.windows(2) {
            let (a, b) = (&w[0], &w[1]);
            if b.from_m < a.to_m - 1e-6 {
                out.push(Issue::at(
                    intervals_file,
                    b.line,
                    &h.id,
                    format!(
                        "interval {}–{} m overlaps {}–{} m (line {}) in hole '{}'",
                        b.from_m, b.to_m, a.from_m, a.to_m, a.line, h.id
                    ),
                ));
            } else if b.from_m > a.to_m + 1e-6 {
                out.push(Issue::at(
                    intervals_file,
                    b.line,
                    &h.id,
                    format!(
                        "gap from {} to {} m before this interval in hole '{}'",
                        a.to_m, b.from_m, h.id
                    ),
                ));
            }
        }
    }
    out
}
