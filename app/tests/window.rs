//! The project window driven by its widgets' labels (egui_kittest, no
//! display): open the demo, visit every step, import a CSV with a role
//! change, draw a polygon into a bounded layer, run an inversion and watch
//! the log fill, export a section as PNG.

use egui::accesskit::Role;
use egui_kittest::kittest::Queryable;
use egui_kittest::Harness;
use fieldstone::window::panels::ResultView;
use fieldstone::window::{setup_fonts, FieldstoneApp, Step};
use fieldstone_core::constraint::region::Region;
use fieldstone_core::demo::{write_demo, DemoSize};
use fieldstone_core::progress::Silent;
use std::path::{Path, PathBuf};
use std::time::{Duration, Instant};

fn demo(name: &str) -> PathBuf {
    let d = std::env::temp_dir().join(format!("fieldstone-window-{name}-{}", std::process::id()));
    let _ = std::fs::remove_dir_all(&d);
    std::fs::create_dir_all(&d).unwrap();
    write_demo(&d, DemoSize::Small, &Silent).unwrap();
    d
}

/// The window on `dir`, with the project's tables, grids and runs read
/// (the window reads them off the frame; the tests wait for them).
fn harness(dir: &Path) -> Harness<'static, FieldstoneApp> {
    let dir = dir.to_path_buf();
    let mut h = Harness::builder()
        .with_size([1400.0, 900.0])
        .with_max_steps(20)
        .build_eframe(move |cc| {
            setup_fonts(&cc.egui_ctx);
            FieldstoneApp::with(Some(&dir), false)
        });
    if let Some(d) = h.state_mut().ws.doc.as_mut() {
        d.wait_loaded();
    }
    h
}

/// Clicks the step of that name in the step list (the first widget with the label).
fn step(h: &mut Harness<FieldstoneApp>, label: &str) {
    h.get_all_by_label(label)
        .next()
        .unwrap_or_else(|| panic!("no step {label}"))
        .click();
    h.run_steps(3);
}

fn click_at(h: &mut Harness<FieldstoneApp>, x: f32, y: f32) {
    let pos = egui::pos2(x, y);
    h.event(egui::Event::PointerMoved(pos));
    h.step();
    for pressed in [true, false] {
        h.event(egui::Event::PointerButton {
            pos,
            button: egui::PointerButton::Primary,
            pressed,
            modifiers: Default::default(),
        });
    }
    h.run_steps(2);
}

#[test]
fn every_step_shows_its_form_and_a_run_goes_from_polygon_to_exported_section() {
    let dir = demo("flow");
    let mut h = harness(&dir);
    h.run_steps(3);
    assert!(
        h.state().ws.doc.is_some(),
        "the demo project did not open: {:?}",
        h.state().ws.dialog
    );
    // The title and the cautions are there.
    assert_eq!(
        h.state().ws.doc.as_ref().unwrap().project.name,
        "Harrow Fen (invented demo)"
    );
    for (s, form_widget) in [
        ("Survey", "Preview"),
        ("Corrections", "Reduction density"),
        ("Grids", "Contours"),
        ("Regional", "Polynomial trend"),
        ("Model space", "Core cell east-west"),
        ("Constraints", "Add layer"),
        ("Runs", "Run"),
        ("Results", "Export section PNG"),
    ] {
        step(&mut h, s);
        assert!(
            h.query_by_label(form_widget).is_some(),
            "step {s}: no '{form_widget}' in its form"
        );
    }
    assert_eq!(h.state().ws.step, Step::Results);

    // Draw a triangle on the constraint map and close it: a new polygon layer
    // with an upper bound.
    step(&mut h, "Constraints");
    let before = h.state().ws.doc.as_ref().unwrap().project.scenarios[0]
        .layers
        .len();
    h.get_by_label("Draw polygon on the map").click();
    h.run_steps(2);
    for (x, y) in [(520.0, 300.0), (760.0, 300.0), (640.0, 460.0)] {
        click_at(&mut h, x, y);
    }
    assert_eq!(
        h.state()
            .panels
            .constraints
            .drawing
            .as_ref()
            .map(|v| v.len()),
        Some(3),
        "map clicks did not add vertices"
    );
    h.get_by_label("Close polygon").click();
    h.run_steps(3);
    let layers = &h.state().ws.doc.as_ref().unwrap().project.scenarios[0].layers;
    assert_eq!(layers.len(), before + 1);
    let l = layers.last().unwrap();
    assert!(
        matches!(&l.region, Region::Polygon { vertices, .. } if vertices.len() == 3),
        "{:?}",
        l.region
    );
    assert_eq!(l.assign.upper, Some(0.0));
    // Undo takes the layer away, redo brings it back.
    h.get_by_label("Edit").click();
    h.run_steps(2);
    h.get_by_label("Undo  (Ctrl+Z)").click();
    h.run_steps(2);
    assert_eq!(
        h.state().ws.doc.as_ref().unwrap().project.scenarios[0]
            .layers
            .len(),
        before
    );
    h.get_by_label("Edit").click();
    h.run_steps(2);
    h.get_by_label("Redo  (Ctrl+Y)").click();
    h.run_steps(2);
    assert_eq!(
        h.state().ws.doc.as_ref().unwrap().project.scenarios[0]
            .layers
            .len(),
        before + 1
    );

    // Run the first scenario; the log fills while it runs and the run appears.
    step(&mut h, "Runs");
    h.get_by_label("Run").click();
    h.step();
    assert!(
        h.state().ws.job.as_ref().is_some_and(|j| j.running()),
        "no run started"
    );
    let mut saw_iterations = false;
    let t = Instant::now();
    while h.state().ws.job.is_some() {
        assert!(
            t.elapsed() < Duration::from_secs(180),
            "the run did not finish:\n{}",
            h.state().ws.log.join("\n")
        );
        std::thread::sleep(Duration::from_millis(50));
        h.step();
        saw_iterations |= h
            .state()
            .ws
            .job
            .as_ref()
            .is_some_and(|j| !j.iterations.is_empty());
    }
    let app = h.state();
    assert!(
        app.ws
            .log
            .iter()
            .any(|l| l.contains("inversion/smooth") && l.contains("chi-factor")),
        "{}",
        app.ws.log.join("\n")
    );
    assert!(
        saw_iterations || !app.ws.last_iterations.is_empty(),
        "the run log never filled"
    );
    let run = app
        .ws
        .doc
        .as_ref()
        .unwrap()
        .views
        .runs
        .get("smooth")
        .expect("the run is listed");
    assert!((run.file.summary.chi_factor - 1.0).abs() < 0.05);
    // The polygon's upper bound of 0 holds in the model.
    assert!(run.log.len() > 1);

    // Export the east-west section as PNG (with the data profile above it).
    step(&mut h, "Results");
    h.get_by_label("Section east-west").click();
    h.run_steps(3);
    // The section view can outline the cells and shows drill holes.
    h.get_by_label("Cell edges").click();
    h.run_steps(2);
    assert!(h.state().ws.display.cell_edges);
    assert!(h.query_by_label("Drill holes").is_some());
    h.get_by_label("Export section PNG").click();
    h.run_steps(2);
    // The figure is written by a background job; its line reaches the log.
    let t0 = Instant::now();
    while h.state().ws.job.is_some() && t0.elapsed() < Duration::from_secs(60) {
        std::thread::sleep(Duration::from_millis(20));
        h.step();
    }
    assert!(
        h.state()
            .ws
            .log
            .iter()
            .any(|l| l.contains("window_section_ew.png")),
        "{}",
        h.state().ws.log.join("\n")
    );
    let png = dir.join("runs/smooth/window_section_ew.png");
    let bytes = std::fs::read(&png).unwrap_or_else(|e| {
        panic!(
            "{}: {e}; message {:?}",
            png.display(),
            h.state().panels.results.export_message
        )
    });
    assert_eq!(&bytes[..8], b"\x89PNG\r\n\x1a\n");
    let dec = png::Decoder::new(std::io::Cursor::new(bytes))
        .read_info()
        .unwrap();
    // The demo asks for 150 dpi: the 1000 × 740 layout (580 without the data
    // profile above the section) at 1.5 times.
    assert_eq!(dec.info().width, 1500);
    assert!(
        [870, 1110].contains(&dec.info().height),
        "{}",
        dec.info().height
    );
    // The run was appraised: the depth-of-investigation index shows as a
    // plan slice with its layer profile, and the feature test's verdict is
    // listed in the form.
    h.get_by_label("Depth of investigation").click();
    h.run_steps(3);
    assert_eq!(
        h.state().panels.results.view,
        ResultView::DepthOfInvestigation
    );
    let run = &h.state().ws.doc.as_ref().unwrap().views.runs["smooth"];
    assert!(run.doi.is_some() && run.appraisal.is_some());
    assert!(h.query_by_label("Is this feature required?").is_some());
    assert!(h.query_by_label_contains("layer medians").is_some());
    // The Runs form shows the appraisal settings of the scenario.
    step(&mut h, "Runs");
    assert!(h
        .query_by_label("Depth-of-investigation index (a second run)")
        .is_some());
    assert!(h.query_by_label("draped on the terrain").is_some());
    std::fs::remove_dir_all(&dir).ok();
}

/// A survey of three files with field headers goes in through the form
/// (core's importer, the same guesses as the command line), is copied into
/// the project, and the pipeline reduces it with a base network and a meter
/// table back to the absolute gravity it was made from.
#[test]
fn a_field_survey_of_several_files_is_imported_and_reduced() {
    use fieldstone_tests::field_survey::write_field_survey;
    let dir = demo("import");
    let field =
        std::env::temp_dir().join(format!("fieldstone-window-field-{}", std::process::id()));
    let survey = write_field_survey(&field);
    let mut h = harness(&dir);
    h.run_steps(3);
    step(&mut h, "Survey");
    for f in &survey.days {
        h.get_by_role(Role::TextInput).focus();
        h.step();
        h.get_by_role(Role::TextInput)
            .type_text(&f.display().to_string());
        h.run_steps(2);
        h.get_by_label("Add").click();
        h.run_steps(2);
    }
    assert_eq!(h.state().panels.survey.import.files.len(), 3);
    h.get_by_label("Preview").click();
    h.run_steps(3);
    let pv = h
        .state()
        .panels
        .survey
        .import
        .preview
        .clone()
        .expect("no preview");
    use fieldstone_core::survey::columns::Role as R;
    assert_eq!(
        pv.roles(),
        [
            R::Station,
            R::Longitude,
            R::Latitude,
            R::Elevation,
            R::Time,
            R::Gravity
        ]
    );
    h.get_by_label("Import as gravity survey").click();
    h.run_steps(2);
    let t0 = Instant::now();
    while (h.state().ws.job.is_some() || h.state().panels.survey.import.files.len() == 3)
        && t0.elapsed() < Duration::from_secs(60)
    {
        std::thread::sleep(Duration::from_millis(20));
        h.step();
    }
    h.run_steps(3);
    let g = h
        .state()
        .ws
        .doc
        .as_ref()
        .unwrap()
        .project
        .gravity
        .clone()
        .unwrap();
    assert_eq!(
        g.files().cloned().collect::<Vec<_>>(),
        ["inputs/day1.csv", "inputs/day2.csv", "inputs/day3.csv"],
        "{:?} {}",
        h.state().panels.survey.import.message,
        h.state().ws.log.join("\n")
    );
    assert!(!g.tide, "elapsed times cannot give the tide");
    assert!(dir.join("inputs/day3.csv").exists() && survey.days[2].exists());
    // The bases and the meter table, as the Corrections form sets them.
    for (from, to) in [
        (&survey.bases, "inputs/bases.csv"),
        (&survey.meter, "inputs/meter.csv"),
    ] {
        std::fs::copy(from, dir.join(to)).unwrap();
    }
    {
        let d = h.state_mut().ws.doc.as_mut().unwrap();
        d.before_edit();
        let g = d.project.gravity.as_mut().unwrap();
        g.bases = Some("inputs/bases.csv".into());
        g.meter_table = Some("inputs/meter.csv".into());
        g.base_station = None;
        g.base_value_mgal = None;
        // The demo's terrain model does not reach these invented stations.
        g.terrain_outer_m = None;
        d.changed();
    }
    h.run_steps(2);
    h.get_by_label("Run the steps up to the model space")
        .click();
    h.run_steps(2);
    let t0 = Instant::now();
    while h.state().ws.job.is_some() && t0.elapsed() < Duration::from_secs(300) {
        std::thread::sleep(Duration::from_millis(50));
        h.step();
    }
    let log = h.state().ws.log.join("\n");
    assert!(
        log.contains("base C:") && log.contains("day2.csv: loop"),
        "{log}"
    );
    let text = std::fs::read_to_string(dir.join("data/gravity_reduced.csv"))
        .unwrap_or_else(|e| panic!("{e}\n{log}"));
    let mut rdr = csv::Reader::from_reader(text.as_bytes());
    let head = rdr.headers().unwrap().clone();
    let g_col = head
        .iter()
        .position(|c| c == "observed_gravity_mgal")
        .unwrap();
    assert!(head.iter().any(|c| c == "source_file"));
    let mut sq = 0.0;
    let mut n = 0;
    for (k, row) in rdr.records().enumerate() {
        let row = row.unwrap();
        assert_eq!(&row[0], survey.visits[k].as_str());
        let e = row[g_col].parse::<f64>().unwrap() - survey.truth[&survey.visits[k]];
        sq += e * e;
        n += 1;
    }
    assert_eq!(n, survey.visits.len());
    let rms = (sq / n as f64).sqrt();
    assert!(rms < 0.01, "RMS {rms}");
    std::fs::remove_dir_all(&dir).ok();
    std::fs::remove_dir_all(&field).ok();
}

#[test]
fn unsaved_edits_are_autosaved_and_offered_at_the_next_start() {
    let dir = demo("autosave");
    {
        let mut app = FieldstoneApp::with(Some(&dir), false);
        let d = app.ws.doc.as_mut().expect("the demo opens");
        d.before_edit();
        d.project.name = "edited, not saved".into();
        d.autosave().unwrap();
    }
    assert!(dir.join(".autosave.project.json").exists());
    let mut h = harness(&dir);
    h.run_steps(3);
    assert!(
        matches!(
            h.state().ws.dialog,
            Some(fieldstone::window::Dialog::Recover(_))
        ),
        "{:?}",
        h.state().ws.dialog
    );
    h.get_by_label("Recover").click();
    h.run_steps(3);
    assert_eq!(
        h.state().ws.doc.as_ref().unwrap().project.name,
        "edited, not saved"
    );
    // Nothing is written over the project until the user saves.
    let on_disk = fieldstone_core::project::file::ProjectFile::load(&dir)
        .unwrap()
        .project;
    assert_eq!(on_disk.name, "Harrow Fen (invented demo)");
    std::fs::remove_dir_all(&dir).ok();
}

/// The frame only draws: with the project open on the Constraints step, 100
/// idle frames plan nothing and build no constraint arrays or other derived
/// data; one edit plans once (off the frame) and builds the arrays once.
#[test]
fn idle_frames_derive_nothing_and_one_edit_derives_once() {
    let dir = demo("frames");
    // The shared steps, so the mesh and data exist.
    fieldstone_pipeline::run(
        &dir,
        &fieldstone_pipeline::Selection::None,
        false,
        &fieldstone_pipeline::Quiet,
    )
    .unwrap();
    let mut h = harness(&dir);
    h.run_steps(3);
    step(&mut h, "Constraints");
    // A scenario with constraint layers, so the arrays are not trivial.
    let with_layers = h
        .state()
        .ws
        .doc
        .as_ref()
        .unwrap()
        .project
        .scenarios
        .iter()
        .position(|s| !s.layers.is_empty())
        .expect("a demo scenario with layers");
    h.state_mut().ws.scenario = with_layers;
    let settle = |h: &mut Harness<FieldstoneApp>| {
        let t = Instant::now();
        h.run_steps(5);
        while h.state().ws.doc.as_ref().unwrap().planning() {
            assert!(
                t.elapsed() < Duration::from_secs(60),
                "planning never ended"
            );
            std::thread::sleep(Duration::from_millis(20));
            h.step();
        }
        h.run_steps(5);
    };
    settle(&mut h);
    let counts = |h: &Harness<FieldstoneApp>| {
        let d = h.state().ws.doc.as_ref().unwrap();
        (
            d.plans_started.get(),
            d.constraint_builds.get(),
            d.derived_builds.get(),
        )
    };
    let before = counts(&h);
    assert!(before.1 >= 1, "the Constraints step built no arrays");
    for _ in 0..100 {
        h.step();
    }
    assert_eq!(counts(&h), before, "idle frames derived data again");
    // One edit: the first layer's reference weight doubled.
    {
        let d = h.state_mut().ws.doc.as_mut().unwrap();
        d.before_edit();
        let a = &mut d.project.scenarios[with_layers].layers[0].assign;
        a.reference_weight = Some(a.reference_weight.unwrap_or(1.0) * 2.0);
        d.changed();
    }
    settle(&mut h);
    for _ in 0..100 {
        h.step();
    }
    let after = counts(&h);
    assert_eq!(after.0, before.0 + 1, "plans after one edit");
    assert_eq!(after.1, before.1 + 1, "constraint builds after one edit");
    std::fs::remove_dir_all(&dir).ok();
}

/// Outlines from a GeoJSON file in longitude/latitude become constraint
/// layers in the project's reference (the file is read in a background job;
/// the choose-a-file dialog is the only part not driven here).
#[test]
fn outlines_from_a_file_become_constraint_layers() {
    let dir = demo("outlines");
    let mut h = harness(&dir);
    h.run_steps(3);
    step(&mut h, "Constraints");
    let before = h.state().ws.doc.as_ref().unwrap().project.scenarios[0]
        .layers
        .len();
    let f = dir.join("areas.geojson");
    std::fs::write(
        &f,
        r#"{"type": "FeatureCollection", "features": [{"type": "Feature", "properties": {"name": "lease"},
            "geometry": {"type": "Polygon", "coordinates": [[[-81.6, 48.76], [-81.59, 48.76], [-81.59, 48.77], [-81.6, 48.77], [-81.6, 48.76]],
                                                            [[-81.597, 48.763], [-81.597, 48.767], [-81.593, 48.767], [-81.593, 48.763], [-81.597, 48.763]]]}}]}"#,
    )
    .unwrap();
    let ctx = h.ctx.clone();
    let epsg = h.state().ws.doc.as_ref().unwrap().project.epsg;
    {
        let st = h.state_mut();
        st.panels
            .constraints
            .start_reading(&mut st.ws, &ctx, f.clone(), epsg);
    }
    let t0 = Instant::now();
    while h.state().panels.constraints.outlines.is_some() && t0.elapsed() < Duration::from_secs(30)
    {
        std::thread::sleep(Duration::from_millis(20));
        h.step();
    }
    h.run_steps(3);
    let layers = &h.state().ws.doc.as_ref().unwrap().project.scenarios[0].layers;
    assert_eq!(layers.len(), before + 1);
    let l = layers.last().unwrap();
    assert_eq!(l.name, "lease");
    match &l.region {
        Region::Outline { parts, source, .. } => {
            assert_eq!(parts.len(), 1);
            assert_eq!(parts[0].holes.len(), 1);
            assert!(source.contains("areas.geojson"), "{source}");
            // Projected: eastings of a UTM zone, not degrees.
            assert!(
                parts[0].outer.iter().all(|p| p[0] > 100_000.0),
                "{:?}",
                parts[0].outer
            );
        }
        other => panic!("{other:?}"),
    }
}

/// A magnetic survey of two flights delivered as ASEG-GDF2 (.dat with its
/// .dfn) goes through the window's import: roles and units from the
/// definitions, both files and their definitions copied into the project,
/// and the pipeline reduces both flights into one table.
#[test]
fn a_magnetic_survey_of_two_gdf_flights_is_imported_and_reduced() {
    let dir = demo("gdf-import");
    let field = std::env::temp_dir().join(format!("fieldstone-window-gdf-{}", std::process::id()));
    let _ = std::fs::remove_dir_all(&field);
    std::fs::create_dir_all(&field).unwrap();
    let dfn = "DEFN   ST=RECD,RT=COMM;RT:A4;COMMENTS:A76\n\
DEFN 1 ST=RECD,RT=;LINE:I6\n\
DEFN 2 ST=RECD,RT=;FID:F9.1\n\
DEFN 3 ST=RECD,RT=;EASTING:F10.1:UNIT=m\n\
DEFN 4 ST=RECD,RT=;NORTHING:F11.1:UNIT=m\n\
DEFN 5 ST=RECD,RT=;GPS_HT:F8.1:UNIT=feet,NULL=-999.9\n\
DEFN 6 ST=RECD,RT=;TF:F10.2:UNIT=nT,NULL=-99999.99\n\
DEFN 7 ST=RECD,RT=;END DEFN\n";
    let mut files = Vec::new();
    for flight in 0..2 {
        let mut dat = format!("{:<80}\n", format!("COMM invented flight {}", flight + 1));
        for l in 0..3 {
            for k in 0..30 {
                let (x, y) = (
                    452_000.0 + 50.0 * k as f64,
                    5_400_800.0 + 200.0 * (3 * flight + l) as f64,
                );
                dat.push_str(&format!(
                    "{:>6}{:>9.1}{x:>10.1}{y:>11.1}{:>8.1}{:>10.2}\n",
                    100 * (flight + 1) + l,
                    1000.0 + k as f64,
                    1100.0,
                    54_600.0 + 0.01 * k as f64
                ));
            }
        }
        let stem = field.join(format!("flight{}", flight + 1));
        std::fs::write(stem.with_extension("dfn"), dfn).unwrap();
        std::fs::write(stem.with_extension("dat"), dat).unwrap();
        files.push(stem.with_extension("dat"));
    }
    let mut h = harness(&dir);
    h.run_steps(3);
    step(&mut h, "Survey");
    for f in &files {
        h.get_by_role(Role::TextInput).focus();
        h.step();
        h.get_by_role(Role::TextInput)
            .type_text(&f.display().to_string());
        h.run_steps(2);
        h.get_by_label("Add").click();
        h.run_steps(2);
    }
    h.get_by_label("Preview").click();
    h.run_steps(3);
    let pv = h
        .state()
        .panels
        .survey
        .import
        .preview
        .clone()
        .expect("no preview");
    use fieldstone_core::survey::columns::Role as R;
    assert_eq!(
        pv.roles(),
        [
            R::Line,
            R::Station,
            R::Easting,
            R::Northing,
            R::Elevation,
            R::Magnetic
        ]
    );
    h.get_by_label("Import as magnetic survey").click();
    h.run_steps(2);
    let t0 = Instant::now();
    while (h.state().ws.job.is_some() || h.state().panels.survey.import.files.len() == 2)
        && t0.elapsed() < Duration::from_secs(60)
    {
        std::thread::sleep(Duration::from_millis(20));
        h.step();
    }
    h.run_steps(3);
    let m = h
        .state()
        .ws
        .doc
        .as_ref()
        .unwrap()
        .project
        .magnetic
        .clone()
        .unwrap();
    assert_eq!(
        m.files().cloned().collect::<Vec<_>>(),
        ["inputs/flight1.dat", "inputs/flight2.dat"],
        "{}",
        h.state().ws.log.join("\n")
    );
    assert!(
        dir.join("inputs/flight2.dfn").exists(),
        "the definition was not copied"
    );
    // The project records how each file was read.
    let imports = &h.state().ws.doc.as_ref().unwrap().project.imports;
    let files: Vec<&str> = imports.iter().map(|i| i.file.as_str()).collect();
    assert_eq!(files, ["inputs/flight1.dat", "inputs/flight2.dat"]);
    let tf = imports[1]
        .spec
        .columns
        .iter()
        .find(|c| c.name == "TF")
        .unwrap();
    assert_eq!(tf.role, R::Magnetic);
    let ht = imports[1]
        .spec
        .columns
        .iter()
        .find(|c| c.name == "GPS_HT")
        .unwrap();
    assert_eq!(ht.unit, fieldstone_core::survey::columns::Unit::Foot);
    {
        let d = h.state_mut().ws.doc.as_mut().unwrap();
        d.before_edit();
        // No base record for these invented flights.
        d.project.magnetic.as_mut().unwrap().base_file = None;
        d.changed();
    }
    h.run_steps(2);
    h.get_by_label("Run the steps up to the model space")
        .click();
    h.run_steps(2);
    let t0 = Instant::now();
    while h.state().ws.job.is_some() && t0.elapsed() < Duration::from_secs(300) {
        std::thread::sleep(Duration::from_millis(50));
        h.step();
    }
    let text = std::fs::read_to_string(dir.join("data/magnetic_reduced.csv"))
        .unwrap_or_else(|e| panic!("{e}: {}", h.state().ws.log.join("\n")));
    let header = text.lines().find(|l| !l.starts_with('#')).unwrap();
    assert!(
        header.starts_with("LINE,FID,EASTING,NORTHING,GPS_HT,TF,source_file,"),
        "{header}"
    );
    assert_eq!(
        text.lines().filter(|l| l.contains("flight2.dat")).count(),
        90
    );
    assert_eq!(
        text.lines().filter(|l| l.contains("flight1.dat")).count(),
        90
    );
}

/// "Add as a further gravity survey" keeps the project's first survey and
/// adds the files as a further one, named after the first file.
#[test]
fn a_further_survey_is_added_beside_the_first() {
    let dir = demo("further");
    let mut h = harness(&dir);
    h.run_steps(3);
    step(&mut h, "Survey");
    let first = h.state().ws.doc.as_ref().unwrap().project.gravity.clone();
    let f = dir.join("inputs/gravity_readings.csv");
    h.get_by_role(Role::TextInput).focus();
    h.step();
    h.get_by_role(Role::TextInput)
        .type_text(&f.display().to_string());
    h.run_steps(2);
    h.get_by_label("Add").click();
    h.run_steps(2);
    h.get_by_label("Preview").click();
    h.run_steps(3);
    h.get_by_label("Add as a further gravity survey").click();
    h.run_steps(2);
    let t0 = Instant::now();
    while (h.state().ws.job.is_some() || !h.state().panels.survey.import.files.is_empty())
        && t0.elapsed() < Duration::from_secs(60)
    {
        std::thread::sleep(Duration::from_millis(20));
        h.step();
    }
    h.run_steps(3);
    let p = &h.state().ws.doc.as_ref().unwrap().project;
    assert_eq!(p.gravity, first, "the first survey changed");
    assert_eq!(p.more_gravity.len(), 1, "{}", h.state().ws.log.join("\n"));
    assert_eq!(p.more_gravity[0].name, "gravity_readings");
    assert_eq!(p.more_gravity[0].survey.file, "inputs/gravity_readings.csv");
}
