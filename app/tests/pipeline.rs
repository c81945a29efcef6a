//! The demo project end to end: `fieldstone demo --small` then `fieldstone
//! run --all-scenarios`; misfit, bounds, comparison with the invented truth,
//! no work on a second run, bitwise reproducibility and staleness.

use fieldstone::pipeline::{load_model, load_model_context, project_states, RunFile};
use fieldstone_core::project::file::ProjectFile;
use fieldstone_core::project::provenance::StepState;
use std::path::{Path, PathBuf};
use std::process::Command;

fn bin() -> Command {
    Command::new(env!("CARGO_BIN_EXE_fieldstone"))
}

fn scratch(name: &str) -> PathBuf {
    let d = std::env::temp_dir().join(format!("fieldstone-pipeline-{name}-{}", std::process::id()));
    let _ = std::fs::remove_dir_all(&d);
    d
}

fn run(args: &[&str], dir: &Path) -> String {
    let o = bin().arg("run").arg(dir).args(args).output().unwrap();
    let err = String::from_utf8_lossy(&o.stderr).to_string();
    assert!(o.status.success(), "fieldstone run {args:?} failed:\n{err}");
    err
}

fn summary(dir: &Path, s: &str) -> RunFile {
    let t = std::fs::read_to_string(dir.join("runs").join(s).join("summary.json")).unwrap();
    serde_json::from_str(&t).unwrap()
}

/// Runs `fieldstone export DIR ARGS --out OUT` and asserts that it succeeded.
fn export_ok(dir: &Path, args: &[&str], out: &Path) {
    let o = bin()
        .arg("export")
        .arg(dir)
        .args(args)
        .arg("--out")
        .arg(out)
        .output()
        .unwrap();
    assert!(
        o.status.success(),
        "{args:?}: {}",
        String::from_utf8_lossy(&o.stderr)
    );
}

#[test]
fn the_demo_runs_end_to_end_fits_honours_bounds_and_reproduces() {
    let dir = scratch("demo");
    let o = bin().args(["demo", "--small"]).arg(&dir).output().unwrap();
    assert!(o.status.success(), "{}", String::from_utf8_lossy(&o.stderr));
    // Writing over an existing project is refused.
    let again = bin().args(["demo", "--small"]).arg(&dir).output().unwrap();
    assert!(!again.status.success());
    assert!(String::from_utf8_lossy(&again.stderr).contains("already holds a project"));

    let log = run(&["--all-scenarios"], &dir);
    assert!(
        log.contains("import") && log.contains("exports/magnetic_bounds"),
        "{log}"
    );
    let p = ProjectFile::load(&dir).unwrap().project;
    assert!(p.scenarios.len() >= 4);
    // The models are bit for bit those of the program before the pipeline
    // moved into its own crate (fixture and the script that made it in
    // tests/fixtures/small_demo_models_sha256.*).
    let fixture: serde_json::Value = serde_json::from_str(include_str!(
        "../../tests/fixtures/small_demo_models_sha256.json"
    ))
    .unwrap();
    for s in &p.scenarios {
        let bytes = std::fs::read(dir.join("runs").join(&s.name).join("model.npy")).unwrap();
        assert_eq!(
            fieldstone_core::project::provenance::hash_bytes(&bytes),
            fixture["sha256"][&s.name].as_str().unwrap(),
            "{}: the model is not the one the program made before",
            s.name
        );
    }
    let m = load_model_context(&dir, &p).unwrap();
    for s in &p.scenarios {
        let r = summary(&dir, &s.name);
        assert!(
            (r.summary.chi_factor - 1.0).abs() <= 0.05,
            "{}: chi-factor {}",
            s.name,
            r.summary.chi_factor
        );
        assert!(r.caution.contains("non-unique"));
        // The recipe the model came from is recorded with it.
        assert_eq!(
            r.recipe_hashes["mesh"],
            fieldstone_core::project::provenance::hash_json(&p.mesh)
        );
        assert_eq!(
            r.recipe_hashes["layers"],
            fieldstone_core::project::provenance::hash_json(&s.layers)
        );
        // Every export the project asks for exists, figures included.
        let files: Vec<String> = serde_json::from_str(
            &std::fs::read_to_string(dir.join("runs").join(&s.name).join("exports.json")).unwrap(),
        )
        .unwrap();
        assert!(
            files.iter().any(|f| f.ends_with(".png"))
                && files.iter().any(|f| f.ends_with(".svg"))
                && files.iter().any(|f| f.ends_with(".tif"))
        );
        for f in &files {
            assert!(
                dir.join("runs")
                    .join(&s.name)
                    .join(f)
                    .metadata()
                    .unwrap()
                    .len()
                    > 100,
                "{f}"
            );
        }
    }
    // Bounds are honoured on every active cell.
    let model = |s: &str| load_model(&dir, s, m.mesh.n_cells()).unwrap();
    let range = |v: &[f64]| {
        v.iter()
            .filter(|x| x.is_finite())
            .fold((f64::INFINITY, f64::NEG_INFINITY), |(a, b), x| {
                (a.min(*x), b.max(*x))
            })
    };
    let (lo, hi) = range(&model("bounds_focusing"));
    assert!(lo >= -0.6 - 1e-9 && hi <= 0.45 + 1e-9, "{lo} {hi}");
    let (lo, hi) = range(&model("magnetic_bounds"));
    assert!(lo >= -1e-12 && hi <= 0.2 + 1e-9, "{lo} {hi}");
    // Drilling, cover and contact bring the model closer to the (invented) truth.
    let smooth = summary(&dir, "smooth").truth_comparison.unwrap();
    let informed = summary(&dir, "drilling_cover_contact")
        .truth_comparison
        .unwrap();
    assert!(
        informed.rms_difference_core < 0.8 * smooth.rms_difference_core,
        "{informed:?} vs {smooth:?}"
    );
    assert!(
        informed.rms_difference_body < smooth.rms_difference_body,
        "{informed:?} vs {smooth:?}"
    );
    assert!(informed.body_cells > 100);

    // The smooth scenario is appraised: a depth-of-investigation index from
    // a second run with the reference shifted ±0.1 g/cm³ in blocks (which
    // also fits the data), on every active cell and nowhere else; and
    // holding the geologist's intrusive at the background costs model
    // structure elsewhere (φ_m grows), so the feature is not "not required".
    let a: fieldstone::pipeline::appraisal::AppraisalFile = serde_json::from_str(
        &std::fs::read_to_string(dir.join("runs/smooth/appraisal.json")).unwrap(),
    )
    .unwrap();
    let doi = a.doi.as_ref().expect("a depth-of-investigation index");
    assert!(doi.profile.layers.len() > 5 && doi.free_cells > 1000);
    assert!(doi.block_m.is_some_and(|b| b > 0.0));
    assert!(doi.data_level_shift.abs() < 0.05, "{doi:?}");
    assert!((doi.chi_factor_shifted - 1.0).abs() <= 0.05, "{doi:?}");
    let index =
        fieldstone::pipeline::load_run_array(&dir, "smooth", "doi.npy", m.mesh.n_cells()).unwrap();
    for (k, v) in index.iter().enumerate() {
        assert_eq!(v.is_finite(), m.active.active[k], "cell {k}: {v}");
    }
    let t = &a.feature_tests[0];
    assert_eq!(t.name, "intrusive");
    assert!(t.report.region_cells > 20, "{:?}", t.report);
    assert!(
        t.report.verdict != "not required" && t.report.phi_m_held > t.report.phi_m_base,
        "{:?}",
        t.report
    );
    assert!(dir.join("runs/smooth/held_intrusive.npy").exists());
    assert!(dir.join("runs/smooth/doi.vtr").exists());
    assert!(a.caution.contains("non-unique"));

    // A second run does no work.
    let log = run(&["--all-scenarios"], &dir);
    assert!(log.contains("run: 0 steps ran"), "{log}");
    // Forcing a rerun gives the same model, bit for bit.
    let before = std::fs::read(dir.join("runs/smooth/model.npy")).unwrap();
    let log = run(&["--scenario", "smooth", "--force"], &dir);
    assert!(log.contains("inversion/smooth") && !log.contains("0 steps ran"));
    assert_eq!(
        std::fs::read(dir.join("runs/smooth/model.npy")).unwrap(),
        before,
        "a forced rerun changed the model"
    );

    // The constraint arrays and exports from the command line.
    let cons = dir.join("constraint-arrays");
    let o = bin()
        .arg("constraints")
        .arg(&dir)
        .args(["--scenario", "drilling_cover_contact", "--out"])
        .arg(&cons)
        .output()
        .unwrap();
    assert!(o.status.success(), "{}", String::from_utf8_lossy(&o.stderr));
    let report: serde_json::Value =
        serde_json::from_str(&std::fs::read_to_string(cons.join("constraints.json")).unwrap())
            .unwrap();
    assert_eq!(report[0]["scenario"], "drilling_cover_contact");
    assert!(report[0]["bounded_cells"].as_u64().unwrap() > 1000);
    // Upper bounds on the .npy: −0.3 in the cover, 0.45 elsewhere, ≤ 0.45 everywhere active.
    let npy = std::fs::read(cons.join("drilling_cover_contact_upper.npy")).unwrap();
    let hl = u16::from_le_bytes([npy[8], npy[9]]) as usize;
    let up: Vec<f64> = npy[10 + hl..]
        .chunks_exact(8)
        .map(|c| f64::from_le_bytes(c.try_into().unwrap()))
        .collect();
    assert_eq!(up.len(), m.mesh.n_cells());
    assert!(
        up.iter().any(|v| (*v + 0.3).abs() < 1e-12) && up.iter().any(|v| (*v - 0.45).abs() < 1e-12)
    );
    for (what, format, extra, check) in [
        (
            "section",
            "png",
            vec!["--line", "452000,5401300;453500,5401300"],
            &b"\x89PNG"[..],
        ),
        (
            "section",
            "svg",
            vec!["--line", "452000,5401300;453500,5401300"],
            &b"<?xml"[..],
        ),
        ("slice", "tif", vec!["--depth-m", "100"], &b"II"[..]),
        ("model", "vtr", vec![], &b"<?xml"[..]),
        ("data", "csv", vec![], &b"#"[..]),
    ] {
        let out = dir.join(format!("export-{what}.{format}"));
        let mut args = vec!["--scenario", "smooth", "--what", what, "--format", format];
        args.extend(extra);
        export_ok(&dir, &args, &out);
        assert!(
            std::fs::read(&out).unwrap().starts_with(check),
            "{what} {format}"
        );
    }
    // Defaults: a section east-west through the core centre, a slice at half
    // the core depth; --run is the same as --scenario; the comma-only line form.
    for args in [
        vec!["--run", "smooth", "--what", "section", "--format", "csv"],
        vec!["--run", "smooth", "--what", "slice", "--format", "csv"],
        vec![
            "--run",
            "smooth",
            "--what",
            "section",
            "--format",
            "csv",
            "--line",
            "452000,5401300,452700,5401500,453500,5401500",
        ],
    ] {
        let out = dir.join("default.csv");
        export_ok(&dir, &args, &out);
        assert!(std::fs::read_to_string(&out).unwrap().lines().count() > 10);
    }
    let grids = dir.join("grids-out");
    export_ok(
        &dir,
        &["--run", "smooth", "--what", "grids", "--format", "tif"],
        &grids,
    );
    assert!(grids.join("gravity_residual.tif").exists());
    // Predicted and misfit grids of a run on the residual grid's lattice:
    // the model explains most of the residual anomaly.
    let rms = |g: &fieldstone_core::grid::Grid2| {
        let v: Vec<f64> = g.values.iter().copied().filter(|v| v.is_finite()).collect();
        (v.iter().map(|x| x * x).sum::<f64>() / v.len() as f64).sqrt()
    };
    let read = |p: &Path| fieldstone_core::grid::geotiff::read_geotiff(p).unwrap();
    let residual = read(&dir.join("data/gravity_residual.tif"));
    let predicted = read(&dir.join("runs/smooth/predicted.tif"));
    let misfit = read(&dir.join("runs/smooth/misfit.tif"));
    assert!(predicted.same_lattice(&residual) && misfit.same_lattice(&residual));
    assert!(
        rms(&misfit) < 0.2 * rms(&residual),
        "misfit RMS {} vs residual RMS {}",
        rms(&misfit),
        rms(&residual)
    );
    // Map figures of every grid: hillshade, automatic contours, 150 dpi.
    let maps = dir.join("maps-out");
    export_ok(
        &dir,
        &[
            "--run",
            "smooth",
            "--what",
            "grids",
            "--format",
            "svg",
            "--hillshade",
            "--contours",
            "auto",
        ],
        &maps,
    );
    let svg = std::fs::read_to_string(maps.join("gravity_residual.svg")).unwrap();
    assert!(
        svg.contains("contours every") && svg.contains("shaded from the north-west"),
        "legend of the map figure"
    );
    assert!(svg.contains(">HF-01<"), "collars on the map");
    assert!(maps.join("smooth_misfit.svg").exists() && maps.join("smooth_predicted.svg").exists());
    let png = dir.join("slice150.png");
    export_ok(
        &dir,
        &[
            "--run",
            "smooth",
            "--what",
            "slice",
            "--format",
            "png",
            "--dpi",
            "150",
            "--colour-map",
            "cividis",
        ],
        &png,
    );
    let dec = png::Decoder::new(std::io::BufReader::new(std::fs::File::open(&png).unwrap()));
    let info = dec.read_info().unwrap();
    assert_eq!(info.info().width, 1350, "900 px layout at 150/100");
    // Section figures carry the logged densities of holes near the line.
    let sec = dir.join("section-holes.svg");
    export_ok(
        &dir,
        &[
            "--run",
            "drilling_cover_contact",
            "--what",
            "section",
            "--format",
            "svg",
            "--hole-distance-m",
            "60",
            "--line",
            "452000,5401300;453500,5401300",
        ],
        &sec,
    );
    let svg = std::fs::read_to_string(&sec).unwrap();
    assert!(
        svg.contains(">HF-01<") && svg.contains("beside holes: logged density − 2.67"),
        "holes with logs on the section"
    );
    // Bad figure options are refused with the accepted values.
    for (opt, val, msg) in [
        ("--dpi", "20", "outside 50 to 600"),
        (
            "--colour-map",
            "rainbow",
            "viridis, cividis, diverging, grey",
        ),
        ("--contours", "-1", "positive interval"),
    ] {
        let o = bin()
            .arg("export")
            .arg(&dir)
            .args([
                "--run", "smooth", "--what", "slice", "--format", "png", opt, val, "--out",
            ])
            .arg(dir.join("bad.png"))
            .output()
            .unwrap();
        let err = String::from_utf8_lossy(&o.stderr);
        assert!(
            !o.status.success() && err.contains(msg),
            "{opt} {val}: {err}"
        );
    }
    let o = bin()
        .arg("export")
        .arg(&dir)
        .args([
            "--scenario",
            "smooth",
            "--what",
            "data",
            "--format",
            "tif",
            "--out",
        ])
        .arg(dir.join("x.tif"))
        .output()
        .unwrap();
    assert!(!o.status.success() && String::from_utf8_lossy(&o.stderr).contains("use csv"));

    // Staleness: a new reduction density marks reduce and everything after
    // it stale, and nothing before.
    let mut p = ProjectFile::load(&dir).unwrap().project;
    let st = project_states(&dir, &p).unwrap();
    assert!(st.iter().all(|(_, s)| *s == StepState::Done), "{st:?}");
    p.gravity_reduction.as_mut().unwrap().density_g_cc = 2.60;
    p.save(&dir).unwrap();
    let st = project_states(&dir, &p).unwrap();
    assert_eq!(st[0], ("import".to_string(), StepState::Done));
    assert!(
        st[1..].iter().all(|(_, s)| *s == StepState::Stale),
        "{st:?}"
    );
    // A changed input file makes everything stale, import included.
    let g = dir.join("inputs/gravity_readings.csv");
    let mut text = std::fs::read_to_string(&g).unwrap();
    text.push('\n');
    std::fs::write(&g, text).unwrap();
    let st = project_states(&dir, &p).unwrap();
    assert_eq!(st[0].1, StepState::Stale);
    // Rejected readings leave the gridding and the inversion, not the file.
    let stations = |d: &Path| {
        std::fs::read_to_string(d.join("data/gravity_stations.csv"))
            .unwrap()
            .lines()
            .count()
    };
    let before = stations(&dir);
    p.gravity.as_mut().unwrap().rejected_rows = vec![1, 2, 3];
    p.save(&dir).unwrap();
    let log = run(&["--scenario", "smooth"], &dir);
    assert!(
        log.contains("reduce") && !log.contains("0 steps ran"),
        "{log}"
    );
    assert_eq!(stations(&dir), before - 3);
    std::fs::remove_dir_all(&dir).ok();
}

#[test]
fn run_refuses_bad_projects_with_a_message() {
    let dir = scratch("bad");
    std::fs::create_dir_all(&dir).unwrap();
    let o = bin().arg("run").arg(&dir).output().unwrap();
    assert!(!o.status.success());
    assert!(String::from_utf8_lossy(&o.stderr).contains("project.json"));
    std::fs::write(dir.join("project.json"), "{\"schema_version\": 2, \"name\": \"x\", \"epsg\": null, \"background_density_g_cc\": 2.67, \"inducing_field\": null, \"gravity_reduction\": null, \"regional\": null, \"mesh\": null, \"gravity\": {\"file\": \"../outside.csv\"}}").unwrap();
    let o = bin().arg("run").arg(&dir).output().unwrap();
    let e = String::from_utf8_lossy(&o.stderr);
    assert!(!o.status.success());
    assert!(e.contains("gravity"), "{e}");
    let mut p = ProjectFile::new("empty");
    p.save(&dir).unwrap();
    let o = bin()
        .arg("run")
        .arg(&dir)
        .args(["--scenario", "nope"])
        .output()
        .unwrap();
    assert!(String::from_utf8_lossy(&o.stderr).contains("no scenario 'nope'"));
    p.gravity = Some(fieldstone_core::project::file::GravityInput::of_file(
        "../outside.csv",
    ));
    p.save(&dir).unwrap();
    let o = bin().arg("run").arg(&dir).output().unwrap();
    let e = String::from_utf8_lossy(&o.stderr);
    assert!(e.contains("leaves the project folder"), "{e}");
    std::fs::remove_dir_all(&dir).ok();
}

/// The FFT operator through the pipeline on the small demo with uniform
/// padding: data level at the highest station, and draped on the terrain
/// with kernels expanded in height. Both fit the data; each run records how
/// far the FFT rows are from exact rows at the data's own heights, and the
/// draped rows are the closer.
#[test]
fn fft_runs_report_their_row_error_and_draping_reduces_it() {
    use fieldstone_core::mesh::recipe::Padding;
    use fieldstone_core::project::file::{FftHeights, OperatorChoice};
    let dir = scratch("fft");
    let o = bin().args(["demo", "--small"]).arg(&dir).output().unwrap();
    assert!(o.status.success(), "{}", String::from_utf8_lossy(&o.stderr));
    let mut p = ProjectFile::load(&dir).unwrap().project;
    if let Some(r) = p.mesh.as_mut() {
        r.padding = Padding::Uniform { cells: 4 };
    }
    let mut level = p.scenarios[0].clone();
    level.name = "fft_level".into();
    level.operator = OperatorChoice::Fft;
    level.appraisal = None;
    let mut draped = level.clone();
    draped.name = "fft_draped".into();
    draped.fft_heights = FftHeights::Draped { order: 4 };
    p.scenarios = vec![level, draped];
    p.save(&dir).unwrap();
    let log = run(&["--all-scenarios"], &dir);
    assert!(log.contains("FFT rows against exact rows"), "{log}");
    let (l, d) = (summary(&dir, "fft_level"), summary(&dir, "fft_draped"));
    for r in [&l, &d] {
        assert_eq!(r.summary.operator, "fft");
        assert!(
            (r.summary.chi_factor - 1.0).abs() <= 0.05,
            "{:?}",
            r.summary
        );
    }
    let (cl, cd) = (l.operator_check.unwrap(), d.operator_check.unwrap());
    assert!(cl.rows_checked >= 20 && cd.rows_checked == cl.rows_checked);
    assert!(
        cd.median_relative_error < 0.5 * cl.median_relative_error,
        "draped {cd:?} vs level {cl:?}"
    );
    std::fs::remove_dir_all(&dir).ok();
}
