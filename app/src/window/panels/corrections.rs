//! The Corrections step: the reduction settings of the gravity and
//! magnetic surveys. Its views are the survey's map and profile with the
//! reduced anomalies (see [`super::survey`]).

use super::widgets::{num, opt_num, warn};
use egui::{RichText, Ui};
use fieldstone_core::project::file::{GivenAnomaly, ProjectFile};
use std::path::Path;

/// The Corrections step keeps no choices of its own.
#[derive(Default)]
pub struct CorrectionsPanel;

/// A table the project names (relative to its folder), typed or chosen; a
/// file chosen outside the project is copied into its `inputs/` folder
/// (a small table, copied at the click).
fn table_field(ui: &mut Ui, dir: &Path, label: &str, v: &mut Option<String>) {
    ui.horizontal(|ui| {
        ui.label(label);
        let mut t = v.clone().unwrap_or_default();
        ui.add(
            egui::TextEdit::singleline(&mut t)
                .desired_width(150.0)
                .hint_text("none"),
        );
        *v = (!t.trim().is_empty()).then(|| t.trim().to_string());
        if ui.small_button("Browse…").clicked() {
            if let Some(f) = rfd::FileDialog::new()
                .add_filter("tables", &["csv", "txt"])
                .pick_file()
            {
                match project_table(dir, &f) {
                    Ok(rel) => *v = Some(rel),
                    Err(e) => *v = Some(format!("(not copied: {e})")),
                }
            }
        }
    });
}

/// The project-relative path of table `f`, copied into `inputs/` when it
/// lies outside the project.
fn project_table(dir: &Path, f: &Path) -> Result<String, String> {
    let canon = |p: &Path| p.canonicalize().unwrap_or_else(|_| p.to_path_buf());
    if let Ok(rel) = canon(f).strip_prefix(canon(dir)) {
        return Ok(rel.to_string_lossy().replace('\\', "/"));
    }
    let name = f
        .file_name()
        .map(|n| n.to_string_lossy().to_string())
        .ok_or("the file has no name")?;
    let rel = format!("inputs/{name}");
    std::fs::create_dir_all(dir.join("inputs")).map_err(|e| e.to_string())?;
    std::fs::copy(f, dir.join(&rel)).map_err(|e| e.to_string())?;
    Ok(rel)
}

/// The choice of a survey delivered already reduced: the column of its
/// anomalies and, for gravity, the density the supplier reduced with.
/// Returns true when the anomalies are given.
fn given_form(
    ui: &mut Ui,
    what: &str,
    given: &mut Option<GivenAnomaly>,
    density: Option<&mut f64>,
) -> bool {
    let mut on = given.is_some();
    if ui
        .checkbox(&mut on, format!("The {what} survey holds anomalies already reduced"))
        .on_hover_text("A contractor's or an agency's table: the reductions are not done again and show as given")
        .changed()
    {
        *given = on.then(|| GivenAnomaly {
            column: String::new(),
            reduction_density_g_cc: None,
            note: String::new(),
            height_above_ground_m: None,
        });
    }
    let Some(g) = given.as_mut() else {
        return false;
    };
    ui.horizontal(|ui| {
        ui.label("Anomaly column");
        ui.add(
            egui::TextEdit::singleline(&mut g.column)
                .desired_width(150.0)
                .hint_text("header, as in the file"),
        );
    });
    if g.column.trim().is_empty() {
        warn(ui, "name the column that holds the anomalies");
    }
    if let Some(d) = density {
        let mut rho = g.reduction_density_g_cc.unwrap_or(*d);
        num(ui, "Supplier's reduction density", &mut rho, 0.01, "g/cm³");
        g.reduction_density_g_cc = Some(rho);
        // Density models are contrasts relative to the reduction density.
        *d = rho;
    }
    let mut above = g.height_above_ground_m.unwrap_or(0.0);
    num(
        ui,
        "Height above the terrain (a delivered grid)",
        &mut above,
        1.0,
        "m",
    );
    g.height_above_ground_m = (above != 0.0).then_some(above);
    ui.horizontal(|ui| {
        ui.label("What was done");
        ui.add(
            egui::TextEdit::singleline(&mut g.note)
                .desired_width(200.0)
                .hint_text("e.g. complete Bouguer, terrain to 22 km"),
        );
    });
    true
}

impl CorrectionsPanel {
    pub fn form(&mut self, ui: &mut Ui, dir: &Path, p: &mut ProjectFile) {
        let mut s = p.gravity_reduction.unwrap_or_default();
        ui.label(RichText::new("Gravity").strong());
        if let Some(g) = p.gravity.as_mut() {
            if given_form(ui, "gravity", &mut g.given, Some(&mut s.density_g_cc)) {
                p.background_density_g_cc = s.density_g_cc;
                p.gravity_reduction = Some(s);
                ui.label("Reductions: given by the supplier.");
                if let Some(m) = p.magnetic.as_mut() {
                    ui.separator();
                    ui.label(RichText::new("Magnetics").strong());
                    given_form(ui, "magnetic", &mut m.given, None);
                }
                return;
            }
        }
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
            ui.horizontal(|ui| {
                ui.label("Date of times of day");
                let mut d = g.date.clone().unwrap_or_default();
                ui.add(
                    egui::TextEdit::singleline(&mut d)
                        .desired_width(90.0)
                        .hint_text("YYYY-MM-DD"),
                );
                g.date = (!d.trim().is_empty()).then(|| d.trim().to_string());
            });
            if let Some(d) = &g.date {
                if fieldstone_core::geodesy::igrf::decimal_year_of_date(d).is_err() {
                    warn(ui, "the date is YYYY-MM-DD");
                }
            }
            table_field(ui, dir, "Base stations table", &mut g.bases);
            table_field(ui, dir, "Meter calibration table", &mut g.meter_table);
            if g.meter_table.is_some() {
                ui.label(
                    RichText::new("the readings are in counter units")
                        .small()
                        .weak(),
                );
            }
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
            if given_form(ui, "magnetic", &mut m.given, None) {
                if p.inducing_field.is_none() {
                    warn(
                        ui,
                        "given total-field anomalies need the project's inducing field",
                    );
                }
                return;
            }
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
}
