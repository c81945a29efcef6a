//! `project.json`: every step's parameters as plain data, saved atomically.

use super::provenance::StepRecord;
use crate::constraint::build::Layer;
use crate::filter::regional::RegionalMethod;
use crate::invert::appraise::AppraisalSettings;
use crate::invert::InversionSettings;
use crate::io::atomic::{write_atomically, WriteError};
use crate::mesh::recipe::MeshRecipe;
use crate::physics::magnetic::InducingField;
use crate::reduce::gravity::GravitySettings;
use crate::survey::import::ImportSpec;
use serde::{Deserialize, Serialize};
use std::path::{Path, PathBuf};
use thiserror::Error;

/// The schema this program writes.
pub const SCHEMA_VERSION: u32 = 2;
/// The file name inside a project folder.
pub const PROJECT_FILE: &str = "project.json";

/// One imported file.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct ImportStep {
    pub name: String,
    /// Relative to the project folder.
    pub file: String,
    pub spec: ImportSpec,
}

/// Which data a scenario inverts.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize, Deserialize, Default)]
#[serde(rename_all = "snake_case")]
pub enum DataKind {
    /// Residual gravity at the stations: a density-contrast model, g/cm³.
    #[default]
    Gravity,
    /// Residual total-field anomaly at the (thinned) readings: a
    /// susceptibility model, SI.
    Magnetic,
}

/// Which sensitivity operator a run uses.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize, Deserialize, Default)]
#[serde(rename_all = "snake_case")]
pub enum OperatorChoice {
    /// Dense when the matrix fits in half the available memory, otherwise the
    /// FFT operator when the mesh and data allow it.
    #[default]
    Automatic,
    Dense,
    Fft,
}

/// Where the FFT operator puts the gridded data (the dense operator always
/// uses each datum's own position).
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize, Deserialize, Default)]
#[serde(tag = "kind", rename_all = "snake_case")]
pub enum FftHeights {
    /// Every datum at the elevation of the highest station.
    #[default]
    Level,
    /// Every datum at its own elevation (terrain plus the median station
    /// height above it), the kernels expanded in height to this order (0–6).
    Draped { order: usize },
}

/// A named set of constraint layers and inversion settings on the same data
/// and mesh.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct Scenario {
    pub name: String,
    #[serde(default)]
    pub data: DataKind,
    #[serde(default)]
    pub operator: OperatorChoice,
    pub layers: Vec<Layer>,
    pub settings: InversionSettings,
    #[serde(default)]
    pub fft_heights: FftHeights,
    /// Appraisal reruns after the inversion (none by default).
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub appraisal: Option<AppraisalSettings>,
}

/// The gravity survey of a project and how its readings are reduced.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct GravityInput {
    /// Reading table, relative to the project folder: x, y (project EPSG),
    /// height_m, gravity_mgal, and time, station, line for drift loops.
    pub file: String,
    /// Base station id and its absolute gravity, mGal: the readings are
    /// relative and are reduced for tide and drift in base loops.
    pub base_station: Option<String>,
    pub base_value_mgal: Option<f64>,
    pub max_drift_mgal_per_h: f64,
    pub tide: bool,
    pub gravimetric_factor: f64,
    /// Outer radius of the terrain correction from the project DEM, metres.
    pub terrain_outer_m: Option<f64>,
    /// Data uncertainty: floor (mGal) plus a percentage of each datum.
    pub uncertainty_floor_mgal: f64,
    pub uncertainty_percent: f64,
    /// Readings the user rejected (0-based data rows of the file): left out
    /// of gridding and inversion; the file itself is never changed.
    #[serde(default)]
    pub rejected_rows: Vec<usize>,
    /// More files of the same survey (one a day, say), read with the same
    /// settings after `file`; rejected rows count through them in order.
    #[serde(default, skip_serializing_if = "Vec::is_empty")]
    pub more_files: Vec<String>,
    /// Overrides of the guessed column roles: (role key, header).
    #[serde(default, skip_serializing_if = "Vec::is_empty")]
    pub columns: Vec<(String, String)>,
    /// Overrides of the guessed units: (header, unit).
    #[serde(default, skip_serializing_if = "Vec::is_empty")]
    pub units: Vec<(String, String)>,
    /// Table of base stations (id, absolute gravity in mGal or blank),
    /// adjusted as a network by least squares.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub bases: Option<String>,
    /// The meter's calibration table: the readings are in counter units.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub meter_table: Option<String>,
    /// Date (YYYY-MM-DD) of readings whose times are times of day.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub date: Option<String>,
    /// The files hold anomalies already reduced by whoever delivered them:
    /// the reduction is not done again (its step shows them as given).
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub given: Option<GivenAnomaly>,
}

/// Anomalies delivered already reduced (a contractor's or an agency's
/// table): the column that holds them and how they were reduced, as the
/// user states it. Gravity: a Bouguer (or complete Bouguer) anomaly in
/// mGal with its reduction density; magnetics: a total-field anomaly in nT,
/// whose inducing field is the project's.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct GivenAnomaly {
    /// Header of the anomaly column.
    pub column: String,
    /// Density the supplier reduced with, g/cm³ (gravity only): the
    /// density models are contrasts relative to it.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub reduction_density_g_cc: Option<f64>,
    /// What the supplier says was done (free text kept with the project).
    #[serde(default, skip_serializing_if = "String::is_empty")]
    pub note: String,
    /// For a delivered grid (GeoTIFF or ESRI ASCII): the height of the
    /// anomalies above the terrain model, metres (0 for a ground survey;
    /// the drape height of an airborne one). Table rows carry their own.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub height_above_ground_m: Option<f64>,
}

impl GravityInput {
    /// A survey of `file` with the usual settings: relative readings tied
    /// to no base yet, tide on, flags above 0.05 mGal/h, an uncertainty of
    /// 0.02 mGal (common practice for ground surveys with modern meters).
    pub fn of_file(file: &str) -> GravityInput {
        GravityInput {
            file: file.to_string(),
            base_station: None,
            base_value_mgal: None,
            max_drift_mgal_per_h: 0.05,
            tide: true,
            gravimetric_factor: 1.16,
            terrain_outer_m: None,
            uncertainty_floor_mgal: 0.02,
            uncertainty_percent: 0.0,
            rejected_rows: vec![],
            more_files: vec![],
            columns: vec![],
            units: vec![],
            bases: None,
            meter_table: None,
            date: None,
            given: None,
        }
    }

    /// Every file of the survey, in reading order.
    pub fn files(&self) -> impl Iterator<Item = &String> {
        std::iter::once(&self.file).chain(&self.more_files)
    }
}

/// A further survey of a kind beside the project's first one (ground and
/// airborne gravity; two magnetic surveys of different years), with its own
/// files and settings. It is imported, reduced and gridded on its own
/// (`data/<kind>_<name>_*`); the regional separation and the inversions use
/// the first survey of each kind.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct FurtherSurvey<T> {
    /// A name unique among the further surveys of its kind.
    pub name: String,
    /// Reduction settings of a gravity survey when they differ from the
    /// project's (a survey reduced with another density, say).
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub reduction: Option<GravitySettings>,
    #[serde(flatten)]
    pub survey: T,
}

/// The magnetic survey of a project.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct MagneticInput {
    /// Reading table: x, y, height_m, mag_nt, time.
    pub file: String,
    /// Base-station record: time, mag_nt.
    pub base_file: Option<String>,
    /// Survey date (YYYY-MM-DD) for the main field.
    pub date: String,
    /// Readings are thinned along each line to about this spacing for the
    /// inversion, metres (0 keeps every reading).
    pub thin_to_m: f64,
    pub uncertainty_floor_nt: f64,
    pub uncertainty_percent: f64,
    /// The file holds total-field anomalies already reduced (nT).
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub given: Option<GivenAnomaly>,
    /// More files of the same survey (one a flight, say), read with the
    /// same settings after `file`.
    #[serde(default, skip_serializing_if = "Vec::is_empty")]
    pub more_files: Vec<String>,
    /// Overrides of the guessed column roles: (role key, header).
    #[serde(default, skip_serializing_if = "Vec::is_empty")]
    pub columns: Vec<(String, String)>,
    /// Overrides of the guessed units: (header, unit).
    #[serde(default, skip_serializing_if = "Vec::is_empty")]
    pub units: Vec<(String, String)>,
}

impl MagneticInput {
    /// Every file of the survey, in reading order.
    pub fn files(&self) -> impl Iterator<Item = &String> {
        std::iter::once(&self.file).chain(&self.more_files)
    }
}

/// Drill-hole tables, relative to the project folder.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct HoleInput {
    pub collars: String,
    pub surveys: Option<String>,
    pub intervals: Option<String>,
}

/// A named file (surface grid or wireframe) relative to the project folder.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct NamedFile {
    pub name: String,
    pub file: String,
}

/// Gridding of the reduced data.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct GridSettings {
    pub cell_m: f64,
    pub tension: f64,
}

/// A section line for the exports.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct SectionLine {
    pub name: String,
    pub vertices: Vec<[f64; 2]>,
}

/// What every run exports besides its model and data.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize, Default)]
pub struct ExportSettings {
    #[serde(default)]
    pub sections: Vec<SectionLine>,
    /// Plan slices at these depths below the mesh top, metres.
    #[serde(default)]
    pub slice_depths_m: Vec<f64>,
    /// Also draw every section and slice as PNG and SVG figures.
    #[serde(default)]
    pub figures: bool,
    /// PNG resolution, dots per inch (default 100: a section is 10 inches wide).
    #[serde(default)]
    pub figure_dpi: Option<f64>,
    /// Colour map of model figures by name (viridis, cividis, diverging, grey);
    /// default: diverging for values of both signs, else viridis.
    #[serde(default)]
    pub colour_map: Option<String>,
    /// Drill holes and data within this distance of a section are projected
    /// onto it, metres (default: one core cell).
    #[serde(default)]
    pub hole_distance_m: Option<f64>,
}

#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct ProjectFile {
    pub schema_version: u32,
    pub name: String,
    pub epsg: Option<u32>,
    /// Background density that density contrasts are relative to (the
    /// reduction density), g/cm³.
    pub background_density_g_cc: f64,
    pub inducing_field: Option<InducingField>,
    #[serde(default)]
    pub imports: Vec<ImportStep>,
    #[serde(default)]
    pub gravity: Option<GravityInput>,
    #[serde(default)]
    pub magnetic: Option<MagneticInput>,
    /// Terrain model (GeoTIFF), relative to the project folder.
    #[serde(default)]
    pub dem: Option<String>,
    #[serde(default)]
    pub drill_holes: Option<HoleInput>,
    /// Named surface grids (GeoTIFF) that constraint regions refer to.
    #[serde(default)]
    pub surfaces: Vec<NamedFile>,
    /// Named closed wireframes (OBJ or STL) that constraint regions refer to.
    #[serde(default)]
    pub wireframes: Vec<NamedFile>,
    pub gravity_reduction: Option<GravitySettings>,
    /// Further gravity surveys beside `gravity`.
    #[serde(default, skip_serializing_if = "Vec::is_empty")]
    pub more_gravity: Vec<FurtherSurvey<GravityInput>>,
    /// Further magnetic surveys beside `magnetic`.
    #[serde(default, skip_serializing_if = "Vec::is_empty")]
    pub more_magnetic: Vec<FurtherSurvey<MagneticInput>>,
    #[serde(default)]
    pub gridding: Option<GridSettings>,
    pub regional: Option<RegionalMethod>,
    /// Regional of the magnetic data (none: the residual is the anomaly).
    #[serde(default)]
    pub magnetic_regional: Option<RegionalMethod>,
    pub mesh: Option<MeshRecipe>,
    #[serde(default)]
    pub scenarios: Vec<Scenario>,
    #[serde(default)]
    pub exports: ExportSettings,
    /// The known model of an invented project (the demo), for comparison.
    #[serde(default)]
    pub truth: Option<String>,
    #[serde(default)]
    pub provenance: Vec<StepRecord>,
}

#[derive(Debug, Error)]
pub enum ProjectError {
    #[error("cannot read {file}: {source}")]
    Read {
        file: PathBuf,
        source: std::io::Error,
    },
    #[error("{file}: at {path} (line {line}, column {column}): {message}")]
    Syntax {
        file: PathBuf,
        path: String,
        line: usize,
        column: usize,
        message: String,
    },
    #[error("{file} has no schema_version; it is not a Fieldstone project file")]
    NoVersion { file: PathBuf },
    #[error("{file}: at {field}: {message}")]
    Invalid {
        file: PathBuf,
        field: String,
        message: String,
    },
    #[error(transparent)]
    Write(#[from] WriteError),
}

/// A loaded project and whether it may be saved.
#[derive(Debug, Clone, PartialEq)]
pub struct Loaded {
    pub project: ProjectFile,
    /// Set when the file was written by a newer program: it opens read-only.
    pub read_only_because: Option<String>,
}

impl ProjectFile {
    pub fn new(name: &str) -> ProjectFile {
        ProjectFile {
            schema_version: SCHEMA_VERSION,
            name: name.to_string(),
            epsg: None,
            background_density_g_cc: 2.67,
            inducing_field: None,
            imports: vec![],
            gravity: None,
            magnetic: None,
            dem: None,
            drill_holes: None,
            surfaces: vec![],
            wireframes: vec![],
            gravity_reduction: None,
            more_gravity: Vec::new(),
            more_magnetic: Vec::new(),
            gridding: None,
            regional: None,
            magnetic_regional: None,
            mesh: None,
            scenarios: vec![],
            exports: ExportSettings::default(),
            truth: None,
            provenance: vec![],
        }
    }

    /// Saves `project.json` in `dir` atomically (temporary file, flush, rename).
    pub fn save(&self, dir: &Path) -> Result<(), ProjectError> {
        let path = dir.join(PROJECT_FILE);
        let text = serde_json::to_string_pretty(self).map_err(|e| WriteError {
            path: path.clone(),
            source: std::io::Error::other(e),
        })?;
        write_atomically::<ProjectError>(&path, |w| {
            w.write_all(text.as_bytes()).map_err(|source| {
                WriteError {
                    path: path.clone(),
                    source,
                }
                .into()
            })
        })
    }

    /// Loads `project.json` from `dir`, migrating older schemas; a newer
    /// schema is read as far as this program understands it, read-only.
    pub fn load(dir: &Path) -> Result<Loaded, ProjectError> {
        let path = dir.join(PROJECT_FILE);
        let bytes = std::fs::read(&path).map_err(|source| ProjectError::Read {
            file: path.clone(),
            source,
        })?;
        ProjectFile::parse(&bytes, &path)
    }

    /// Parses the bytes of a project file (see [`ProjectFile::load`]); `path`
    /// is used in messages only.
    pub fn parse(bytes: &[u8], path: &Path) -> Result<Loaded, ProjectError> {
        let path = path.to_path_buf();
        let value: serde_json::Value = serde_json::from_slice(crate::io::text::strip_bom(bytes))
            .map_err(|e| ProjectError::Syntax {
                file: path.clone(),
                path: ".".into(),
                line: e.line(),
                column: e.column(),
                message: e.to_string(),
            })?;
        let version = value
            .get("schema_version")
            .and_then(|v| v.as_u64())
            .ok_or(ProjectError::NoVersion { file: path.clone() })? as u32;
        let read_only_because = (version > SCHEMA_VERSION).then(|| format!("{} was written with schema version {version}, newer than this program's {SCHEMA_VERSION}; it opens read-only so nothing it holds is lost", path.display()));
        // Read the file's own text when nothing was migrated, so positions
        // in messages are the file's lines.
        let text = if version >= SCHEMA_VERSION {
            String::from_utf8_lossy(crate::io::text::strip_bom(bytes)).into_owned()
        } else {
            migrate(value, version).to_string()
        };
        let mut de = serde_json::Deserializer::from_str(&text);
        let project: ProjectFile = serde_path_to_error::deserialize(&mut de).map_err(|e| {
            let p = e.path().to_string();
            let inner = e.into_inner();
            ProjectError::Syntax {
                file: path.clone(),
                path: p,
                line: inner.line(),
                column: inner.column(),
                message: inner.to_string(),
            }
        })?;
        project.validate(&path)?;
        Ok(Loaded {
            project,
            read_only_because,
        })
    }

    /// Every file the project names, with the field that names it
    /// (`gravity.file`, `surfaces[2].file`, …), in a fixed order: survey
    /// imports, gravity, magnetic and its base record, terrain, drill-hole
    /// tables, surfaces, wireframes, the invented truth.
    pub fn named_files(&self) -> Vec<(String, &str)> {
        let mut paths: Vec<(String, &str)> = Vec::new();
        for (k, i) in self.imports.iter().enumerate() {
            paths.push((format!("imports[{k}].file"), &i.file));
        }
        if let Some(g) = &self.gravity {
            paths.push(("gravity.file".into(), &g.file));
            for (k, f) in g.more_files.iter().enumerate() {
                paths.push((format!("gravity.more_files[{k}]"), f));
            }
            if let Some(b) = &g.bases {
                paths.push(("gravity.bases".into(), b));
            }
            if let Some(m) = &g.meter_table {
                paths.push(("gravity.meter_table".into(), m));
            }
        }
        for (k, f) in self.more_gravity.iter().enumerate() {
            let (what, g) = (format!("more_gravity[{k}]"), &f.survey);
            paths.push((format!("{what}.file"), &g.file));
            for (j, m) in g.more_files.iter().enumerate() {
                paths.push((format!("{what}.more_files[{j}]"), m));
            }
            if let Some(b) = &g.bases {
                paths.push((format!("{what}.bases"), b));
            }
            if let Some(m) = &g.meter_table {
                paths.push((format!("{what}.meter_table"), m));
            }
        }
        let magnetic = self
            .magnetic
            .iter()
            .map(|m| ("magnetic".to_string(), m))
            .chain(
                self.more_magnetic
                    .iter()
                    .enumerate()
                    .map(|(k, f)| (format!("more_magnetic[{k}]"), &f.survey)),
            );
        for (what, m) in magnetic {
            paths.push((format!("{what}.file"), &m.file));
            for (k, f) in m.more_files.iter().enumerate() {
                paths.push((format!("{what}.more_files[{k}]"), f));
            }
            if let Some(b) = &m.base_file {
                paths.push((format!("{what}.base_file"), b));
            }
        }
        if let Some(d) = &self.dem {
            paths.push(("dem".into(), d));
        }
        if let Some(h) = &self.drill_holes {
            paths.push(("drill_holes.collars".into(), &h.collars));
            if let Some(s) = &h.surveys {
                paths.push(("drill_holes.surveys".into(), s));
            }
            if let Some(s) = &h.intervals {
                paths.push(("drill_holes.intervals".into(), s));
            }
        }
        for (list, what) in [
            (&self.surfaces, "surfaces"),
            (&self.wireframes, "wireframes"),
        ] {
            for (k, n) in list.iter().enumerate() {
                paths.push((format!("{what}[{k}].file"), &n.file));
            }
        }
        if let Some(t) = &self.truth {
            paths.push(("truth".into(), t));
        }
        paths
    }

    /// The project-relative input files the steps read (every named file
    /// but the import records, which the survey fields repeat): the import
    /// step hashes them, "Save as" copies them.
    pub fn input_files(&self) -> Vec<String> {
        self.named_files()
            .into_iter()
            .filter(|(field, _)| !field.starts_with("imports["))
            .map(|(_, f)| f.to_string())
            .collect()
    }

    /// What the schema cannot say: every file the project names lies inside
    /// its folder, and scenario, surface and wireframe names are unique.
    pub fn validate(&self, file: &Path) -> Result<(), ProjectError> {
        let invalid = |field: String, message: String| ProjectError::Invalid {
            file: file.to_path_buf(),
            field,
            message,
        };
        let paths = self.named_files();
        for (field, rel) in paths {
            crate::project::paths::resolve_inside(Path::new(""), rel)
                .map_err(|e| invalid(field, e.to_string()))?;
        }
        let names = |what: &str, names: Vec<&str>| -> Result<(), ProjectError> {
            for (k, n) in names.iter().enumerate() {
                if let Some(j) = names[..k].iter().position(|m| m == n) {
                    return Err(invalid(
                        format!("{what}[{k}].name"),
                        format!("the name '{n}' is used twice ({what}[{j}] has it too); names must be unique"),
                    ));
                }
            }
            Ok(())
        };
        names(
            "scenarios",
            self.scenarios.iter().map(|s| s.name.as_str()).collect(),
        )?;
        names(
            "surfaces",
            self.surfaces.iter().map(|s| s.name.as_str()).collect(),
        )?;
        names(
            "wireframes",
            self.wireframes.iter().map(|s| s.name.as_str()).collect(),
        )?;
        for (k, sc) in self.scenarios.iter().enumerate() {
            if let FftHeights::Draped { order } = sc.fft_heights {
                if order > 6 {
                    return Err(invalid(
                        format!("scenarios[{k}].fft_heights.order"),
                        format!("the height order must be 0 to 6 (got {order})"),
                    ));
                }
            }
            if let Some(a) = &sc.appraisal {
                names(
                    &format!("scenarios[{k}].appraisal.feature_tests"),
                    a.feature_tests.iter().map(|t| t.name.as_str()).collect(),
                )?;
                if let Some(d) = a.doi_reference_shift {
                    if !(d.is_finite() && d != 0.0) {
                        return Err(invalid(
                            format!("scenarios[{k}].appraisal.doi_reference_shift"),
                            format!("the reference shift must be a non-zero number (got {d})"),
                        ));
                    }
                }
                if let crate::invert::appraise::DoiPattern::Checkerboard { block_m: Some(b) } =
                    a.doi_pattern
                {
                    if !(b.is_finite() && b > 0.0) {
                        return Err(invalid(
                            format!("scenarios[{k}].appraisal.doi_pattern.block_m"),
                            format!("the block side must be a positive length in metres (got {b})"),
                        ));
                    }
                }
                if !(a.doi_cutoff > 0.0 && a.doi_cutoff < 1.0) {
                    return Err(invalid(
                        format!("scenarios[{k}].appraisal.doi_cutoff"),
                        format!(
                            "the cut-off must lie between 0 and 1 (got {})",
                            a.doi_cutoff
                        ),
                    ));
                }
            }
        }
        Ok(())
    }
}

/// Migrations from earlier schemas, each taking the JSON of the version
/// before. Version 1 → 2: the survey inputs, gridding, exports and truth
/// keys were added (absent means none) and scenarios gained `data` and
/// `operator` (gravity, automatic).
fn migrate(mut value: serde_json::Value, from: u32) -> serde_json::Value {
    if from < 2 {
        if let Some(scenarios) = value.get_mut("scenarios").and_then(|s| s.as_array_mut()) {
            for s in scenarios {
                if let Some(o) = s.as_object_mut() {
                    o.entry("data").or_insert("gravity".into());
                    o.entry("operator").or_insert("automatic".into());
                }
            }
        }
        if let Some(o) = value.as_object_mut() {
            o.insert("schema_version".into(), 2.into());
        }
    }
    value
}

#[cfg(test)]
mod tests {
    use super::*;

    fn dir(name: &str) -> PathBuf {
        let d =
            std::env::temp_dir().join(format!("fieldstone-project-{name}-{}", std::process::id()));
        let _ = std::fs::remove_dir_all(&d);
        std::fs::create_dir_all(&d).unwrap();
        d
    }

    #[test]
    fn save_and_load_round_trip_every_step() {
        let d = dir("rt");
        let mut p = ProjectFile::new("Tarn Hollow (invented)");
        p.epsg = Some(32755);
        p.gravity_reduction = Some(GravitySettings::default());
        p.mesh =
            Some(crate::mesh::recipe::default_recipe([0.0, 1000.0], [0.0, 800.0], 25.0, 300.0).0);
        p.scenarios.push(Scenario {
            name: "smooth".into(),
            data: DataKind::Gravity,
            operator: OperatorChoice::Automatic,
            layers: vec![],
            settings: InversionSettings::default(),
            fft_heights: Default::default(),
            appraisal: None,
        });
        p.save(&d).unwrap();
        let l = ProjectFile::load(&d).unwrap();
        assert_eq!(l.project, p);
        assert!(l.read_only_because.is_none());
    }

    #[test]
    fn every_earlier_schema_opens() {
        // A version-1 file as version 1 wrote it (fixture kept in the tree).
        let d = dir("v1");
        std::fs::write(
            d.join(PROJECT_FILE),
            include_str!("../../tests/project_v1.json"),
        )
        .unwrap();
        let l = ProjectFile::load(&d).unwrap();
        assert!(l.read_only_because.is_none());
        assert_eq!(l.project.schema_version, SCHEMA_VERSION);
        assert_eq!(l.project.scenarios.len(), 1);
        assert_eq!(l.project.scenarios[0].data, DataKind::Gravity);
        assert_eq!(l.project.mesh.as_ref().unwrap().cell_xy_m, [25.0, 25.0]);
    }

    #[test]
    fn newer_files_open_read_only_and_broken_files_say_where() {
        let d = dir("newer");
        let mut v = serde_json::to_value(ProjectFile::new("x")).unwrap();
        v["schema_version"] = serde_json::json!(SCHEMA_VERSION + 1);
        std::fs::write(d.join(PROJECT_FILE), v.to_string()).unwrap();
        let l = ProjectFile::load(&d).unwrap();
        assert!(l.read_only_because.unwrap().contains("read-only"));
        std::fs::write(d.join(PROJECT_FILE), "{\"schema_version\": 1, \"name\": 5}").unwrap();
        let e = ProjectFile::load(&d).unwrap_err().to_string();
        assert!(e.contains("name"), "{e}");
        std::fs::write(d.join(PROJECT_FILE), "{\"name\": \"x\"}").unwrap();
        assert!(matches!(
            ProjectFile::load(&d),
            Err(ProjectError::NoVersion { .. })
        ));
    }

    #[test]
    fn a_failed_save_leaves_the_previous_project_intact() {
        let d = dir("fail");
        let p = ProjectFile::new("first");
        p.save(&d).unwrap();
        // Make the folder read-only so the temporary file cannot be created
        // (root ignores permissions, so only check when the write really fails).
        let original = std::fs::metadata(&d).unwrap().permissions();
        let mut ro = original.clone();
        ro.set_readonly(true);
        std::fs::set_permissions(&d, ro).unwrap();
        let r = ProjectFile::new("second").save(&d);
        std::fs::set_permissions(&d, original).unwrap();
        let l = ProjectFile::load(&d).unwrap();
        match r {
            Err(_) => assert_eq!(l.project.name, "first"),
            Ok(()) => assert_eq!(l.project.name, "second"),
        }
        assert_eq!(
            std::fs::read_dir(&d).unwrap().count(),
            1,
            "no temporary file left"
        );
    }
}
