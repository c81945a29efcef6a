//! The layer rule of ARCHITECTURE.md, enforced by reading the sources:
//! crates depend one way (core → pipeline → app), and inside core a module
//! uses only modules of lower layers.
//!
//! When this test fails, move the shared piece down (a small module of the
//! lower layer) rather than adding an exception here.

use std::collections::BTreeMap;
use std::path::{Path, PathBuf};

/// The layers of core, lowest first; a module may use modules of lower
/// layers only. Keep in step with the table in ARCHITECTURE.md.
const CORE_LAYERS: &[(&str, &[&str])] = &[
    (
        "utilities",
        &["units", "memory", "io", "progress", "time", "numeric"],
    ),
    ("readers and references", &["table", "geodesy"]),
    (
        "grids, outlines and kernels",
        &["grid", "outline", "physics"],
    ),
    (
        "survey data, meshes, forward models",
        &["survey", "mesh", "forward"],
    ),
    (
        "reductions, filters, holes, exports",
        &["reduce", "filter", "drillhole", "export"],
    ),
    ("constraints and operators", &["constraint", "operator"]),
    ("inversion", &["invert"]),
    ("project", &["project"]),
    ("demo", &["demo"]),
];

fn root() -> PathBuf {
    Path::new(env!("CARGO_MANIFEST_DIR"))
        .parent()
        .unwrap()
        .to_path_buf()
}

/// Every `.rs` file under `dir`, with its text.
fn sources(dir: &Path) -> Vec<(PathBuf, String)> {
    let mut out = Vec::new();
    let mut stack = vec![dir.to_path_buf()];
    while let Some(d) = stack.pop() {
        for e in std::fs::read_dir(&d).unwrap() {
            let p = e.unwrap().path();
            if p.is_dir() {
                stack.push(p);
            } else if p.extension().is_some_and(|x| x == "rs") {
                let text = std::fs::read_to_string(&p).unwrap();
                out.push((p, text));
            }
        }
    }
    out.sort();
    out
}

/// The identifiers that follow `prefix` in `text` (e.g. the module after
/// `crate::`), with the line they are on.
fn uses_after<'a>(text: &'a str, prefix: &str) -> Vec<(usize, &'a str)> {
    let mut out = Vec::new();
    for (n, line) in text.lines().enumerate() {
        let code = line.split("//").next().unwrap_or("");
        let mut rest = code;
        while let Some(i) = rest.find(prefix) {
            let after = &rest[i + prefix.len()..];
            let end = after
                .find(|c: char| !(c.is_ascii_alphanumeric() || c == '_'))
                .unwrap_or(after.len());
            if end > 0 {
                out.push((n + 1, &after[..end]));
            }
            rest = &after[end..];
        }
    }
    out
}

#[test]
fn core_modules_use_only_lower_layers() {
    let layer: BTreeMap<&str, usize> = CORE_LAYERS
        .iter()
        .enumerate()
        .flat_map(|(k, (_, mods))| mods.iter().map(move |m| (*m, k)))
        .collect();
    let src = root().join("core/src");
    let mut broken = Vec::new();
    for (path, text) in sources(&src) {
        let rel = path.strip_prefix(&src).unwrap();
        let first = rel.components().next().unwrap().as_os_str();
        let module = first.to_str().unwrap().trim_end_matches(".rs");
        if module == "lib" {
            continue;
        }
        let own = *layer.get(module).unwrap_or_else(|| {
            panic!(
                "core module '{module}' is in no layer: add it to CORE_LAYERS and ARCHITECTURE.md"
            )
        });
        for (line, used) in uses_after(&text, "crate::") {
            if used == module {
                continue;
            }
            let Some(&theirs) = layer.get(used) else {
                continue;
            };
            if theirs >= own {
                broken.push(format!(
                    "{}:{line}: {module} ({}) uses {used} ({})",
                    rel.display(),
                    CORE_LAYERS[own].0,
                    CORE_LAYERS[theirs].0
                ));
            }
        }
    }
    assert!(
        broken.is_empty(),
        "layer rule broken:\n{}",
        broken.join("\n")
    );
}

/// Names that must not appear in a crate's sources or manifest.
fn refuse(crate_dir: &str, forbidden: &[&str]) -> Vec<String> {
    let dir = root().join(crate_dir);
    let mut found = Vec::new();
    let manifest = std::fs::read_to_string(dir.join("Cargo.toml")).unwrap();
    let mut files = sources(&dir.join("src"));
    files.push((dir.join("Cargo.toml"), manifest));
    for (path, text) in files {
        for (n, line) in text.lines().enumerate() {
            let code = line.split("//").next().unwrap_or("");
            for f in forbidden {
                let hit = code.match_indices(f).any(|(i, _)| {
                    !code[..i]
                        .chars()
                        .last()
                        .is_some_and(|c| c.is_ascii_alphanumeric() || c == '_')
                });
                if hit {
                    found.push(format!("{}:{}: {f}", path.display(), n + 1));
                }
            }
        }
    }
    found
}

#[test]
fn crates_depend_one_way_and_only_the_window_knows_the_gui() {
    let gui = ["egui", "eframe", "rfd", "winit", "glow"];
    let mut broken = Vec::new();
    // Core knows neither the pipeline, the program, an argument parser nor a GUI.
    let mut core_forbidden = vec!["fieldstone_pipeline", "fieldstone-pipeline", "clap"];
    core_forbidden.extend(gui);
    broken.extend(refuse("core", &core_forbidden));
    // The pipeline knows core only: no program, no argument parser, no GUI.
    let mut pipeline_forbidden = vec!["fieldstone::", "clap"];
    pipeline_forbidden.extend(gui);
    broken.extend(refuse("pipeline", &pipeline_forbidden));
    // The command line does not reach into the window.
    for (path, text) in sources(&root().join("app/src/commands")) {
        for (n, line) in text.lines().enumerate() {
            if gui.iter().chain(&["window::"]).any(|g| line.contains(g)) {
                broken.push(format!("{}:{}: {line}", path.display(), n + 1));
            }
        }
    }
    assert!(
        broken.is_empty(),
        "layer rule broken:\n{}",
        broken.join("\n")
    );
}

#[test]
fn the_scanner_sees_a_use_of_a_higher_layer() {
    // The check itself: a line that uses a module is found, a comment is not.
    let text = "use crate::invert::IterationRecord;\n// crate::demo in a comment\n";
    assert_eq!(uses_after(text, "crate::"), vec![(1, "invert")]);
}
