//! Put folders back as they were when a step is cancelled or fails.
//!
//! Before a step runs, [`Snapshot::take`] records every file under the
//! folders the step may write, as hard links in a hidden folder beside them
//! (a copy where the file system has no hard links). Every writer in the
//! program replaces files by renaming a finished temporary over them
//! ([`super::atomic`]), so a linked file keeps its old contents whatever the
//! step does. [`Snapshot::restore`] removes what the step added and puts every
//! recorded file back; [`Snapshot::discard`] drops the record after a step
//! that finished.

use std::fs;
use std::io;
use std::path::{Path, PathBuf};

/// The recorded state of some folders under one root.
#[derive(Debug)]
pub struct Snapshot {
    root: PathBuf,
    store: PathBuf,
    folders: Vec<PathBuf>,
    /// Paths relative to `root` of the recorded files.
    files: Vec<PathBuf>,
}

/// The name of the hidden folder that holds a snapshot under `root`.
pub const STORE: &str = ".step-undo";
const COMPLETE: &str = ".complete";

fn walk(dir: &Path, out: &mut Vec<PathBuf>) -> io::Result<()> {
    let rd = match fs::read_dir(dir) {
        Ok(r) => r,
        Err(e) if e.kind() == io::ErrorKind::NotFound => return Ok(()),
        Err(e) => return Err(e),
    };
    for e in rd {
        let e = e?;
        let t = e.file_type()?;
        if t.is_dir() {
            walk(&e.path(), out)?;
        } else if t.is_file() {
            out.push(e.path());
        }
    }
    Ok(())
}

fn wrap(path: &Path, e: io::Error) -> io::Error {
    io::Error::new(e.kind(), format!("{}: {e}", path.display()))
}

impl Snapshot {
    /// Records every file under `folders` (relative to `root`). A snapshot
    /// left by an earlier crash is put back first, so its files are not lost.
    pub fn take(root: &Path, folders: &[&str]) -> io::Result<Snapshot> {
        let store = root.join(STORE);
        if store.exists() {
            Snapshot::recover(root, folders)?;
        }
        let mut s = Snapshot {
            root: root.to_path_buf(),
            store: store.clone(),
            folders: folders.iter().map(|f| root.join(f)).collect(),
            files: Vec::new(),
        };
        let mut all = Vec::new();
        for f in &s.folders {
            walk(f, &mut all)?;
        }
        for path in all {
            let rel = path
                .strip_prefix(root)
                .map_err(|_| io::Error::other("a folder outside the project"))?
                .to_path_buf();
            let kept = store.join(&rel);
            if let Some(parent) = kept.parent() {
                fs::create_dir_all(parent).map_err(|e| wrap(parent, e))?;
            }
            if fs::hard_link(&path, &kept).is_err() {
                fs::copy(&path, &kept).map_err(|e| wrap(&path, e))?;
            }
            s.files.push(rel);
        }
        fs::create_dir_all(&store).map_err(|e| wrap(&store, e))?;
        // Only a finished record may be put back after a crash: one cut off
        // while it was taken is incomplete, and the step had not started.
        fs::write(store.join(COMPLETE), b"").map_err(|e| wrap(&store, e))?;
        Ok(s)
    }

    /// Number of files recorded.
    pub fn len(&self) -> usize {
        self.files.len()
    }

    pub fn is_empty(&self) -> bool {
        self.files.is_empty()
    }

    /// Drops the record: the step finished and its files stay.
    pub fn discard(self) -> io::Result<()> {
        fs::remove_dir_all(&self.store).map_err(|e| wrap(&self.store, e))
    }

    /// Puts the folders back: files the step added are removed, recorded
    /// files get their recorded contents back.
    pub fn restore(self) -> io::Result<()> {
        let mut now = Vec::new();
        for f in &self.folders {
            walk(f, &mut now)?;
        }
        for path in now {
            let rel = path.strip_prefix(&self.root).unwrap_or(&path);
            if !self.files.iter().any(|f| f == rel) {
                fs::remove_file(&path).map_err(|e| wrap(&path, e))?;
            }
        }
        for rel in &self.files {
            let dest = self.root.join(rel);
            if let Some(parent) = dest.parent() {
                fs::create_dir_all(parent).map_err(|e| wrap(parent, e))?;
            }
            let kept = self.store.join(rel);
            fs::rename(&kept, &dest).map_err(|e| wrap(&kept, e))?;
        }
        fs::remove_dir_all(&self.store).map_err(|e| wrap(&self.store, e))
    }

    /// Puts back a snapshot that a crashed run left under `root`.
    fn recover(root: &Path, folders: &[&str]) -> io::Result<()> {
        let store = root.join(STORE);
        if !store.join(COMPLETE).exists() {
            return fs::remove_dir_all(&store).map_err(|e| wrap(&store, e));
        }
        fs::remove_file(store.join(COMPLETE)).map_err(|e| wrap(&store, e))?;
        let mut kept = Vec::new();
        walk(&store, &mut kept)?;
        let files = kept
            .iter()
            .filter_map(|k| k.strip_prefix(&store).ok().map(Path::to_path_buf))
            .collect();
        Snapshot {
            root: root.to_path_buf(),
            store,
            folders: folders.iter().map(|f| root.join(f)).collect(),
            files,
        }
        .restore()
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::io::atomic::write_bytes_atomically;

    fn scratch(name: &str) -> PathBuf {
        let d = std::env::temp_dir().join(format!("fieldstone-undo-{name}-{}", std::process::id()));
        let _ = fs::remove_dir_all(&d);
        fs::create_dir_all(d.join("data/sub")).unwrap();
        fs::write(d.join("data/a.csv"), b"old a").unwrap();
        fs::write(d.join("data/sub/b.tif"), b"old b").unwrap();
        fs::write(d.join("project.json"), b"{}").unwrap();
        d
    }

    fn read(p: &Path) -> String {
        fs::read_to_string(p).unwrap()
    }

    #[test]
    fn restore_puts_back_replaced_and_removed_files_and_drops_new_ones() {
        let d = scratch("restore");
        let s = Snapshot::take(&d, &["data", "runs"]).unwrap();
        assert_eq!(s.len(), 2);
        write_bytes_atomically(&d.join("data/a.csv"), b"new a").unwrap();
        fs::remove_file(d.join("data/sub/b.tif")).unwrap();
        fs::create_dir_all(d.join("runs/x")).unwrap();
        write_bytes_atomically(&d.join("runs/x/model.vtr"), b"new").unwrap();
        write_bytes_atomically(&d.join("data/c.csv"), b"new c").unwrap();
        s.restore().unwrap();
        assert_eq!(read(&d.join("data/a.csv")), "old a");
        assert_eq!(read(&d.join("data/sub/b.tif")), "old b");
        assert!(!d.join("data/c.csv").exists());
        assert!(!d.join("runs/x/model.vtr").exists());
        assert!(!d.join(STORE).exists());
        assert_eq!(read(&d.join("project.json")), "{}");
        fs::remove_dir_all(&d).unwrap();
    }

    #[test]
    fn discard_keeps_the_new_files() {
        let d = scratch("discard");
        let s = Snapshot::take(&d, &["data"]).unwrap();
        write_bytes_atomically(&d.join("data/a.csv"), b"new a").unwrap();
        s.discard().unwrap();
        assert_eq!(read(&d.join("data/a.csv")), "new a");
        assert!(!d.join(STORE).exists());
        fs::remove_dir_all(&d).unwrap();
    }

    #[test]
    fn a_snapshot_left_by_a_crash_is_put_back_by_the_next_one() {
        let d = scratch("crash");
        let s = Snapshot::take(&d, &["data"]).unwrap();
        write_bytes_atomically(&d.join("data/a.csv"), b"half-finished step").unwrap();
        std::mem::forget(s); // the process died here
        let s2 = Snapshot::take(&d, &["data"]).unwrap();
        assert_eq!(read(&d.join("data/a.csv")), "old a");
        s2.discard().unwrap();
        fs::remove_dir_all(&d).unwrap();
    }

    #[test]
    fn a_record_cut_off_while_taken_is_dropped_and_touches_nothing() {
        let d = scratch("cutoff");
        fs::create_dir_all(d.join(STORE).join("data")).unwrap();
        fs::write(d.join(STORE).join("data/a.csv"), b"stale").unwrap();
        let s = Snapshot::take(&d, &["data"]).unwrap();
        assert_eq!(read(&d.join("data/a.csv")), "old a");
        assert_eq!(read(&d.join("data/sub/b.tif")), "old b");
        s.discard().unwrap();
        fs::remove_dir_all(&d).unwrap();
    }
}
