//! Import: every input file of the project read and checked (survey
//! tables, terrain, drill holes, wireframes, surfaces); a report of counts
//! and drill-hole issues in `data/import_report.json`.

use super::{Stage, StepJob};
use crate::context::hole_spec;
use crate::data::write_text;
use crate::error::Result;
use crate::paths::{at, data_path};
use crate::reduction::survey_files::{read_survey_files, ReadOptions};
use fieldstone_core::constraint::wireframe::Wireframe;
use fieldstone_core::drillhole::tables::load_holes;
use fieldstone_core::grid::read::read_grid;
use fieldstone_core::project::file::{ProjectFile, Scenario};
use fieldstone_core::project::provenance::{hash_bytes, hash_json};
use fieldstone_core::survey::columns::Role;
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
            inputs.push((rel, hash_bytes(&bytes)));
        }
        Ok(inputs)
    }
    fn parameters(&self, p: &ProjectFile, _s: Option<&Scenario>) -> String {
        hash_json(&(
            &p.gravity,
            &p.magnetic,
            &p.dem,
            &p.drill_holes,
            &p.surfaces,
            &p.wireframes,
            p.epsg,
        ))
    }
    fn outputs(&self, dir: &Path, _p: &ProjectFile, _s: Option<&Scenario>) -> Vec<PathBuf> {
        vec![data_path(dir, "import_report.json")]
    }
    fn run(&self, job: &mut StepJob<'_>) -> Result<String> {
        import(job.dir, job.project)
    }
}

fn import(dir: &Path, p: &ProjectFile) -> Result<String> {
    let mut report = serde_json::Map::new();
    let mut parts = Vec::new();
    if let Some(g) = &p.gravity {
        let files: Vec<PathBuf> = g.files().map(|f| at(dir, f)).collect::<Result<_>>()?;
        let read = ReadOptions {
            columns: g.columns.clone(),
            units: g.units.clone(),
            epsg: p.epsg,
        };
        let survey = read_survey_files(&files, &read, &[])?;
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
        report.insert("gravity_readings".into(), n.into());
        report.insert("gravity_files".into(), survey.len().into());
        parts.push(format!("{n} gravity readings in {} file(s)", survey.len()));
    }
    if let Some(m) = &p.magnetic {
        let read = ReadOptions {
            columns: m.columns.clone(),
            units: m.units.clone(),
            epsg: p.epsg,
        };
        let files: Vec<PathBuf> = m.files().map(|f| at(dir, f)).collect::<Result<_>>()?;
        let survey = read_survey_files(&files, &read, &[])?;
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
        report.insert("magnetic_readings".into(), n.into());
        parts.push(format!("{n} magnetic readings"));
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
