//! Import: every input file of the project read and checked (survey
//! tables, terrain, drill holes, wireframes, surfaces); a report of counts
//! and drill-hole issues in `data/import_report.json`.

use super::{Stage, StepJob};
use crate::context::hole_spec;
use crate::data::write_text;
use crate::error::{Error, Result};
use crate::paths::{at, data_path};
use crate::reduction::survey_files::{read_survey_files, ReadOptions, SurveyFile};
use fieldstone_core::constraint::wireframe::Wireframe;
use fieldstone_core::drillhole::tables::load_holes;
use fieldstone_core::grid::read::read_grid;
use fieldstone_core::progress::Observer;
use fieldstone_core::project::file::{GravityInput, MagneticInput, ProjectFile, Scenario};
use fieldstone_core::project::provenance::{hash_bytes, hash_json};
use fieldstone_core::survey::columns::Role;
use fieldstone_core::table::gdf::definition_beside;
use std::path::{Path, PathBuf};

/// The import step.
pub struct Import;

impl Stage for Import {
    fn key(&self) -> &'static str {
        "import"
    }
    fn title(&self) -> &'static str {
        "read and check the input files"
    }
    /// The content hashes of every input file the project names.
    fn inputs(
        &self,
        dir: &Path,
        p: &ProjectFile,
        _upstream: Option<&str>,
    ) -> Result<Vec<(String, String)>> {
        let mut inputs = Vec::new();
        for rel in p.input_files() {
            let path = at(dir, &rel)?;
            let bytes = std::fs::read(&path)
                .map_err(|e| format!("{}: {e} (named in project.json)", path.display()))?;
            inputs.push((rel.clone(), hash_bytes(&bytes)));
            // An ASEG-GDF2 file's definition is part of it.
            if let Some(dfn) = definition_beside(&path) {
                let bytes = std::fs::read(&dfn).map_err(|e| format!("{}: {e}", dfn.display()))?;
                inputs.push((format!("{rel} (definition)"), hash_bytes(&bytes)));
            }
        }
        Ok(inputs)
    }
    fn parameters(&self, p: &ProjectFile, _s: Option<&Scenario>) -> String {
        let first = (
            &p.gravity,
            &p.magnetic,
            &p.dem,
            &p.drill_holes,
            &p.surfaces,
            &p.wireframes,
            p.epsg,
        );
        // Projects without further surveys keep the hash they had.
        if p.more_gravity.is_empty() && p.more_magnetic.is_empty() {
            hash_json(&first)
        } else {
            hash_json(&(first, &p.more_gravity, &p.more_magnetic))
        }
    }
    fn outputs(&self, dir: &Path, _p: &ProjectFile, _s: Option<&Scenario>) -> Vec<PathBuf> {
        vec![data_path(dir, "import_report.json")]
    }
    fn run(&self, job: &mut StepJob<'_>) -> Result<String> {
        import(job.dir, job.project, job.observer)
    }
}

fn import(dir: &Path, p: &ProjectFile, obs: &dyn Observer) -> Result<String> {
    let mut report = serde_json::Map::new();
    let mut parts = Vec::new();
    if let Some(g) = &p.gravity {
        let (n, files) = check_gravity(dir, p, g, obs)?;
        report.insert("gravity_readings".into(), n.into());
        report.insert("gravity_files".into(), files.into());
        parts.push(format!("{n} gravity readings in {files} file(s)"));
    }
    if let Some(m) = &p.magnetic {
        let n = check_magnetic(dir, p, m, obs)?;
        report.insert("magnetic_readings".into(), n.into());
        parts.push(format!("{n} magnetic readings"));
    }
    check_names("gravity", p.more_gravity.iter().map(|f| f.name.as_str()))?;
    check_names("magnetic", p.more_magnetic.iter().map(|f| f.name.as_str()))?;
    for f in &p.more_gravity {
        let (n, files) = check_gravity(dir, p, &f.survey, obs)?;
        parts.push(format!(
            "{}: {n} gravity readings in {files} file(s)",
            f.name
        ));
    }
    for f in &p.more_magnetic {
        let n = check_magnetic(dir, p, &f.survey, obs)?;
        parts.push(format!("{}: {n} magnetic readings", f.name));
    }
    if let Some(d) = &p.dem {
        let g = read_grid(&at(dir, d)?).map_err(|e| e.to_string())?;
        if let (Some(a), Some(b)) = (g.epsg, p.epsg) {
            if a != b {
                return Err(format!(
                    "{d} is in EPSG:{a} but the project is in EPSG:{b}; reproject one"
                )
                .into());
            }
        }
        parts.push(format!("terrain {} × {}", g.nx, g.ny));
    }
    if let Some(spec) = hole_spec(dir, p)? {
        let (holes, issues) = load_holes(&spec).map_err(|e| e.to_string())?;
        report.insert("holes".into(), holes.holes.len().into());
        report.insert(
            "hole_issues".into(),
            issues
                .iter()
                .map(|i| i.to_string())
                .collect::<Vec<_>>()
                .into(),
        );
        parts.push(format!(
            "{} drill holes ({} issues)",
            holes.holes.len(),
            issues.len()
        ));
    }
    for w in &p.wireframes {
        let wf = Wireframe::read(&at(dir, &w.file)?).map_err(|e| e.to_string())?;
        let c = wf.closedness();
        if !c.is_closed() {
            return Err(format!("{}: {}", w.file, c.report()).into());
        }
        parts.push(format!("wireframe {} closed", w.name));
    }
    for s in &p.surfaces {
        read_grid(&at(dir, &s.file)?).map_err(|e| e.to_string())?;
    }
    write_text(
        &data_path(dir, "import_report.json"),
        &serde_json::to_string_pretty(&report).unwrap_or_default(),
    )?;
    Ok(parts.join(", "))
}

/// Further surveys of a kind need names, distinct once made safe for file
/// names (they name the survey's files under `data/`).
fn check_names<'a>(kind: &str, names: impl Iterator<Item = &'a str>) -> Result<()> {
    let mut seen: Vec<(String, &str)> = Vec::new();
    for n in names {
        if n.trim().is_empty() {
            return Err(Error::Input(format!(
                "a further {kind} survey has no name; give each a name"
            )));
        }
        let safe = crate::paths::safe_name(n);
        if let Some((_, other)) = seen.iter().find(|(s, _)| *s == safe) {
            return Err(Error::Input(format!(
                "the further {kind} surveys '{other}' and '{n}' would share the files data/{kind}_{safe}_*; rename one"
            )));
        }
        seen.push((safe, n));
    }
    Ok(())
}

/// Reads a gravity survey's files and tables as its reduction will:
/// (readings, files).
/// Compares how each file is read now with how the project recorded it
/// when it was imported (`project.imports`): a file whose header changed
/// since is read differently, which the user should know.
fn compare_with_record(p: &ProjectFile, dir: &Path, files: &[SurveyFile], obs: &dyn Observer) {
    for f in files {
        let Some(rec) = p
            .imports
            .iter()
            .find(|i| at(dir, &i.file).ok().as_deref() == Some(f.path.as_path()))
        else {
            continue;
        };
        let now: Vec<_> = f
            .spec
            .columns
            .iter()
            .map(|c| (&c.name, c.role, c.unit))
            .collect();
        let then: Vec<_> = rec
            .spec
            .columns
            .iter()
            .map(|c| (&c.name, c.role, c.unit))
            .collect();
        if now != then {
            obs.warning(&format!(
                "{}: read now as {}, but recorded at import as {}; check the file or import it again",
                f.path.display(),
                f.spec.describe_columns(),
                rec.spec.describe_columns()
            ));
        }
    }
}

fn check_gravity(
    dir: &Path,
    p: &ProjectFile,
    g: &GravityInput,
    obs: &dyn Observer,
) -> Result<(usize, usize)> {
    let files: Vec<PathBuf> = g.files().map(|f| at(dir, f)).collect::<Result<_>>()?;
    if let (Some(_), [one]) = (&g.given, files.as_slice()) {
        if let Some(n) = given_grid_nodes(one)? {
            return Ok((n, 1));
        }
    }
    let read = ReadOptions {
        columns: g.columns.clone(),
        units: g.units.clone(),
        epsg: p.epsg,
    };
    let survey = read_survey_files(&files, &read, &[])?;
    compare_with_record(p, dir, &survey, obs);
    let mut n = 0;
    for f in &survey {
        f.heights()?;
        if let Some(a) = &g.given {
            // Anomalies as delivered: positions, heights and the column.
            f.column_values(&a.column)?;
            n += f.survey.n_rows();
            continue;
        }
        f.lat_lon()?;
        f.channel(Role::Gravity, "the readings", "reading or gravity_mgal")?;
        if g.base_station.is_some() || g.bases.is_some() {
            f.station_ids("the station ids (drift needs the base readings)")?;
            f.times(g.date.as_deref())?;
        }
        n += f.survey.n_rows();
    }
    if let Some(b) = &g.bases {
        fieldstone_core::reduce::network::read_bases(&at(dir, b)?)?;
    }
    if let Some(m) = &g.meter_table {
        fieldstone_core::reduce::meter::MeterTable::read(&at(dir, m)?)
            .map_err(|e| e.to_string())?;
    }
    Ok((n, survey.len()))
}

/// Reads a magnetic survey's files as its reduction will: the readings.
fn check_magnetic(
    dir: &Path,
    p: &ProjectFile,
    m: &MagneticInput,
    obs: &dyn Observer,
) -> Result<usize> {
    let read = ReadOptions {
        columns: m.columns.clone(),
        units: m.units.clone(),
        epsg: p.epsg,
    };
    let files: Vec<PathBuf> = m.files().map(|f| at(dir, f)).collect::<Result<_>>()?;
    if let (Some(_), [one]) = (&m.given, files.as_slice()) {
        if let Some(n) = given_grid_nodes(one)? {
            return Ok(n);
        }
    }
    let survey = read_survey_files(&files, &read, &[])?;
    compare_with_record(p, dir, &survey, obs);
    let mut n = 0;
    for f in &survey {
        f.heights()?;
        match &m.given {
            Some(a) => {
                f.column_values(&a.column)?;
            }
            None => {
                f.lat_lon()?;
                f.channel(Role::Magnetic, "the readings", "mag_nt or tmi")?;
            }
        }
        n += f.survey.n_rows();
    }
    Ok(n)
}

/// The nodes with a value of a delivered anomaly grid; None for a table.
fn given_grid_nodes(file: &Path) -> Result<Option<usize>> {
    if !fieldstone_core::grid::read::is_grid_file(file) {
        return Ok(None);
    }
    let g = read_grid(file).map_err(|e| Error::Input(e.to_string()))?;
    Ok(Some(g.values.iter().filter(|v| v.is_finite()).count()))
}
