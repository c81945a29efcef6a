//! Paths stored in a project are relative to its folder and may not leave it.

use std::path::{Component, Path, PathBuf};
use thiserror::Error;

#[derive(Debug, Error, PartialEq)]
pub enum PathError {
    #[error("'{0}' in the project is absolute; project paths are relative to the project folder")]
    Absolute(String),
    #[error("'{0}' in the project leaves the project folder (it uses ..); files a project reads or writes must be inside it")]
    Escapes(String),
}

/// Resolves `rel` inside `project_dir`, refusing absolute paths and `..`.
pub fn resolve_inside(project_dir: &Path, rel: &str) -> Result<PathBuf, PathError> {
    let p = Path::new(rel);
    let mut out = project_dir.to_path_buf();
    for c in p.components() {
        match c {
            Component::Normal(s) => out.push(s),
            Component::CurDir => {}
            Component::ParentDir => return Err(PathError::Escapes(rel.to_string())),
            Component::RootDir | Component::Prefix(_) => {
                return Err(PathError::Absolute(rel.to_string()))
            }
        }
    }
    Ok(out)
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn paths_stay_inside_the_project() {
        let d = Path::new("proj");
        assert_eq!(
            resolve_inside(d, "data/lines.npy").unwrap(),
            Path::new("proj/data/lines.npy")
        );
        assert_eq!(
            resolve_inside(d, "./runs/a").unwrap(),
            Path::new("proj/runs/a")
        );
        assert!(matches!(
            resolve_inside(d, "../secret"),
            Err(PathError::Escapes(_))
        ));
        assert!(matches!(
            resolve_inside(d, "data/../../x"),
            Err(PathError::Escapes(_))
        ));
        assert!(matches!(
            resolve_inside(d, "/etc/passwd"),
            Err(PathError::Absolute(_))
        ));
    }
}
