//! Atomic file replacement: write to a temporary file in the destination's
//! folder, flush it to disk, then rename it over the destination.
//!
//! A crash, a full disk or a failed write at any point leaves either the old
//! file or the new one, never a partial file: the temporary file is removed on
//! every error path, and the rename is atomic on the same file system (POSIX
//! rename(2); on Windows std::fs::rename uses MoveFileEx with replace).

use std::fs::{self, File};
use std::io::{self, BufWriter, Write};
use std::path::{Path, PathBuf};
use thiserror::Error;

/// What went wrong while writing `path`.
#[derive(Debug, Error)]
#[error("could not write {path}: {source}")]
pub struct WriteError {
    pub path: PathBuf,
    #[source]
    pub source: io::Error,
}

/// The temporary path used while writing `dest`: a hidden sibling with the
/// process id, so two processes never share one.
pub fn temp_path_for(dest: &Path) -> PathBuf {
    let name = dest
        .file_name()
        .map(|n| n.to_string_lossy().into_owned())
        .unwrap_or_else(|| "output".into());
    let tmp = format!(".{name}.tmp-{}", std::process::id());
    match dest.parent() {
        Some(p) if !p.as_os_str().is_empty() => p.join(tmp),
        _ => PathBuf::from(tmp),
    }
}

/// Writes `dest` atomically with the bytes produced by `fill`. If `fill` or
/// any file operation fails, `dest` is untouched and no temporary file is left.
/// The error from `fill` is passed through as `E`; file errors are converted.
pub fn write_atomically<E>(
    dest: &Path,
    fill: impl FnOnce(&mut dyn Write) -> Result<(), E>,
) -> Result<(), E>
where
    E: From<WriteError>,
{
    write_atomically_with_faults(dest, fill, |_| None)
}

/// The points of a save where the file system can fail.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Stage {
    CreateTemporary,
    Flush,
    Sync,
    Rename,
}

/// [`write_atomically`] with `fault` asked at each [`Stage`]; an error it
/// returns is taken as the file system's (tests of disk full and permission
/// denied at every point of a save).
pub fn write_atomically_with_faults<E>(
    dest: &Path,
    fill: impl FnOnce(&mut dyn Write) -> Result<(), E>,
    fault: impl Fn(Stage) -> Option<io::Error>,
) -> Result<(), E>
where
    E: From<WriteError>,
{
    let tmp = temp_path_for(dest);
    let wrap = |source: io::Error| WriteError {
        path: dest.to_path_buf(),
        source,
    };
    let at = |stage: Stage| fault(stage).map_or(Ok(()), |e| Err(wrap(e)));
    let result = (|| {
        at(Stage::CreateTemporary)?;
        let file = File::create(&tmp).map_err(wrap)?;
        let mut w = BufWriter::new(file);
        fill(&mut w)?;
        at(Stage::Flush)?;
        let file = w.into_inner().map_err(|e| wrap(e.into_error()))?;
        at(Stage::Sync)?;
        file.sync_all().map_err(wrap)?;
        drop(file);
        at(Stage::Rename)?;
        fs::rename(&tmp, dest).map_err(wrap)?;
        Ok(())
    })();
    if result.is_err() {
        let _ = fs::remove_file(&tmp);
    }
    result
}

/// Writes `bytes` to `dest` atomically (see [`write_atomically`]).
pub fn write_bytes_atomically(dest: &Path, bytes: &[u8]) -> Result<(), WriteError> {
    write_atomically(dest, |w| {
        w.write_all(bytes).map_err(|source| WriteError {
            path: dest.to_path_buf(),
            source,
        })
    })
}

#[cfg(test)]
mod tests {
    use super::*;

    fn scratch_dir(name: &str) -> PathBuf {
        let d =
            std::env::temp_dir().join(format!("fieldstone-atomic-{name}-{}", std::process::id()));
        let _ = fs::remove_dir_all(&d);
        fs::create_dir_all(&d).unwrap();
        d
    }

    #[test]
    fn a_failed_fill_keeps_the_old_file_and_leaves_no_temporary() {
        let d = scratch_dir("fail");
        let dest = d.join("out.csv");
        fs::write(&dest, b"old").unwrap();
        let r: Result<(), WriteError> = write_atomically(&dest, |w| {
            w.write_all(b"partial new content").unwrap();
            Err(WriteError {
                path: dest.clone(),
                source: io::Error::other("simulated"),
            })
        });
        assert!(r.is_err());
        assert_eq!(fs::read(&dest).unwrap(), b"old");
        assert_eq!(
            fs::read_dir(&d).unwrap().count(),
            1,
            "temporary file left behind"
        );
        fs::remove_dir_all(&d).unwrap();
    }

    #[test]
    fn a_successful_write_replaces_the_file() {
        let d = scratch_dir("ok");
        let dest = d.join("out.csv");
        fs::write(&dest, b"old").unwrap();
        write_atomically::<WriteError>(&dest, |w| {
            w.write_all(b"new").map_err(|source| WriteError {
                path: dest.clone(),
                source,
            })
        })
        .unwrap();
        assert_eq!(fs::read(&dest).unwrap(), b"new");
        assert_eq!(fs::read_dir(&d).unwrap().count(), 1);
        fs::remove_dir_all(&d).unwrap();
    }

    #[test]
    fn a_missing_folder_is_reported_with_the_path() {
        let dest = std::env::temp_dir()
            .join("fieldstone-no-such-folder-xyz")
            .join("out.csv");
        let e = write_atomically::<WriteError>(&dest, |_| Ok(())).unwrap_err();
        assert!(e.to_string().contains("out.csv"), "{e}");
    }
}
