//! The Survey step's import: one or more files of a survey, read by core's
//! importer (the same guesses and overrides as the command line), the
//! roles and units the user changes recorded in the project, the files
//! copied into the project's `inputs/` folder by a background job that
//! also reads every file through to the end, so a bad value is found before
//! the survey becomes the project's.

use super::widgets::warn;
use super::Workspace;
use crate::pipeline::reduction::survey_files::{read_survey_files, ReadOptions};
use egui::{RichText, Ui};
use fieldstone_core::project::file::{
    FurtherSurvey, GravityInput, ImportStep, MagneticInput, ProjectFile,
};
use fieldstone_core::survey::columns::{time_format_hint, ColumnSpec, Role};
use fieldstone_core::survey::import::ImportSpec;
use fieldstone_core::table::file::sniff_file;
use fieldstone_core::table::gdf::definition_beside;
use fieldstone_core::table::TextOptions;
use std::path::{Path, PathBuf};

/// Which survey the files become.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum SurveyKind {
    Gravity,
    Magnetic,
    /// A further survey beside the project's first of its kind.
    FurtherGravity,
    FurtherMagnetic,
}

impl SurveyKind {
    fn label(self) -> &'static str {
        match self {
            SurveyKind::Gravity => "gravity",
            SurveyKind::Magnetic => "magnetic",
            SurveyKind::FurtherGravity => "further gravity",
            SurveyKind::FurtherMagnetic => "further magnetic",
        }
    }
}

type Pairs = Vec<(String, String)>;

/// A gravity survey of the imported files with the usual settings, the
/// user's role and unit overrides, and the tide on when times allow it.
fn gravity_of(rels: &[String], columns: Pairs, units: Pairs, tide: bool) -> GravityInput {
    let mut g = GravityInput::of_file(&rels[0]);
    g.more_files = rels[1..].to_vec();
    g.columns = columns;
    g.units = units;
    g.tide = tide;
    g
}

/// A magnetic survey of the imported files: thinned to 25 m, uncertainty
/// 1 nT + 2 % (common practice for ground and low-level surveys).
fn magnetic_of(
    rels: &[String],
    base_file: Option<String>,
    date: String,
    columns: Pairs,
    units: Pairs,
) -> MagneticInput {
    MagneticInput {
        file: rels[0].clone(),
        base_file,
        date,
        thin_to_m: 25.0,
        uncertainty_floor_nt: 1.0,
        uncertainty_percent: 2.0,
        given: None,
        more_files: rels[1..].to_vec(),
        columns,
        units,
    }
}

/// A name for a further survey: its first file's name, made unique among
/// `taken`.
fn further_name(first: &str, taken: &[&str]) -> String {
    let stem = Path::new(first)
        .file_stem()
        .map(|s| s.to_string_lossy().to_string())
        .unwrap_or_else(|| "survey".into());
    let mut name = stem.clone();
    let mut k = 2;
    while taken.contains(&name.as_str()) {
        name = format!("{stem} {k}");
        k += 1;
    }
    name
}

/// The first file's columns as the importer reads them, with the roles and
/// units the user chose, and a few sample rows.
#[derive(Debug, Clone, PartialEq)]
pub struct Preview {
    pub spec: ImportSpec,
    /// The guesses, to record only what the user changed.
    pub guessed: Vec<ColumnSpec>,
    pub rows: Vec<Vec<String>>,
}

impl Preview {
    /// The roles of the columns, in file order.
    pub fn roles(&self) -> Vec<Role> {
        self.spec.columns.iter().map(|c| c.role).collect()
    }

    /// The overrides to record, with the projected reference `epsg`:
    /// (role key, header) for every column whose role differs from the
    /// guess, (header, unit) for every unit that does.
    pub fn overrides(&self, epsg: Option<u32>) -> ReadOptions {
        let mut columns = Vec::new();
        let mut units = Vec::new();
        for (c, g) in self.spec.columns.iter().zip(&self.guessed) {
            if c.role != g.role {
                columns.push((c.role.key().to_string(), c.name.clone()));
            }
            if c.unit != g.unit || (c.role != g.role && c.unit != c.role.units()[0]) {
                units.push((c.name.clone(), c.unit.key().to_string()));
            }
        }
        ReadOptions {
            columns,
            units,
            epsg,
        }
    }
}

/// Reads the layout and guesses of `path` (its first 256 kB).
pub fn preview(path: &Path, epsg: Option<u32>) -> Result<Preview, String> {
    let spec = ImportSpec::guess_for_file(path, &TextOptions::default(), epsg)
        .map_err(|e| e.to_string())?;
    let sn = sniff_file(path, &TextOptions::default()).map_err(|e| e.to_string())?;
    Ok(Preview {
        guessed: spec.columns.clone(),
        spec,
        rows: sn.sample.into_iter().take(3).collect(),
    })
}

/// Where the import job leaves the spec each file was read with.
type SpecSlot = std::sync::Arc<std::sync::Mutex<Vec<ImportSpec>>>;

/// The import form's state.
#[derive(Default)]
pub struct ImportForm {
    /// The files of the survey, in reading order.
    pub files: Vec<String>,
    /// A path typed in, to add.
    pub path: String,
    pub preview: Option<Preview>,
    pub message: Option<String>,
    /// The survey the background job is importing.
    pending: Option<(SurveyKind, Vec<String>, Preview, SpecSlot)>,
}

/// Where a file lies inside the project folder, relative to it, or the
/// name it gets in `inputs/` when it lies outside.
fn project_path(dir: &Path, file: &Path) -> (String, bool) {
    let canon = |p: &Path| p.canonicalize().unwrap_or_else(|_| p.to_path_buf());
    let (d, f) = (canon(dir), canon(file));
    if let Ok(rel) = f.strip_prefix(&d) {
        return (rel.to_string_lossy().replace('\\', "/"), false);
    }
    let name = file
        .file_name()
        .map(|n| n.to_string_lossy().to_string())
        .unwrap_or_else(|| "survey.csv".into());
    (format!("inputs/{name}"), true)
}

impl ImportForm {
    /// Adds a file to the survey being imported.
    pub fn add(&mut self, path: String) {
        if !path.trim().is_empty() && !self.files.contains(&path) {
            self.files.push(path);
            self.preview = None;
        }
    }

    /// The form; `p` is the project being edited this frame.
    pub fn ui(&mut self, ws: &mut Workspace, ui: &mut Ui, p: &mut ProjectFile) {
        self.take_finished(ws, p);
        ui.label("Import a survey (one file or several, one a day say)");
        ui.horizontal(|ui| {
            ui.add(
                egui::TextEdit::singleline(&mut self.path)
                    .desired_width(170.0)
                    .hint_text("path to a table"),
            );
            if ui.button("Add").clicked() {
                let p = std::mem::take(&mut self.path);
                self.add(p);
            }
            if ui.button("Browse…").clicked() {
                if let Some(fs) = rfd::FileDialog::new()
                    .add_filter("tables", &["csv", "txt", "xyz", "dat"])
                    .pick_files()
                {
                    for f in fs {
                        self.add(f.display().to_string());
                    }
                }
            }
        });
        let mut remove = None;
        for (k, f) in self.files.iter().enumerate() {
            ui.horizontal(|ui| {
                ui.label(RichText::new(f).small());
                if ui.small_button("remove").clicked() {
                    remove = Some(k);
                }
            });
        }
        if let Some(k) = remove {
            self.files.remove(k);
            self.preview = None;
        }
        if ui
            .add_enabled(!self.files.is_empty(), egui::Button::new("Preview"))
            .clicked()
        {
            match preview(Path::new(&self.files[0]), p.epsg) {
                Ok(pv) => {
                    self.preview = Some(pv);
                    self.message = None;
                }
                Err(e) => self.message = Some(e),
            }
        }
        if let Some(pv) = self.preview.as_mut() {
            columns_grid(ui, pv);
            ui.add_enabled_ui(!ws.busy(), |ui| {
                ui.horizontal(|ui| {
                    for kind in [SurveyKind::Gravity, SurveyKind::Magnetic] {
                        if ui
                            .button(format!("Import as {} survey", kind.label()))
                            .clicked()
                        {
                            self.message = None;
                            self.start(ws, ui.ctx(), kind, p.epsg);
                        }
                    }
                });
                ui.horizontal(|ui| {
                    for kind in [SurveyKind::FurtherGravity, SurveyKind::FurtherMagnetic] {
                        if ui
                            .button(format!("Add as a {} survey", kind.label()))
                            .on_hover_text("Beside the project's first survey of the kind (ground and airborne, another year): reduced and gridded on its own; the regional separation and the inversions use the first")
                            .clicked()
                        {
                            self.message = None;
                            self.start(ws, ui.ctx(), kind, p.epsg);
                        }
                    }
                });
            });
        }
        if let Some(m) = &self.message {
            warn(ui, m.clone());
        }
    }

    /// Starts the background job: every file read through the importer
    /// with the chosen roles, then copied into the project's inputs.
    fn start(
        &mut self,
        ws: &mut Workspace,
        ctx: &egui::Context,
        kind: SurveyKind,
        epsg: Option<u32>,
    ) {
        let (Some(pv), Some(doc)) = (self.preview.clone(), ws.doc.as_ref()) else {
            return;
        };
        let dir = doc.dir.clone();
        let files: Vec<PathBuf> = self.files.iter().map(PathBuf::from).collect();
        let read = pv.overrides(epsg);
        let rels: Vec<(String, bool)> = files.iter().map(|f| project_path(&dir, f)).collect();
        let slot: SpecSlot = Default::default();
        let specs = slot.clone();
        self.pending = Some((kind, rels.iter().map(|r| r.0.clone()).collect(), pv, slot));
        ws.start_task(&format!("import of a {} survey", kind.label()), ctx, move |obs| {
            let read_files = read_survey_files(&files, &read, &[]).map_err(|e| e.to_string())?;
            let rows: usize = read_files.iter().map(|f| f.survey.n_rows()).sum();
            if let Ok(mut v) = specs.lock() {
                *v = read_files.iter().map(|f| f.spec.clone()).collect();
            }
            for (f, w) in read_files.iter().flat_map(|f| f.survey.warnings.iter().map(move |w| (f, w))) {
                obs.warning(&format!("{}: {w}", f.path.display()));
            }
            for (k, (file, (rel, copy))) in files.iter().zip(&rels).enumerate() {
                if obs.cancelled() {
                    return Err("cancelled".into());
                }
                if *copy {
                    let dest = dir.join(rel);
                    if dest.exists() {
                        return Err(format!("{} already exists in the project; rename the file or remove the old one", dest.display()));
                    }
                    if let Some(d) = dest.parent() {
                        std::fs::create_dir_all(d).map_err(|e| format!("{}: {e}", d.display()))?;
                    }
                    std::fs::copy(file, &dest).map_err(|e| format!("copying {} to {}: {e}", file.display(), dest.display()))?;
                    // An ASEG-GDF2 .dat travels with its definition file.
                    if let Some(dfn) = definition_beside(file) {
                        let to = dest.with_extension(dfn.extension().unwrap_or_default());
                        std::fs::copy(&dfn, &to).map_err(|e| format!("copying {} to {}: {e}", dfn.display(), to.display()))?;
                    }
                }
                obs.progress(k + 1, files.len());
            }
            Ok(format!("{rows} readings in {} file(s) read and placed in the project", files.len()))
        });
    }

    /// When the import job has ended: the survey becomes the project's
    /// (on success), with the roles and units the user chose.
    fn take_finished(&mut self, ws: &mut Workspace, p: &mut ProjectFile) {
        if self.pending.is_none() || ws.busy() {
            return;
        }
        let Some((title, result)) = ws.finished.take() else {
            return;
        };
        let Some((kind, rels, pv, slot)) = self.pending.take() else {
            return;
        };
        if !title.starts_with("import of a") {
            ws.finished = Some((title, result));
            self.pending = Some((kind, rels, pv, slot));
            return;
        }
        match result {
            Ok(m) => {
                let ReadOptions { columns, units, .. } = pv.overrides(None);
                let roles = pv.roles();
                let timed = roles.contains(&Role::Time) || roles.contains(&Role::DateTime);
                let elapsed = pv.spec.time_format.elapsed_unit_s().is_some()
                    || roles
                        .iter()
                        .zip(&pv.spec.columns)
                        .any(|(r, c)| *r == Role::Time && time_format_hint(&c.name).is_some());
                match kind {
                    SurveyKind::FurtherGravity => {
                        let taken: Vec<&str> =
                            p.more_gravity.iter().map(|f| f.name.as_str()).collect();
                        let name = further_name(&rels[0], &taken);
                        p.more_gravity.push(FurtherSurvey {
                            name,
                            reduction: None,
                            survey: gravity_of(&rels, columns, units, timed && !elapsed),
                        });
                    }
                    SurveyKind::FurtherMagnetic => {
                        let taken: Vec<&str> =
                            p.more_magnetic.iter().map(|f| f.name.as_str()).collect();
                        let name = further_name(&rels[0], &taken);
                        let date = p
                            .magnetic
                            .as_ref()
                            .map(|m| m.date.clone())
                            .unwrap_or_else(|| "2026-01-01".into());
                        p.more_magnetic.push(FurtherSurvey {
                            name,
                            reduction: None,
                            survey: magnetic_of(&rels, None, date, columns, units),
                        });
                    }
                    SurveyKind::Gravity => {
                        let old = p.gravity.take();
                        let mut g = gravity_of(&rels, columns, units, timed && !elapsed);
                        if let Some(o) = old {
                            g.terrain_outer_m = o.terrain_outer_m;
                            g.bases = o.bases;
                            g.meter_table = o.meter_table;
                            if roles.contains(&Role::Station) {
                                g.base_station = o.base_station;
                                g.base_value_mgal = o.base_value_mgal;
                            }
                        }
                        p.gravity = Some(g);
                    }
                    SurveyKind::Magnetic => {
                        let old = p.magnetic.take();
                        p.magnetic = Some(magnetic_of(
                            &rels,
                            old.as_ref().and_then(|m| m.base_file.clone()),
                            old.as_ref()
                                .map(|m| m.date.clone())
                                .unwrap_or_else(|| "2026-01-01".into()),
                            columns,
                            units,
                        ));
                    }
                }
                // The project records how each file was read.
                let specs = slot
                    .lock()
                    .map(|mut v| std::mem::take(&mut *v))
                    .unwrap_or_default();
                p.imports.retain(|i| !rels.contains(&i.file));
                for (rel, spec) in rels.iter().zip(specs) {
                    p.imports.push(ImportStep {
                        name: format!("{} survey", kind.label()),
                        file: rel.clone(),
                        spec,
                    });
                }
                self.files.clear();
                self.preview = None;
                self.message = Some(match kind {
                    SurveyKind::FurtherGravity | SurveyKind::FurtherMagnetic => {
                        format!("{m}; it is now a {} survey of the project", kind.label())
                    }
                    _ => format!("{m}; it is now the project's {} survey", kind.label()),
                });
                if let Some(d) = ws.doc.as_mut() {
                    // The survey's tables are read again off the frame.
                    d.reload_after_edit();
                }
            }
            Err(e) => self.message = Some(format!("not imported: {}", e.message)),
        }
    }
}

/// The columns of the first file: header, role, unit and sample values.
fn columns_grid(ui: &mut Ui, pv: &mut Preview) {
    ui.label("Each column's role and unit (guessed from the header; change any):");
    let rows = pv.rows.clone();
    egui::Grid::new("roles").striped(true).show(ui, |ui| {
        for (c, col) in pv.spec.columns.iter_mut().enumerate() {
            ui.label(&col.name);
            let before = col.role;
            egui::ComboBox::from_id_salt(("role", c))
                .selected_text(col.role.key())
                .show_ui(ui, |ui| {
                    for r in Role::ALL {
                        ui.selectable_value(&mut col.role, r, r.key())
                            .on_hover_text(r.label());
                    }
                });
            if col.role != before {
                col.unit = col.role.units()[0];
            }
            if col.role.units().len() > 1 {
                egui::ComboBox::from_id_salt(("unit", c))
                    .selected_text(col.unit.label())
                    .show_ui(ui, |ui| {
                        for u in col.role.units() {
                            ui.selectable_value(&mut col.unit, *u, u.label());
                        }
                    });
            } else {
                ui.label(col.unit.label());
            }
            ui.label(
                RichText::new(
                    rows.iter()
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
}
