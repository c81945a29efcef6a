//! A desktop tool's security: no network, no code in project files, and no
//! file read or written outside the project folder because of what a
//! project file says.

use std::path::Path;

fn workspace() -> &'static Path {
    Path::new(concat!(env!("CARGO_MANIFEST_DIR"), "/.."))
}

/// No crate in the build can speak a network protocol, and the program's own
/// code opens no socket.
#[test]
fn the_program_has_no_network_code() {
    let lock = std::fs::read_to_string(workspace().join("Cargo.lock")).unwrap();
    let names: Vec<&str> = lock
        .lines()
        .filter_map(|l| l.strip_prefix("name = \""))
        .map(|l| l.trim_end_matches('"'))
        .collect();
    assert!(names.len() > 50, "Cargo.lock was not read");
    for banned in [
        "reqwest",
        "hyper",
        "ureq",
        "curl",
        "isahc",
        "attohttpc",
        "surf",
        "h2",
        "rustls",
        "native-tls",
        "openssl",
        "tungstenite",
        "quinn",
    ] {
        assert!(
            !names.contains(&banned),
            "the build holds the network crate '{banned}'"
        );
    }
    fn walk(d: &Path, out: &mut Vec<std::path::PathBuf>) {
        for e in std::fs::read_dir(d).unwrap() {
            let p = e.unwrap().path();
            if p.is_dir() {
                walk(&p, out);
            } else if p.extension().is_some_and(|x| x == "rs") {
                out.push(p);
            }
        }
    }
    let mut files = Vec::new();
    walk(&workspace().join("core/src"), &mut files);
    walk(&workspace().join("pipeline/src"), &mut files);
    walk(&workspace().join("app/src"), &mut files);
    assert!(files.len() > 20);
    for f in files {
        let t = std::fs::read_to_string(&f).unwrap();
        for word in [
            "std::net",
            "TcpStream",
            "UdpSocket",
            "TcpListener",
            "process::Command",
        ] {
            assert!(!t.contains(word), "{} uses {word}", f.display());
        }
    }
}

/// A scenario name with path separators and `..` still writes inside the
/// project's runs folder.
#[test]
fn scenario_names_cannot_leave_the_runs_folder() {
    let dir = Path::new("/tmp/some-project");
    for name in ["../../etc", "/etc/passwd", "a/../../b", "..", "C:\\Windows"] {
        let rd = fieldstone::pipeline::run_dir(dir, name);
        assert_eq!(rd.parent().unwrap(), dir.join("runs"), "{name}");
        let last = rd.file_name().unwrap().to_string_lossy();
        assert!(
            !last.contains('/') && !last.contains('\\') && last != "..",
            "{name} → {last}"
        );
    }
}

/// Paths in a project that point outside it are refused when the project is
/// opened, before any step reads them.
#[test]
fn a_project_that_points_outside_its_folder_does_not_open() {
    let d = std::env::temp_dir().join(format!("fieldstone-security-{}", std::process::id()));
    let _ = std::fs::remove_dir_all(&d);
    std::fs::create_dir_all(&d).unwrap();
    let mut p = fieldstone_core::project::file::ProjectFile::new("escape");
    p.dem = Some("../../../../etc/hostname".into());
    std::fs::write(
        d.join("project.json"),
        serde_json::to_string_pretty(&p).unwrap(),
    )
    .unwrap();
    let o = std::process::Command::new(env!("CARGO_BIN_EXE_fieldstone"))
        .arg("run")
        .arg(&d)
        .output()
        .unwrap();
    assert!(!o.status.success());
    let e = String::from_utf8_lossy(&o.stderr);
    assert!(
        e.contains("dem") && e.contains("leaves the project folder"),
        "{e}"
    );
    std::fs::remove_dir_all(&d).ok();
}
