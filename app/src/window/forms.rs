//! The forms on the right: one per step, validated as the user types, with
//! messages next to the field.

use super::{FieldstoneApp, Step};
use crate::pipeline::Selection;
use egui::{Color32, RichText, Ui};
use fieldstone_core::constraint::build::{Assignments, Contact, ContactAlong, Layer};
use fieldstone_core::constraint::region::{Level, Region};
use fieldstone_core::filter::regional::RegionalMethod;
use fieldstone_core::filter::trend::TrendSettings;
use fieldstone_core::invert::{InversionSettings, Weighting};
use fieldstone_core::mesh::recipe::Padding;
use fieldstone_core::mesh::size::estimate;
use fieldstone_core::project::file::{
    DataKind, GravityInput, MagneticInput, ProjectFile, Scenario,
};
use fieldstone_core::table::passthrough::read_passthrough;

/// Roles a column can take in the import form.
pub const ROLES: [&str; 10] = [
    "ignore",
    "x",
    "y",
    "height_m",
    "gravity_mgal",
    "mag_nt",
    "time",
    "station",
    "line",
    "other",
];

/// The first rows of a file and the role chosen for each column.
#[derive(Debug, Clone, PartialEq)]
pub struct Preview {
    pub names: Vec<String>,
    pub rows: Vec<Vec<String>>,
    pub roles: Vec<usize>,
    pub n_rows: usize,
}

#[derive(Default)]
pub struct FormState {
    pub import_path: String,
    pub import_preview: Option<Preview>,
    pub import_message: Option<String>,
    pub selected_layer: usize,
    /// Vertices of a polygon being drawn on the map.
    pub drawing: Option<Vec<[f64; 2]>>,
    pub new_scenario_name: String,
    last_edit: Option<std::time::Instant>,
    pub export_message: Option<String>,
}

fn guess_role(name: &str) -> usize {
    let n = name.to_ascii_lowercase();
    let pick = |r: &str| ROLES.iter().position(|x| *x == r).unwrap_or(0);
    match n.as_str() {
        "x" | "east" | "easting" | "e" => pick("x"),
        "y" | "north" | "northing" | "n" => pick("y"),
        "z" | "height" | "height_m" | "elev" | "elevation" => pick("height_m"),
        "gravity" | "gravity_mgal" | "reading" | "grav" | "g" => pick("gravity_mgal"),
        "mag" | "mag_nt" | "tmi" | "total_field" => pick("mag_nt"),
        "time" | "datetime" | "date_time" => pick("time"),
        "station" | "stn" | "id" => pick("station"),
        "line" | "line_id" => pick("line"),
        _ => pick("other"),
    }
}

/// Reads the preview of a file for the import form.
pub fn preview(path: &str) -> Result<Preview, String> {
    let t = read_passthrough(std::path::Path::new(path), &[]).map_err(|e| e.to_string())?;
    let rows = (0..t.n_rows().min(8))
        .map(|r| (0..t.names.len()).map(|c| t.text(r, c)).collect())
        .collect();
    Ok(Preview {
        roles: t.names.iter().map(|n| guess_role(n)).collect(),
        names: t.names.clone(),
        rows,
        n_rows: t.n_rows(),
    })
}

/// Copies the file into the project's inputs with the columns renamed to
/// their roles, and makes it the gravity or magnetic survey.
pub fn import_into(
    project_dir: &std::path::Path,
    p: &mut ProjectFile,
    path: &str,
    pv: &Preview,
    gravity: bool,
) -> Result<String, String> {
    let role = |r: &str| pv.roles.iter().position(|x| ROLES[*x] == r);
    let need: &[&str] = if gravity {
        &["x", "y", "height_m", "gravity_mgal"]
    } else {
        &["x", "y", "height_m", "mag_nt"]
    };
    for n in need {
        if role(n).is_none() {
            return Err(format!(
                "give a column the role {n} (needed for a {} survey)",
                if gravity { "gravity" } else { "magnetic" }
            ));
        }
    }
    let t = read_passthrough(std::path::Path::new(path), &[]).map_err(|e| e.to_string())?;
    let cols: Vec<(usize, &str)> = pv
        .roles
        .iter()
        .enumerate()
        .filter(|(_, r)| ROLES[**r] != "ignore" && ROLES[**r] != "other")
        .map(|(c, r)| (c, ROLES[*r]))
        .collect();
    let mut seen = std::collections::BTreeSet::new();
    for (_, r) in &cols {
        if !seen.insert(*r) {
            return Err(format!(
                "two columns have the role {r}; give each role to one column"
            ));
        }
    }
    let mut text = format!(
        "# imported from {path}\n{}\n",
        cols.iter().map(|c| c.1).collect::<Vec<_>>().join(",")
    );
    for r in 0..t.n_rows() {
        let v: Vec<String> = cols
            .iter()
            .map(|(c, _)| t.text(r, *c).replace(',', ";"))
            .collect();
        text.push_str(&v.join(","));
        text.push('\n');
    }
    let stem = std::path::Path::new(path)
        .file_stem()
        .map(|s| s.to_string_lossy().to_string())
        .unwrap_or_else(|| "survey".into());
    let rel = format!("inputs/{}_imported.csv", crate::pipeline::safe_name(&stem));
    let dest = project_dir.join(&rel);
    if let Some(d) = dest.parent() {
        std::fs::create_dir_all(d).map_err(|e| format!("{}: {e}", d.display()))?;
    }
    crate::pipeline::write_text(&dest, &text)?;
    if gravity {
        let old = p.gravity.clone();
        p.gravity = Some(GravityInput {
            file: rel.clone(),
            base_station: old
                .as_ref()
                .and_then(|g| g.base_station.clone())
                .filter(|_| role("station").is_some()),
            base_value_mgal: old
                .as_ref()
                .and_then(|g| g.base_value_mgal)
                .filter(|_| role("station").is_some()),
            max_drift_mgal_per_h: 0.05,
            tide: role("time").is_some(),
            gravimetric_factor: 1.16,
            terrain_outer_m: old.as_ref().and_then(|g| g.terrain_outer_m),
            uncertainty_floor_mgal: 0.02,
            uncertainty_percent: 0.0,
            rejected_rows: vec![],
        });
    } else {
        p.magnetic = Some(MagneticInput {
            file: rel.clone(),
            base_file: p.magnetic.as_ref().and_then(|m| m.base_file.clone()),
            date: p
                .magnetic
                .as_ref()
                .map(|m| m.date.clone())
                .unwrap_or_else(|| "2026-01-01".into()),
            thin_to_m: 25.0,
            uncertainty_floor_nt: 1.0,
            uncertainty_percent: 2.0,
        });
    }
    Ok(format!("{} rows imported into {rel}", t.n_rows()))
}

fn warn(ui: &mut Ui, m: impl Into<String>) {
    ui.label(
        RichText::new(m.into())
            .color(Color32::from_rgb(180, 60, 20))
            .small(),
    );
}

fn num(ui: &mut Ui, label: &str, v: &mut f64, speed: f64, unit: &str) {
    ui.horizontal(|ui| {
        ui.label(label);
        ui.add(
            egui::DragValue::new(v)
                .speed(speed)
                .suffix(format!(" {unit}")),
        );
    });
}

fn opt_num(ui: &mut Ui, label: &str, v: &mut Option<f64>, default: f64, unit: &str) {
    ui.horizontal(|ui| {
        let mut on = v.is_some();
        if ui.checkbox(&mut on, label).changed() {
            *v = if on { Some(default) } else { None };
        }
        if let Some(x) = v.as_mut() {
            ui.add(
                egui::DragValue::new(x)
                    .speed(0.01)
                    .suffix(format!(" {unit}")),
            );
        }
    });
}

/// The form of the current step.
pub fn show(app: &mut FieldstoneApp, ui: &mut Ui) {
    let Some(doc) = app.doc.as_ref() else {
        ui.label("No project is open. Use Project → Open…, or drop a project folder here.");
        return;
    };
    if let Some(why) = &doc.read_only {
        warn(ui, format!("Read-only: {why}"));
    }
    let mut p = doc.project.clone();
    ui.heading(app.step.label());
    ui.add_space(4.0);
    let running = app.job.as_ref().is_some_and(|j| j.running());
    let mut run_request: Option<(Selection, bool)> = None;
    match app.step {
        Step::Survey => survey(app, ui, &mut p),
        Step::Corrections => corrections(ui, &mut p),
        Step::Grids => grids(app, ui, &mut p),
        Step::Regional => regional(app, ui, &mut p),
        Step::ModelSpace => model_space(app, ui, &mut p),
        Step::Constraints => constraints(app, ui, &mut p),
        Step::Runs => runs(app, ui, &mut p, &mut run_request),
        Step::Results => results(app, ui),
    }
    ui.separator();
    ui.add_enabled_ui(!running, |ui| {
        if matches!(
            app.step,
            Step::Survey | Step::Corrections | Step::Grids | Step::Regional | Step::ModelSpace
        ) && ui.button("Run the steps up to the model space").clicked()
        {
            run_request = Some((Selection::None, false));
        }
        if ui.button("Run every scenario").clicked() {
            run_request = Some((Selection::All, false));
        }
    });
    let doc = app.doc.as_mut().expect("checked above");
    if p != doc.project && doc.read_only.is_none() {
        let now = std::time::Instant::now();
        if app
            .forms
            .last_edit
            .is_none_or(|t| now.duration_since(t).as_secs_f32() > 0.8)
        {
            doc.before_edit();
        }
        app.forms.last_edit = Some(now);
        doc.project = p;
        doc.changed();
    }
    if let Some((sel, force)) = run_request {
        let ctx = ui.ctx().clone();
        app.start_pipeline(sel, force, Some(ctx));
    }
}

fn survey(app: &mut FieldstoneApp, ui: &mut Ui, p: &mut ProjectFile) {
    ui.label("Import a survey table");
    ui.horizontal(|ui| {
        ui.label("File");
        ui.add(
            egui::TextEdit::singleline(&mut app.forms.import_path)
                .desired_width(190.0)
                .hint_text("path to a CSV file"),
        );
        if ui.button("Browse…").clicked() {
            if let Some(f) = rfd::FileDialog::new()
                .add_filter("tables", &["csv", "txt", "xyz"])
                .pick_file()
            {
                app.forms.import_path = f.display().to_string();
                app.forms.import_preview = None;
            }
        }
    });
    if ui.button("Preview").clicked() {
        match preview(&app.forms.import_path) {
            Ok(pv) => {
                app.forms.import_preview = Some(pv);
                app.forms.import_message = None;
            }
            Err(e) => app.forms.import_message = Some(e),
        }
    }
    if let Some(pv) = app.forms.import_preview.as_mut() {
        ui.label(format!(
            "{} rows; choose the role of each column:",
            pv.n_rows
        ));
        egui::Grid::new("roles").striped(true).show(ui, |ui| {
            for (c, name) in pv.names.iter().enumerate() {
                ui.label(name);
                egui::ComboBox::from_id_salt(("role", c))
                    .selected_text(ROLES[pv.roles[c]])
                    .show_ui(ui, |ui| {
                        for (k, r) in ROLES.iter().enumerate() {
                            ui.selectable_value(&mut pv.roles[c], k, *r);
                        }
                    });
                ui.label(
                    RichText::new(
                        pv.rows
                            .iter()
                            .take(3)
                            .map(|r| r.get(c).cloned().unwrap_or_default())
                            .collect::<Vec<_>>()
                            .join("  "),
                    )
                    .small()
                    .weak(),
                );
                ui.end_row();
            }
        });
        let pv = pv.clone();
        let dir = app.doc.as_ref().map(|d| d.dir.clone()).unwrap_or_default();
        ui.horizontal(|ui| {
            for (label, grav) in [
                ("Import as gravity survey", true),
                ("Import as magnetic survey", false),
            ] {
                if ui.button(label).clicked() {
                    app.forms.import_message = Some(
                        match import_into(&dir, p, &app.forms.import_path, &pv, grav) {
                            Ok(m) => m,
                            Err(e) => format!("not imported: {e}"),
                        },
                    );
                }
            }
        });
    }
    if let Some(m) = &app.forms.import_message {
        warn(ui, m.clone());
    }
    ui.separator();
    ui.label("Coordinate reference");
    let mut epsg = p.epsg.unwrap_or(0);
    ui.horizontal(|ui| {
        ui.label("EPSG code");
        ui.add(egui::DragValue::new(&mut epsg).range(0..=99_999));
    });
    p.epsg = (epsg > 0).then_some(epsg);
    if let Some(e) = p.epsg {
        match fieldstone_core::geodesy::crs::Crs::from_epsg(e) {
            Ok(c) => {
                ui.label(RichText::new(c.name()).small().weak());
            }
            Err(err) => warn(ui, err.to_string()),
        }
    }
    if let Some(g) = &p.gravity {
        ui.label(RichText::new(format!("gravity survey: {}", g.file)).small());
    }
    if let Some(m) = &p.magnetic {
        ui.label(RichText::new(format!("magnetic survey: {}", m.file)).small());
    }
    ui.separator();
    ui.label("Quality control: choose a line to see its profile");
    if let Some((r, lines)) = app
        .doc
        .as_ref()
        .and_then(|d| Some((d.views.gravity_raw.clone()?, d.survey_lines())))
    {
        egui::ComboBox::from_label("line")
            .selected_text(app.views.line.clone().unwrap_or_else(|| "none".into()))
            .show_ui(ui, |ui| {
                for l in lines.iter() {
                    let v = Some(l.clone());
                    ui.selectable_value(&mut app.views.line, v, l);
                }
            });
        let names: Vec<String> = r
            .names
            .iter()
            .zip(&r.numbers)
            .filter(|(_, n)| n.is_some())
            .map(|(n, _)| n.clone())
            .collect();
        egui::ComboBox::from_label("colour stations by")
            .selected_text(app.views.colour_by.clone())
            .show_ui(ui, |ui| {
                for n in names {
                    ui.selectable_value(&mut app.views.colour_by, n.clone(), n);
                }
            });
    }
}

fn corrections(ui: &mut Ui, p: &mut ProjectFile) {
    let mut s = p.gravity_reduction.unwrap_or_default();
    ui.label(RichText::new("Gravity").strong());
    num(ui, "Reduction density", &mut s.density_g_cc, 0.01, "g/cm³");
    if !(1.5..=3.5).contains(&s.density_g_cc) {
        warn(
            ui,
            "expected about 1.8 to 3.3 g/cm³ (2.67 is the common choice)",
        );
    }
    ui.checkbox(&mut s.atmospheric, "Atmospheric correction");
    ui.checkbox(&mut s.curvature, "Curvature (Bullard B) correction");
    p.background_density_g_cc = s.density_g_cc;
    p.gravity_reduction = Some(s);
    if let Some(g) = p.gravity.as_mut() {
        ui.checkbox(&mut g.tide, "Earth tide (Longman)");
        num(
            ui,
            "Gravimetric factor",
            &mut g.gravimetric_factor,
            0.01,
            "",
        );
        let mut base = g.base_station.clone().unwrap_or_default();
        ui.horizontal(|ui| {
            ui.label("Base station id");
            ui.text_edit_singleline(&mut base);
        });
        g.base_station = (!base.is_empty()).then_some(base);
        opt_num(
            ui,
            "Base absolute gravity",
            &mut g.base_value_mgal,
            980_000.0,
            "mGal",
        );
        if g.base_station.is_some() != g.base_value_mgal.is_some() {
            warn(
                ui,
                "give both the base station id and its absolute gravity, or neither",
            );
        }
        num(
            ui,
            "Flag loops drifting faster than",
            &mut g.max_drift_mgal_per_h,
            0.005,
            "mGal/h",
        );
        opt_num(
            ui,
            "Terrain correction to",
            &mut g.terrain_outer_m,
            2000.0,
            "m",
        );
        num(
            ui,
            "Uncertainty floor",
            &mut g.uncertainty_floor_mgal,
            0.001,
            "mGal",
        );
        if g.uncertainty_floor_mgal <= 0.0 {
            warn(ui, "the uncertainty must be positive");
        }
    }
    if let Some(m) = p.magnetic.as_mut() {
        ui.separator();
        ui.label(RichText::new("Magnetics").strong());
        ui.horizontal(|ui| {
            ui.label("Survey date");
            ui.text_edit_singleline(&mut m.date);
        });
        if fieldstone_core::geodesy::igrf::decimal_year_of_date(&m.date).is_err() {
            warn(ui, "the date is YYYY-MM-DD");
        }
        num(ui, "Thin readings to", &mut m.thin_to_m, 1.0, "m");
        num(
            ui,
            "Uncertainty floor",
            &mut m.uncertainty_floor_nt,
            0.1,
            "nT",
        );
        num(ui, "plus", &mut m.uncertainty_percent, 0.1, "%");
    }
}

fn grids(app: &mut FieldstoneApp, ui: &mut Ui, p: &mut ProjectFile) {
    let mut g = p
        .gridding
        .clone()
        .unwrap_or(fieldstone_core::project::file::GridSettings {
            cell_m: 25.0,
            tension: 0.25,
        });
    ui.label("Minimum curvature with tension");
    num(ui, "Cell size", &mut g.cell_m, 0.5, "m");
    if let Some(gi) = &p.gravity {
        let _ = gi;
        ui.label(
            RichText::new("suggested: a quarter to a fifth of the line spacing (common practice)")
                .small()
                .weak(),
        );
    }
    ui.add(egui::Slider::new(&mut g.tension, 0.0..=1.0).text("tension"));
    if g.cell_m <= 0.0 {
        warn(ui, "the cell size must be positive");
    }
    p.gridding = Some(g);
    views_controls(
        app,
        ui,
        &["gravity_grid", "magnetic_grid", "terrain", "base_of_cover"],
    );
}

fn views_controls(app: &mut FieldstoneApp, ui: &mut Ui, choices: &[&str]) {
    ui.separator();
    ui.label("Map");
    let avail: Vec<String> = app
        .doc
        .as_ref()
        .map(|d| {
            choices
                .iter()
                .filter(|c| d.views.grids.contains_key(**c))
                .map(|c| c.to_string())
                .collect()
        })
        .unwrap_or_default();
    if !avail.contains(&app.views.grid) {
        if let Some(f) = avail.first() {
            app.views.grid = f.clone();
        }
    }
    egui::ComboBox::from_label("grid shown")
        .selected_text(app.views.grid.clone())
        .show_ui(ui, |ui| {
            for c in avail {
                ui.selectable_value(&mut app.views.grid, c.clone(), c);
            }
        });
    ui.checkbox(&mut app.views.hillshade, "Hillshade");
    ui.checkbox(&mut app.views.equalise, "Histogram equalisation");
    contour_control(ui, &mut app.views.contours);
}

/// Contours on or off, with an interval (blank: automatic).
pub fn contour_control(ui: &mut Ui, c: &mut Option<f64>) {
    ui.horizontal(|ui| {
        let mut on = c.is_some();
        if ui.checkbox(&mut on, "Contours").changed() {
            *c = on.then_some(f64::NAN);
        }
        if let Some(v) = c.as_mut() {
            let mut t = if v.is_finite() {
                format!("{v}")
            } else {
                String::new()
            };
            let r = ui.add(
                egui::TextEdit::singleline(&mut t)
                    .hint_text("auto")
                    .desired_width(60.0),
            );
            if r.changed() {
                *v = match t.trim().parse::<f64>() {
                    Ok(x) if x.is_finite() && x > 0.0 => x,
                    _ => f64::NAN,
                };
            }
            ui.label("interval");
        }
    });
}

fn regional(app: &mut FieldstoneApp, ui: &mut Ui, p: &mut ProjectFile) {
    let mut kind = match &p.regional {
        Some(RegionalMethod::Trend(_)) | None => 0,
        Some(RegionalMethod::UpwardContinuation { .. }) => 1,
        Some(RegionalMethod::Plane { .. }) => 2,
    };
    ui.horizontal(|ui| {
        ui.radio_value(&mut kind, 0, "Polynomial trend");
        ui.radio_value(&mut kind, 1, "Upward continuation");
        ui.radio_value(&mut kind, 2, "Known plane");
    });
    let mut m = p
        .regional
        .clone()
        .unwrap_or(RegionalMethod::Trend(TrendSettings {
            order: 1,
            robust: true,
            polygon: None,
        }));
    m = match (kind, m) {
        (0, RegionalMethod::Trend(t)) => RegionalMethod::Trend(t),
        (0, _) => RegionalMethod::Trend(TrendSettings {
            order: 1,
            robust: true,
            polygon: None,
        }),
        (1, RegionalMethod::UpwardContinuation { height_m }) => {
            RegionalMethod::UpwardContinuation { height_m }
        }
        (1, _) => RegionalMethod::UpwardContinuation { height_m: 500.0 },
        (
            _,
            RegionalMethod::Plane {
                origin_m,
                value,
                gradient_per_km,
            },
        ) => RegionalMethod::Plane {
            origin_m,
            value,
            gradient_per_km,
        },
        (_, _) => RegionalMethod::Plane {
            origin_m: [0.0, 0.0],
            value: 0.0,
            gradient_per_km: [0.0, 0.0],
        },
    };
    match &mut m {
        RegionalMethod::Trend(t) => {
            ui.add(egui::Slider::new(&mut t.order, 0..=3).text("order"));
            ui.checkbox(&mut t.robust, "Robust (ignore the anomalies)");
        }
        RegionalMethod::UpwardContinuation { height_m } => num(ui, "Height", height_m, 10.0, "m"),
        RegionalMethod::Plane {
            origin_m,
            value,
            gradient_per_km,
        } => {
            num(ui, "Origin east", &mut origin_m[0], 10.0, "m");
            num(ui, "Origin north", &mut origin_m[1], 10.0, "m");
            num(ui, "Value at origin", value, 0.01, "mGal");
            num(
                ui,
                "Gradient east",
                &mut gradient_per_km[0],
                0.01,
                "mGal/km",
            );
            num(
                ui,
                "Gradient north",
                &mut gradient_per_km[1],
                0.01,
                "mGal/km",
            );
        }
    }
    p.regional = Some(m);
    views_controls(
        app,
        ui,
        &[
            "gravity_residual",
            "gravity_regional",
            "gravity_grid",
            "magnetic_residual",
        ],
    );
}

fn model_space(app: &mut FieldstoneApp, ui: &mut Ui, p: &mut ProjectFile) {
    let Some(r) = p.mesh.as_mut() else {
        ui.label("No mesh recipe yet.");
        if ui.button("Make one from the survey").clicked() {
            if let Some(raw) = app.doc.as_ref().and_then(|d| d.views.gravity_raw.clone()) {
                let (x0, x1) = raw
                    .x
                    .iter()
                    .fold((f64::INFINITY, f64::NEG_INFINITY), |a, v| {
                        (a.0.min(*v), a.1.max(*v))
                    });
                let (y0, y1) = raw
                    .y
                    .iter()
                    .fold((f64::INFINITY, f64::NEG_INFINITY), |a, v| {
                        (a.0.min(*v), a.1.max(*v))
                    });
                let top = raw
                    .column("height_m")
                    .map(|h| h.iter().cloned().fold(f64::NEG_INFINITY, f64::max))
                    .unwrap_or(0.0);
                p.mesh = Some(
                    fieldstone_core::mesh::recipe::default_recipe([x0, x1], [y0, y1], 25.0, top).0,
                );
            }
        }
        return;
    };
    num(ui, "Core cell east-west", &mut r.cell_xy_m[0], 0.5, "m");
    num(ui, "Core cell north-south", &mut r.cell_xy_m[1], 0.5, "m");
    num(ui, "Top layer thickness", &mut r.cell_z_m, 0.5, "m");
    num(ui, "Layer growth factor", &mut r.z_growth, 0.01, "");
    num(ui, "Depth of the core", &mut r.depth_m, 10.0, "m");
    num(ui, "Top of the mesh", &mut r.top_m, 1.0, "m");
    let mut uniform = matches!(r.padding, Padding::Uniform { .. });
    ui.checkbox(
        &mut uniform,
        "Uniform padding (keeps the FFT operator available)",
    );
    r.padding = match (uniform, r.padding) {
        (true, Padding::Uniform { cells }) => Padding::Uniform { cells },
        (true, Padding::Expanding { cells, .. }) => Padding::Uniform { cells },
        (false, Padding::Expanding { cells, factor }) => Padding::Expanding { cells, factor },
        (false, Padding::Uniform { cells }) => Padding::Expanding { cells, factor: 1.4 },
    };
    match &mut r.padding {
        Padding::Expanding { cells, factor } => {
            ui.add(egui::Slider::new(cells, 0..=20).text("padding cells"));
            num(ui, "padding growth", factor, 0.01, "");
        }
        Padding::Uniform { cells } => {
            ui.add(egui::Slider::new(cells, 0..=40).text("padding cells"));
        }
    }
    match r.shape() {
        Ok([a, b, c]) => {
            let n_data = app
                .doc
                .as_ref()
                .and_then(|d| d.views.data_counts.get("gravity").copied())
                .unwrap_or(0);
            let active_guess = app
                .doc
                .as_ref()
                .and_then(|d| d.views.model.as_ref())
                .map(|m| m.active.count() as f64 / m.mesh.n_cells().max(1) as f64)
                .unwrap_or(1.0);
            let n = a * b * c;
            let e = estimate(
                n,
                (n as f64 * active_guess) as usize,
                n_data,
                Some(fieldstone_core::memory::available_or_assumed()),
            );
            ui.label(format!(
                "{a} × {b} × {c} = {n} cells (about {} active)",
                e.active_cells
            ));
            ui.label(format!(
                "dense sensitivity for {} data: {:.0} MB{}",
                n_data,
                e.dense_bytes as f64 / 1e6,
                e.available_bytes
                    .map(|b| format!(" of {:.1} GB available", b as f64 / 1e9))
                    .unwrap_or_default()
            ));
            ui.label(
                RichText::new(format!(
                    "time per CG iteration about {:.0} ms (two products at about 10 GB/s)",
                    2.0 * e.dense_bytes as f64 / 1e7
                ))
                .small()
                .weak(),
            );
            if !e.fits {
                warn(
                    ui,
                    format!("does not fit in memory: {}", e.advice.join("; ")),
                );
            }
        }
        Err(err) => warn(ui, err.to_string()),
    }
}

fn layer_editor(ui: &mut Ui, l: &mut Layer, surfaces: &[String], wireframes: &[String]) {
    ui.horizontal(|ui| {
        ui.label("Name");
        ui.text_edit_singleline(&mut l.name);
    });
    let kinds = [
        "whole volume",
        "above a surface",
        "below a surface",
        "polygon",
        "box",
        "wireframe",
        "drill holes",
    ];
    let mut k = match &l.region {
        Region::Whole => 0,
        Region::AboveSurface { .. } => 1,
        Region::BelowSurface { .. } => 2,
        Region::Polygon { .. } => 3,
        Region::Box { .. } => 4,
        Region::Wireframe { .. } => 5,
        Region::DrillHoles { .. } => 6,
        _ => 0,
    };
    let before = k;
    egui::ComboBox::from_label("region")
        .selected_text(kinds[k])
        .show_ui(ui, |ui| {
            for (i, n) in kinds.iter().enumerate() {
                ui.selectable_value(&mut k, i, *n);
            }
        });
    let first = |v: &[String]| v.first().cloned().unwrap_or_default();
    if k != before {
        l.region = match k {
            0 => Region::Whole,
            1 => Region::AboveSurface {
                surface: first(surfaces),
            },
            2 => Region::BelowSurface {
                surface: first(surfaces),
            },
            3 => Region::Polygon {
                vertices: vec![],
                top: Level::Elevation { z_m: 400.0 },
                bottom: Level::Elevation { z_m: 0.0 },
            },
            4 => Region::Box {
                x: [0.0, 100.0],
                y: [0.0, 100.0],
                z: [0.0, 100.0],
            },
            5 => Region::Wireframe {
                name: first(wireframes),
            },
            _ => Region::DrillHoles {
                radius_m: 40.0,
                decay: true,
            },
        };
    }
    match &mut l.region {
        Region::AboveSurface { surface } | Region::BelowSurface { surface } => {
            egui::ComboBox::from_label("surface")
                .selected_text(surface.clone())
                .show_ui(ui, |ui| {
                    for s in surfaces {
                        ui.selectable_value(surface, s.clone(), s);
                    }
                });
        }
        Region::Polygon {
            vertices,
            top,
            bottom,
        } => {
            ui.label(format!("{} vertices (draw on the map)", vertices.len()));
            for (lv, name) in [(top, "top"), (bottom, "bottom")] {
                if let Level::Elevation { z_m } = lv {
                    num(ui, &format!("{name} elevation"), z_m, 1.0, "m");
                }
            }
        }
        Region::Box { x, y, z } => {
            for (v, n) in [(x, "east"), (y, "north"), (z, "elevation")] {
                ui.horizontal(|ui| {
                    ui.label(n);
                    ui.add(egui::DragValue::new(&mut v[0]).speed(5.0));
                    ui.label("to");
                    ui.add(egui::DragValue::new(&mut v[1]).speed(5.0));
                });
            }
        }
        Region::Wireframe { name } => {
            egui::ComboBox::from_label("wireframe")
                .selected_text(name.clone())
                .show_ui(ui, |ui| {
                    for s in wireframes {
                        ui.selectable_value(name, s.clone(), s);
                    }
                });
        }
        Region::DrillHoles { radius_m, decay } => {
            num(ui, "radius", radius_m, 1.0, "m");
            ui.checkbox(decay, "weight falls to 0 at the radius");
        }
        _ => {}
    }
    let a: &mut Assignments = &mut l.assign;
    ui.label(RichText::new("Assignments").strong());
    opt_num(ui, "Lower bound", &mut a.lower, 0.0, "");
    opt_num(ui, "Upper bound", &mut a.upper, 0.3, "");
    if let (Some(lo), Some(hi)) = (a.lower, a.upper) {
        if lo > hi {
            warn(ui, "the lower bound is above the upper bound");
        }
    }
    opt_num(ui, "Reference value", &mut a.reference, 0.0, "");
    opt_num(ui, "Reference weight", &mut a.reference_weight, 1.0, "");
    opt_num(ui, "Starting value", &mut a.starting, 0.0, "");
    ui.checkbox(&mut a.fixed, "Fixed at the starting value");
    let mut has_s = a.smoothness.is_some();
    if ui
        .checkbox(
            &mut has_s,
            "Smoothness factors (east-west, north-south, vertical)",
        )
        .changed()
    {
        a.smoothness = has_s.then_some([1.0, 1.0, 1.0]);
    }
    if let Some(s) = a.smoothness.as_mut() {
        ui.horizontal(|ui| {
            for v in s.iter_mut() {
                ui.add(egui::DragValue::new(v).speed(0.05).range(0.0..=100.0));
            }
        });
    }
    let mut contact = a.sharp_contact.is_some();
    if ui
        .checkbox(&mut contact, "Sharp contact at the region boundary")
        .changed()
    {
        a.sharp_contact = contact.then_some(Contact {
            factor: 0.05,
            along: ContactAlong::RegionBoundary,
        });
    }
    if let Some(c) = a.sharp_contact.as_mut() {
        num(ui, "smoothness across it ×", &mut c.factor, 0.01, "");
    }
}

fn constraints(app: &mut FieldstoneApp, ui: &mut Ui, p: &mut ProjectFile) {
    scenario_picker(app, ui, p);
    let surfaces: Vec<String> = p.surfaces.iter().map(|s| s.name.clone()).collect();
    let wireframes: Vec<String> = p.wireframes.iter().map(|s| s.name.clone()).collect();
    let Some(s) = p.scenarios.get_mut(app.scenario) else {
        return;
    };
    ui.label(RichText::new("Layers (later layers override earlier ones)").strong());
    let mut action: Option<(usize, &str)> = None;
    for (i, l) in s.layers.iter_mut().enumerate() {
        ui.horizontal(|ui| {
            ui.checkbox(&mut l.enabled, "");
            if ui
                .selectable_label(app.forms.selected_layer == i, &l.name)
                .clicked()
            {
                app.forms.selected_layer = i;
            }
            if ui.small_button("↑").on_hover_text("move up").clicked() {
                action = Some((i, "up"));
            }
            if ui.small_button("↓").on_hover_text("move down").clicked() {
                action = Some((i, "down"));
            }
            if ui.small_button("copy").on_hover_text("duplicate").clicked() {
                action = Some((i, "dup"));
            }
            if ui.small_button("delete").on_hover_text("delete").clicked() {
                action = Some((i, "del"));
            }
        });
    }
    if let Some((i, a)) = action {
        match a {
            "up" if i > 0 => s.layers.swap(i, i - 1),
            "down" if i + 1 < s.layers.len() => s.layers.swap(i, i + 1),
            "dup" => {
                let mut c = s.layers[i].clone();
                c.name.push_str(" (copy)");
                s.layers.insert(i + 1, c);
            }
            "del" => {
                s.layers.remove(i);
            }
            _ => {}
        }
    }
    ui.horizontal(|ui| {
        if ui.button("Add layer").clicked() {
            s.layers.push(Layer {
                name: format!("layer {}", s.layers.len() + 1),
                enabled: true,
                region: Region::Whole,
                assign: Assignments::default(),
            });
            app.forms.selected_layer = s.layers.len() - 1;
        }
        let drawing = app.forms.drawing.is_some();
        if ui
            .button(if drawing {
                "Stop drawing"
            } else {
                "Draw polygon on the map"
            })
            .clicked()
        {
            app.forms.drawing = if drawing { None } else { Some(vec![]) };
        }
    });
    if let Some(v) = app.forms.drawing.as_mut() {
        ui.label(
            RichText::new(format!(
                "click vertices on the map, double-click to close ({} so far)",
                v.len()
            ))
            .small(),
        );
        if v.len() >= 3 && ui.button("Close polygon").clicked() {
            let f = v[0];
            v.push(f);
        }
    }
    // A closed polygon becomes a new layer.
    if let Some(v) = app.forms.closed_polygon() {
        let top = p_top(app);
        s.layers.push(Layer {
            name: format!("polygon {}", s.layers.len() + 1),
            enabled: true,
            region: Region::Polygon {
                vertices: v,
                top: Level::Elevation { z_m: top },
                bottom: Level::Elevation { z_m: top - 300.0 },
            },
            assign: Assignments {
                upper: Some(0.0),
                ..Default::default()
            },
        });
        app.forms.selected_layer = s.layers.len() - 1;
    }
    ui.separator();
    if let Some(l) = s.layers.get_mut(app.forms.selected_layer) {
        layer_editor(ui, l, &surfaces, &wireframes);
    }
    ui.separator();
    // The arrays of the scenario as committed (this frame's edit shows from
    // the next frame), built once per change and shared with the view.
    let committed = app
        .doc
        .as_ref()
        .and_then(|d| Some((d, d.project.scenarios.get(app.scenario)?)))
        .and_then(|(d, sc)| d.constraint_arrays(sc));
    if let Some(arrays) = committed {
        match arrays.as_ref() {
            Ok((c, warnings)) => {
                let fixed = c
                    .fixed
                    .iter()
                    .zip(&c.active)
                    .filter(|(f, a)| **f && **a)
                    .count();
                let bounded = c
                    .lower
                    .iter()
                    .zip(&c.upper)
                    .zip(&c.active)
                    .filter(|((l, u), a)| **a && (l.is_finite() || u.is_finite()))
                    .count();
                ui.label(format!("{bounded} active cells bounded, {fixed} fixed"));
                for w in warnings {
                    warn(ui, w.clone());
                }
            }
            Err(e) => warn(ui, e.clone()),
        }
    }
    egui::ComboBox::from_label("preview array")
        .selected_text(app.views.constraint_array.clone())
        .show_ui(ui, |ui| {
            for a in [
                "lower_bound",
                "upper_bound",
                "reference",
                "reference_weight",
                "starting",
                "fixed",
                "smoothness_x",
                "smoothness_y",
                "smoothness_z",
                "reference_gradient_x",
                "reference_gradient_y",
                "reference_gradient_z",
            ] {
                ui.selectable_value(&mut app.views.constraint_array, a.to_string(), a);
            }
        });
}

fn p_top(app: &FieldstoneApp) -> f64 {
    app.doc
        .as_ref()
        .and_then(|d| d.project.mesh.as_ref())
        .map(|m| m.top_m)
        .unwrap_or(0.0)
}

impl FormState {
    /// The polygon drawn, once closed (taken).
    fn closed_polygon(&mut self) -> Option<Vec<[f64; 2]>> {
        if self
            .drawing
            .as_ref()
            .is_some_and(|v| v.len() >= 3 && v.last() == v.first())
        {
            let mut v = self.drawing.take()?;
            v.pop();
            return Some(v);
        }
        None
    }
}

fn scenario_picker(app: &mut FieldstoneApp, ui: &mut Ui, p: &mut ProjectFile) {
    ui.horizontal(|ui| {
        egui::ComboBox::from_label("scenario")
            .selected_text(
                p.scenarios
                    .get(app.scenario)
                    .map(|s| s.name.clone())
                    .unwrap_or_else(|| "none".into()),
            )
            .show_ui(ui, |ui| {
                for (i, s) in p.scenarios.iter().enumerate() {
                    ui.selectable_value(&mut app.scenario, i, &s.name);
                }
            });
    });
    ui.horizontal(|ui| {
        ui.add(
            egui::TextEdit::singleline(&mut app.forms.new_scenario_name)
                .desired_width(120.0)
                .hint_text("name"),
        );
        let name = app.forms.new_scenario_name.trim().to_string();
        let taken = p.scenarios.iter().any(|s| s.name == name);
        ui.add_enabled_ui(!name.is_empty() && !taken, |ui| {
            if ui.button("New").clicked() {
                p.scenarios.push(Scenario {
                    name: name.clone(),
                    data: DataKind::Gravity,
                    operator: Default::default(),
                    layers: vec![],
                    settings: InversionSettings::default(),
                    fft_heights: Default::default(),
                    appraisal: None,
                });
                app.scenario = p.scenarios.len() - 1;
            }
            if ui.button("Copy").clicked() {
                if let Some(s) = p.scenarios.get(app.scenario).cloned() {
                    p.scenarios.push(Scenario {
                        name: name.clone(),
                        ..s
                    });
                    app.scenario = p.scenarios.len() - 1;
                }
            }
            if ui.button("Rename").clicked() {
                if let Some(s) = p.scenarios.get_mut(app.scenario) {
                    s.name = name.clone();
                }
            }
        });
        if taken {
            warn(ui, "that name is taken");
        }
    });
}

fn runs(
    app: &mut FieldstoneApp,
    ui: &mut Ui,
    p: &mut ProjectFile,
    run: &mut Option<(Selection, bool)>,
) {
    scenario_picker(app, ui, p);
    let Some(s) = p.scenarios.get_mut(app.scenario) else {
        return;
    };
    // The run buttons first: the settings below can be long.
    let name = s.name.clone();
    let running = app.job.as_ref().is_some_and(|j| j.running());
    ui.horizontal(|ui| {
        if ui.add_enabled(!running, egui::Button::new("Run")).clicked() {
            *run = Some((Selection::Named(name.clone()), false));
        }
        if ui
            .add_enabled(!running, egui::Button::new("Rerun from scratch"))
            .clicked()
        {
            *run = Some((Selection::Named(name.clone()), true));
        }
        if ui
            .add_enabled(running, egui::Button::new("Cancel"))
            .clicked()
        {
            if let Some(j) = &app.job {
                j.cancel();
            }
        }
    });
    ui.separator();
    ui.horizontal(|ui| {
        ui.radio_value(&mut s.data, DataKind::Gravity, "gravity → density");
        ui.radio_value(
            &mut s.data,
            DataKind::Magnetic,
            "magnetics → susceptibility",
        );
    });
    let st = &mut s.settings;
    ui.label(
        format!(
            "operator: {:?} (dense when it fits in memory, otherwise FFT on uniform meshes)",
            s.operator
        )
        .to_lowercase(),
    );
    num(ui, "Target chi-factor", &mut st.chi_factor, 0.01, "");
    num(ui, "Smallness α_s", &mut st.alpha_s, 1e-5, "");
    num(ui, "Smoothness α_x", &mut st.alpha_x, 0.05, "");
    num(ui, "Smoothness α_y", &mut st.alpha_y, 0.05, "");
    num(ui, "Smoothness α_z", &mut st.alpha_z, 0.05, "");
    let mut w = match st.weighting {
        Weighting::Depth { .. } => 0,
        Weighting::Sensitivity => 1,
        Weighting::None => 2,
    };
    ui.horizontal(|ui| {
        ui.radio_value(&mut w, 0, "depth weighting");
        ui.radio_value(&mut w, 1, "sensitivity weighting");
        ui.radio_value(&mut w, 2, "none");
    });
    st.weighting = match (w, st.weighting) {
        (0, Weighting::Depth { exponent_q }) => Weighting::Depth { exponent_q },
        (0, _) => Weighting::Depth {
            exponent_q: if s.data == DataKind::Magnetic {
                3.0
            } else {
                2.0
            },
        },
        (1, _) => Weighting::Sensitivity,
        _ => Weighting::None,
    };
    ui.label("Focusing norms p (0 compact … 2 smooth): smallness, x, y, z");
    ui.horizontal(|ui| {
        for v in st.norms.iter_mut() {
            ui.add(egui::DragValue::new(v).speed(0.05).range(0.0..=2.0));
        }
    });
    ui.add(egui::Slider::new(&mut st.max_beta_iterations, 1..=60).text("β iterations at most"));
    ui.add(egui::Slider::new(&mut st.max_cg, 5..=400).text("CG iterations per step"));
    if st.chi_factor <= 0.0 || st.alpha_s < 0.0 {
        warn(ui, "the target and weights must be positive");
    }
    // The middle third of the core, top half of its depth: the first box of
    // a new feature test.
    let default_box = app
        .doc
        .as_ref()
        .and_then(|d| d.views.model.as_ref())
        .map(|m| {
            let mesh = &m.mesh;
            let third = |nodes: &[f64], (a, b): (usize, usize)| {
                let (lo, hi) = (nodes[a], nodes[b]);
                [lo + (hi - lo) / 3.0, lo + 2.0 * (hi - lo) / 3.0]
            };
            let (za, zb) = mesh.core[2];
            let (zlo, ztop) = (mesh.z[za], mesh.z[zb]);
            [
                third(&mesh.x, mesh.core[0]),
                third(&mesh.y, mesh.core[1]),
                [ztop - 0.5 * (ztop - zlo), ztop],
            ]
        });
    super::appraise_form::show(ui, s, default_box);
}

fn results(app: &mut FieldstoneApp, ui: &mut Ui) {
    let Some(doc) = app.doc.as_ref() else { return };
    ui.label(
        RichText::new(crate::commands::CAUTIONS)
            .small()
            .color(Color32::from_rgb(120, 70, 0)),
    );
    ui.separator();
    let names: Vec<String> = doc
        .project
        .scenarios
        .iter()
        .map(|s| s.name.clone())
        .collect();
    egui::Grid::new("runs").striped(true).show(ui, |ui| {
        ui.strong("scenario");
        ui.strong("chi");
        ui.strong("iterations");
        ui.strong("vs truth (invented)");
        ui.end_row();
        for (i, n) in names.iter().enumerate() {
            if ui.selectable_label(app.scenario == i, n).clicked() {
                app.scenario = i;
            }
            match doc.views.runs.get(n) {
                Some(r) => {
                    ui.label(format!("{:.3}", r.file.summary.chi_factor));
                    ui.label(format!("{}", r.file.summary.iterations));
                    ui.label(
                        r.file
                            .truth_comparison
                            .as_ref()
                            .map(|t| format!("RMS {:.3}", t.rms_difference_core))
                            .unwrap_or_default(),
                    );
                }
                None => {
                    ui.label("not run");
                    ui.label("");
                    ui.label("");
                }
            }
            ui.end_row();
        }
    });
    ui.separator();
    ui.label("View");
    for (v, label) in [
        (0, "Plan slice"),
        (1, "Section east-west"),
        (2, "Section north-south"),
        (3, "Data fit"),
        (4, "Difference from another run"),
        (5, "Depth of investigation"),
    ] {
        ui.radio_value(&mut app.views.result_view, v, label);
    }
    if let Some(a) = doc
        .views
        .runs
        .get(&names.get(app.scenario).cloned().unwrap_or_default())
        .and_then(|r| r.appraisal.as_ref())
    {
        if !a.feature_tests.is_empty() {
            ui.separator();
            ui.label("Is this feature required?");
            for t in &a.feature_tests {
                ui.label(RichText::new(format!("{}: {}", t.name, t.report.verdict)).strong());
                ui.label(RichText::new(&t.report.explanation).small());
            }
        }
    }
    if app.views.result_view == 4 {
        egui::ComboBox::from_label("minus")
            .selected_text(app.views.compare_with.clone())
            .show_ui(ui, |ui| {
                for n in &names {
                    ui.selectable_value(&mut app.views.compare_with, n.clone(), n);
                }
            });
    }
    ui.checkbox(&mut app.views.equalise, "Histogram equalisation");
    ui.separator();
    ui.label("Export");
    ui.horizontal(|ui| {
        if ui.button("Export section PNG").clicked() {
            app.forms.export_message = Some(super::views::export_section(app, "png"));
        }
        if ui.button("Export section SVG").clicked() {
            app.forms.export_message = Some(super::views::export_section(app, "svg"));
        }
    });
    if ui.button("Export plan slice GeoTIFF").clicked() {
        app.forms.export_message = Some(super::views::export_slice(app));
    }
    if let Some(m) = &app.forms.export_message {
        ui.label(RichText::new(m).small());
    }
}
