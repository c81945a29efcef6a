//! Reduce: gravity readings to complete Bouguer anomalies and magnetic
//! readings to total-field anomalies (`data/*_reduced.csv`, every input
//! column kept), then the stations the later steps use
//! (`data/gravity_stations.csv`, base readings and rejected rows left out;
//! `data/magnetic_points.csv`, thinned along lines).

use super::{Stage, StepJob};
use crate::data::{write_points, Points};
use crate::error::{Error, Result};
use crate::paths::{at, data_path};
use crate::reduction::survey_files::{read_survey_files, write_survey};
use crate::reduction::{
    reduce_gravity, reduce_magnetic, BaseTie, GravityJob, MagneticJob, ReadOptions, TerrainInputs,
};
use fieldstone_core::grid::read::{is_grid_file, read_grid};
use fieldstone_core::progress::Observer;
use fieldstone_core::project::file::{
    GivenAnomaly, GravityInput, MagneticInput, ProjectFile, Scenario,
};
use fieldstone_core::project::provenance::hash_json;
use fieldstone_core::reduce::gravity::GravitySettings;
use fieldstone_core::survey::columns::Role;
use std::path::{Path, PathBuf};

/// The reduce step.
pub struct Reduce;

impl Stage for Reduce {
    fn key(&self) -> &'static str {
        "reduce"
    }
    fn title(&self) -> &'static str {
        "reduce the readings to anomalies"
    }
    fn parameters(&self, p: &ProjectFile, _s: Option<&Scenario>) -> String {
        let first = (
            &p.gravity_reduction,
            &p.gravity,
            &p.magnetic,
            p.background_density_g_cc,
        );
        // Projects without further surveys keep the hash they had.
        if p.more_gravity.is_empty() && p.more_magnetic.is_empty() {
            hash_json(&first)
        } else {
            hash_json(&(first, &p.more_gravity, &p.more_magnetic))
        }
    }
    fn outputs(&self, dir: &Path, p: &ProjectFile, _s: Option<&Scenario>) -> Vec<PathBuf> {
        let mut out = vec![];
        if p.gravity.is_some() {
            out.push(data_path(dir, "gravity_reduced.csv"));
            out.push(data_path(dir, "gravity_stations.csv"));
        }
        if p.magnetic.is_some() {
            out.push(data_path(dir, "magnetic_reduced.csv"));
            out.push(data_path(dir, "magnetic_points.csv"));
        }
        for f in &p.more_gravity {
            let prefix = further_prefix("gravity", &f.name);
            out.push(data_path(dir, &format!("{prefix}_reduced.csv")));
            out.push(data_path(dir, &format!("{prefix}_stations.csv")));
        }
        for f in &p.more_magnetic {
            let prefix = further_prefix("magnetic", &f.name);
            out.push(data_path(dir, &format!("{prefix}_reduced.csv")));
            out.push(data_path(dir, &format!("{prefix}_points.csv")));
        }
        out
    }
    fn run(&self, job: &mut StepJob<'_>) -> Result<String> {
        reduce(job.dir, job.project, job.observer)
    }
}

/// Column the reduced table adds for anomalies given by the supplier.
pub const GIVEN_GRAVITY_COLUMN: &str = "given_anomaly_mgal";
pub const GIVEN_MAGNETIC_COLUMN: &str = "given_anomaly_nt";

/// Anomalies delivered already reduced: read through the importer, written
/// to the reduced table (every input column, the file, the anomaly) and
/// returned with positions; the reduction is not done again. A delivered
/// grid (GeoTIFF or ESRI ASCII) gives one point per node with a value, at
/// the terrain's height plus the stated height above ground.
fn given(
    dir: &Path,
    p: &ProjectFile,
    files: &[PathBuf],
    read: &ReadOptions,
    how: &GivenAnomaly,
    out_column: &str,
    out: &Path,
) -> Result<Vec<([f64; 3], f64)>> {
    if let [one] = files {
        if is_grid_file(one) {
            return given_grid(dir, p, one, how, out_column, out);
        }
    }
    let files = read_survey_files(files, read, &[out_column])?;
    let mut values = Vec::with_capacity(files.len());
    let mut rows = Vec::new();
    for f in &files {
        let s = &f.survey;
        f.require_finite(&s.x, Role::Easting)?;
        f.require_finite(&s.y, Role::Northing)?;
        let h = f.heights()?;
        let v = f.column_values(&how.column)?;
        for k in 0..s.n_rows() {
            rows.push(([s.x[k], s.y[k], h[k]], v[k]));
        }
        values.push(v);
    }
    write_survey(out, &files, &[out_column], |fi, r| vec![values[fi][r]])?;
    Ok(rows)
}

/// The nodes of a delivered anomaly grid as points; the reduced table is
/// `x,y,height_m,<out_column>`.
fn given_grid(
    dir: &Path,
    p: &ProjectFile,
    file: &Path,
    how: &GivenAnomaly,
    out_column: &str,
    out: &Path,
) -> Result<Vec<([f64; 3], f64)>> {
    let g = read_grid(file).map_err(|e| Error::Input(e.to_string()))?;
    if let (Some(a), Some(b)) = (g.epsg, p.epsg) {
        if a != b {
            return Err(Error::Input(format!(
                "{} is in EPSG:{a} but the project is in EPSG:{b}; reproject one",
                file.display()
            )));
        }
    }
    let dem_file = p.dem.as_deref().ok_or_else(|| {
        Error::Input(format!(
            "{}: the nodes of a delivered grid take their heights from the project's terrain model, and the project has none; add one (Model space) or deliver a table with heights",
            file.display()
        ))
    })?;
    let dem = read_grid(&at(dir, dem_file)?).map_err(|e| Error::Input(e.to_string()))?;
    let above = how.height_above_ground_m.unwrap_or(0.0);
    let mut rows = Vec::new();
    let mut text = format!("x,y,height_m,{out_column}\n");
    for j in 0..g.ny {
        for i in 0..g.nx {
            let v = g.get(i, j);
            if !v.is_finite() {
                continue;
            }
            let (x, y) = (g.x_of(i), g.y_of(j));
            let z = dem.sample(x, y).map_err(|e| {
                Error::Input(format!(
                    "{}: node ({x:.1}, {y:.1}): the terrain model gives no height there ({e})",
                    file.display()
                ))
            })? + above;
            rows.push(([x, y, z], v));
            text.push_str(&format!("{x},{y},{z},{v}\n"));
        }
    }
    if rows.is_empty() {
        return Err(Error::Input(format!(
            "{}: the grid has no values",
            file.display()
        )));
    }
    crate::data::write_text(out, &text)?;
    Ok(rows)
}

fn reduce(dir: &Path, p: &ProjectFile, obs: &dyn Observer) -> Result<String> {
    let mut parts = Vec::new();
    let settings = p.gravity_reduction.unwrap_or_default();
    if let Some(g) = &p.gravity {
        parts.push(reduce_gravity_survey(dir, p, g, settings, "gravity", obs)?);
    }
    if let Some(m) = &p.magnetic {
        parts.push(reduce_magnetic_survey(dir, p, m, "magnetic", obs)?);
    }
    for f in &p.more_gravity {
        let s = f.reduction.unwrap_or(settings);
        let prefix = further_prefix("gravity", &f.name);
        let done = reduce_gravity_survey(dir, p, &f.survey, s, &prefix, obs)?;
        parts.push(format!("{}: {done}", f.name));
    }
    for f in &p.more_magnetic {
        let prefix = further_prefix("magnetic", &f.name);
        let done = reduce_magnetic_survey(dir, p, &f.survey, &prefix, obs)?;
        parts.push(format!("{}: {done}", f.name));
    }
    Ok(parts.join("; "))
}

/// The file prefix of a further survey: `<kind>_<name>` with the name made
/// safe for a file name.
pub fn further_prefix(kind: &str, name: &str) -> String {
    format!("{kind}_{}", crate::paths::safe_name(name))
}

/// Reduces one gravity survey into `data/<prefix>_reduced.csv` and
/// `data/<prefix>_stations.csv`.
fn reduce_gravity_survey(
    dir: &Path,
    p: &ProjectFile,
    g: &GravityInput,
    settings: GravitySettings,
    prefix: &str,
    obs: &dyn Observer,
) -> Result<String> {
    let mut parts = Vec::new();
    if let Some(given_as) = &g.given {
        let read = ReadOptions {
            columns: g.columns.clone(),
            units: g.units.clone(),
            epsg: p.epsg,
        };
        let files = g.files().map(|f| at(dir, f)).collect::<Result<Vec<_>>>()?;
        let rows = given(
            dir,
            p,
            &files,
            &read,
            given_as,
            GIVEN_GRAVITY_COLUMN,
            &data_path(dir, &format!("{prefix}_reduced.csv")),
        )?;
        let mut pts = Points::default();
        let mut missing = 0;
        for (k, (xyz, v)) in rows.into_iter().enumerate() {
            if g.rejected_rows.contains(&k) {
                continue;
            }
            if !v.is_finite() {
                missing += 1;
                continue;
            }
            pts.xyz.push(xyz);
            pts.value.push(v);
            pts.uncertainty.push(g.uncertainty_floor_mgal);
        }
        write_points(
            &data_path(dir, &format!("{prefix}_stations.csv")),
            &pts,
            "cba_mgal",
            &format!(
                "Bouguer anomaly as given in column '{}' (not reduced here), mGal",
                given_as.column
            ),
        )?;
        if missing > 0 {
            obs.warning(&format!(
                "{missing} rows have no value in '{}' and are left out",
                given_as.column
            ));
        }
        parts.push(format!(
            "{} gravity anomalies given (column '{}', reduced by the supplier{})",
            pts.value.len(),
            given_as.column,
            given_as
                .reduction_density_g_cc
                .map(|d| format!(" at {d} g/cm³"))
                .unwrap_or_default()
        ));
    } else {
        let s = settings;
        let out = data_path(dir, &format!("{prefix}_reduced.csv"));
        let readings = reduce_gravity(
            &GravityJob {
                inputs: g.files().map(|f| at(dir, f)).collect::<Result<_>>()?,
                out,
                settings: s,
                terrain: match (&p.dem, g.terrain_outer_m) {
                    (Some(d), Some(outer)) => Some(TerrainInputs {
                        dem: at(dir, d)?,
                        inner_m: 0.0,
                        outer_m: outer,
                        far_dem: None,
                    }),
                    _ => None,
                },
                read: ReadOptions {
                    columns: g.columns.clone(),
                    units: g.units.clone(),
                    epsg: p.epsg,
                },
                base: BaseTie::of(g.base_value_mgal, g.base_station.as_deref()),
                bases: g.bases.as_deref().map(|b| at(dir, b)).transpose()?,
                meter_table: g.meter_table.as_deref().map(|m| at(dir, m)).transpose()?,
                max_drift_mgal_per_h: g.max_drift_mgal_per_h,
                tide: g.tide,
                gravimetric_factor: g.gravimetric_factor,
                date: g.date.clone(),
            },
            obs,
        )?;
        let mut pts = Points::default();
        for (k, r) in readings.iter().enumerate() {
            if r.at_base || g.rejected_rows.contains(&k) {
                continue;
            }
            pts.xyz.push(r.xyz);
            pts.value.push(r.complete_bouguer_anomaly_mgal);
            pts.uncertainty.push(g.uncertainty_floor_mgal);
        }
        write_points(
            &data_path(dir, &format!("{prefix}_stations.csv")),
            &pts,
            "cba_mgal",
            "complete Bouguer anomaly at the survey stations (base readings left out), mGal",
        )?;
        parts.push(format!(
            "{} gravity stations reduced (density {} g/cm³)",
            pts.value.len(),
            s.density_g_cc
        ));
    }
    Ok(parts.join("; "))
}

/// Reduces one magnetic survey into `data/<prefix>_reduced.csv` and
/// `data/<prefix>_points.csv`.
fn reduce_magnetic_survey(
    dir: &Path,
    p: &ProjectFile,
    m: &MagneticInput,
    prefix: &str,
    obs: &dyn Observer,
) -> Result<String> {
    let mut parts = Vec::new();
    if let Some(given_as) = &m.given {
        if p.inducing_field.is_none() {
            return Err(Error::Input(
                "the magnetic anomalies are given but the project states no inducing field; set it (intensity, inclination, declination) so the models can use them".into(),
            ));
        }
        let read = ReadOptions {
            columns: m.columns.clone(),
            units: m.units.clone(),
            epsg: p.epsg,
        };
        let files = m.files().map(|f| at(dir, f)).collect::<Result<Vec<_>>>()?;
        let rows = given(
            dir,
            p,
            &files,
            &read,
            given_as,
            GIVEN_MAGNETIC_COLUMN,
            &data_path(dir, &format!("{prefix}_reduced.csv")),
        )?;
        let mut pts = Points::default();
        for (xyz, v) in rows.into_iter().filter(|r| r.1.is_finite()) {
            pts.xyz.push(xyz);
            pts.value.push(v);
            pts.uncertainty.push(m.uncertainty_floor_nt);
        }
        write_points(
            &data_path(dir, &format!("{prefix}_points.csv")),
            &pts,
            "tmi_nt",
            &format!(
                "total-field anomaly as given in column '{}' (not reduced here), nT",
                given_as.column
            ),
        )?;
        parts.push(format!(
            "{} magnetic anomalies given (column '{}')",
            pts.value.len(),
            given_as.column
        ));
    } else {
        let out = data_path(dir, &format!("{prefix}_reduced.csv"));
        let readings = reduce_magnetic(
            &MagneticJob {
                inputs: m.files().map(|f| at(dir, f)).collect::<Result<_>>()?,
                read: ReadOptions {
                    columns: m.columns.clone(),
                    units: m.units.clone(),
                    epsg: p.epsg,
                },
                date: m.date.clone(),
                out,
                base: m.base_file.as_deref().map(|b| at(dir, b)).transpose()?,
                datum_nt: None,
                max_gap_s: 120.0,
            },
            obs,
        )?;
        let mut pts = Points::default();
        let mut last: Option<(&str, [f64; 2])> = None;
        for r in &readings {
            let [x, y, _] = r.xyz;
            let keep = match &last {
                Some((l, q)) if *l == r.line => (x - q[0]).hypot(y - q[1]) >= 0.999 * m.thin_to_m,
                _ => true,
            };
            if keep {
                pts.xyz.push(r.xyz);
                pts.value.push(r.tmi_anomaly_nt);
                pts.uncertainty.push(m.uncertainty_floor_nt);
                last = Some((&r.line, [x, y]));
            }
        }
        write_points(
            &data_path(dir, &format!("{prefix}_points.csv")),
            &pts,
            "tmi_nt",
            &format!(
                "total-field anomaly, nT, thinned to about {} m along lines",
                m.thin_to_m
            ),
        )?;
        parts.push(format!(
            "{} magnetic readings reduced, {} kept",
            readings.len(),
            pts.value.len()
        ));
    }
    Ok(parts.join("; "))
}
