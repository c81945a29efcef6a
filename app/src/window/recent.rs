//! Recent projects (a list in the configuration folder) and the demo
//! project the window opens when there is none.

use super::*;

fn config_file() -> Option<PathBuf> {
    let base = std::env::var_os("APPDATA")
        .or_else(|| std::env::var_os("XDG_CONFIG_HOME"))
        .map(PathBuf::from)
        .or_else(|| std::env::var_os("HOME").map(|h| PathBuf::from(h).join(".config")))?;
    Some(base.join("fieldstone").join("recent.json"))
}

/// Recently opened project folders, newest first.
pub fn recent_projects() -> Vec<PathBuf> {
    config_file()
        .and_then(|f| std::fs::read_to_string(f).ok())
        .and_then(|t| serde_json::from_str(&t).ok())
        .unwrap_or_default()
}

pub(super) fn remember(dir: &Path) {
    let Some(f) = config_file() else { return };
    let mut v = recent_projects();
    let d = dir.canonicalize().unwrap_or_else(|_| dir.to_path_buf());
    v.retain(|p| p != &d);
    v.insert(0, d);
    v.truncate(8);
    if let Some(p) = f.parent() {
        let _ = std::fs::create_dir_all(p);
    }
    let _ = crate::pipeline::write_text(&f, &serde_json::to_string_pretty(&v).unwrap_or_default());
}

/// The demo project the window opens: a working copy in the user's folder
/// (`<config>/fieldstone/harrow-fen`), so running it never rewrites the
/// bundled `demo-data/harrow-fen` (which stays as shipped). The copy is made
/// from the bundled project, found beside the working folder or the
/// program, or written afresh when neither exists.
pub fn demo_project() -> Result<PathBuf, String> {
    let d = config_file()
        .and_then(|f| f.parent().map(|p| p.join("harrow-fen")))
        .ok_or("no folder to put the demo project in (neither APPDATA, XDG_CONFIG_HOME nor HOME is set)")?;
    if d.join("project.json").exists() {
        return Ok(d);
    }
    let mut candidates = vec![PathBuf::from("demo-data/harrow-fen")];
    if let Ok(exe) = std::env::current_exe() {
        for up in exe.ancestors().skip(1).take(4) {
            candidates.push(up.join("demo-data/harrow-fen"));
        }
    }
    match candidates
        .into_iter()
        .find(|c| c.join("project.json").exists())
    {
        Some(bundled) => copy_project(&bundled, &d)?,
        None => {
            std::fs::create_dir_all(&d).map_err(|e| format!("{}: {e}", d.display()))?;
            fieldstone_core::demo::write_demo(
                &d,
                fieldstone_core::demo::DemoSize::Full,
                &fieldstone_core::progress::Silent,
            )
            .map_err(|e| e.to_string())?;
        }
    }
    Ok(d)
}

/// Copies a project folder's own files (not what running it made: `data/`,
/// `runs/`, undo snapshots, autosaves) into `to`, project.json last so a
/// copy cut short is not taken for a project.
fn copy_project(from: &Path, to: &Path) -> Result<(), String> {
    fn walk(from: &Path, to: &Path, top: bool) -> Result<(), String> {
        std::fs::create_dir_all(to).map_err(|e| format!("{}: {e}", to.display()))?;
        for e in std::fs::read_dir(from).map_err(|e| format!("{}: {e}", from.display()))? {
            let e = e.map_err(|e| format!("{}: {e}", from.display()))?;
            let name = e.file_name();
            let n = name.to_string_lossy();
            if top
                && (n == "data"
                    || n == "runs"
                    || n == "project.json"
                    || n.starts_with(".autosave")
                    || n == fieldstone_core::io::undo::STORE)
            {
                continue;
            }
            let (src, dst) = (e.path(), to.join(&name));
            if src.is_dir() {
                walk(&src, &dst, false)?;
            } else {
                std::fs::copy(&src, &dst).map_err(|e| format!("{}: {e}", src.display()))?;
            }
        }
        Ok(())
    }
    walk(from, to, true)?;
    let p = from.join("project.json");
    let text = std::fs::read(&p).map_err(|e| format!("{}: {e}", p.display()))?;
    fieldstone_core::io::atomic::write_bytes_atomically(&to.join("project.json"), &text)
        .map_err(|e| e.to_string())
}
