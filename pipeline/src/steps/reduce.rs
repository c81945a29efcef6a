//! Reduce: gravity readings to complete Bouguer anomalies and magnetic
//! readings to total-field anomalies (`data/*_reduced.csv`, every input
//! column kept), then the stations the later steps use
//! (`data/gravity_stations.csv`, base readings and rejected rows left out;
//! `data/magnetic_points.csv`, thinned along lines).

use super::{Stage, StepJob};
use crate::data::{write_points, Points};
use crate::error::Result;
use crate::paths::{at, data_path};
use crate::reduction::{
    reduce_gravity, reduce_magnetic, BaseTie, GravityJob, MagneticJob, ReadOptions, TerrainInputs,
};
use fieldstone_core::progress::Observer;
use fieldstone_core::project::file::{ProjectFile, Scenario};
use fieldstone_core::project::provenance::hash_json;
use fieldstone_core::table::passthrough::read_passthrough;
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
        hash_json(&(
            &p.gravity_reduction,
            &p.gravity,
            &p.magnetic,
            p.background_density_g_cc,
        ))
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
        out
    }
    fn run(&self, job: &mut StepJob<'_>) -> Result<String> {
        reduce(job.dir, job.project, job.observer)
    }
}

/// A reduced table and the numbers of four of its columns.
fn numeric_columns(
    path: &Path,
    names: [&str; 4],
) -> Result<(
    fieldstone_core::table::passthrough::PassThroughTable,
    [Vec<f64>; 4],
)> {
    let t = read_passthrough(path, &[]).map_err(|e| e.to_string())?;
    let mut cols: [Vec<f64>; 4] = Default::default();
    for (c, name) in cols.iter_mut().zip(names) {
        let i = t.require(name, "").map_err(|e| e.to_string())?;
        *c = t.numbers(i, true).map_err(|e| e.to_string())?;
    }
    Ok((t, cols))
}

fn reduce(dir: &Path, p: &ProjectFile, obs: &dyn Observer) -> Result<String> {
    let mut parts = Vec::new();
    if let Some(g) = &p.gravity {
        let s = p.gravity_reduction.unwrap_or_default();
        let out = data_path(dir, "gravity_reduced.csv");
        reduce_gravity(
            &GravityJob {
                inputs: vec![at(dir, &g.file)?],
                out: out.clone(),
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
                    epsg: p.epsg,
                    ..Default::default()
                },
                base: BaseTie::of(g.base_value_mgal, g.base_station.as_deref()),
                bases: None,
                meter_table: None,
                max_drift_mgal_per_h: g.max_drift_mgal_per_h,
                tide: g.tide,
                gravimetric_factor: g.gravimetric_factor,
                date: None,
            },
            obs,
        )?;
        let (t, [x, y, h, cba]) = numeric_columns(
            &out,
            ["x", "y", "height_m", "complete_bouguer_anomaly_mgal"],
        )?;
        let sc = t.column("station");
        let mut pts = Points::default();
        for k in 0..t.n_rows() {
            if let (Some(b), Some(c)) = (&g.base_station, sc) {
                if &t.text(k, c) == b {
                    continue;
                }
            }
            if g.rejected_rows.contains(&k) {
                continue;
            }
            pts.xyz.push([x[k], y[k], h[k]]);
            pts.value.push(cba[k]);
            pts.uncertainty.push(g.uncertainty_floor_mgal);
        }
        write_points(
            &data_path(dir, "gravity_stations.csv"),
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
    if let Some(m) = &p.magnetic {
        let out = data_path(dir, "magnetic_reduced.csv");
        reduce_magnetic(
            &MagneticJob {
                input: at(dir, &m.file)?,
                date: m.date.clone(),
                out: out.clone(),
                base: m.base_file.as_deref().map(|b| at(dir, b)).transpose()?,
                datum_nt: None,
                max_gap_s: 120.0,
                epsg: p.epsg,
            },
            obs,
        )?;
        let (t, [x, y, h, tmi]) = numeric_columns(&out, ["x", "y", "height_m", "tmi_anomaly_nt"])?;
        let lc = t.column("line");
        let mut pts = Points::default();
        let mut last: Option<(String, [f64; 2])> = None;
        for k in 0..t.n_rows() {
            let line = lc.map(|c| t.text(k, c)).unwrap_or_default();
            let keep = match &last {
                Some((l, q)) if *l == line => {
                    (x[k] - q[0]).hypot(y[k] - q[1]) >= 0.999 * m.thin_to_m
                }
                _ => true,
            };
            if keep {
                pts.xyz.push([x[k], y[k], h[k]]);
                pts.value.push(tmi[k]);
                pts.uncertainty.push(m.uncertainty_floor_nt);
                last = Some((line, [x[k], y[k]]));
            }
        }
        write_points(
            &data_path(dir, "magnetic_points.csv"),
            &pts,
            "tmi_nt",
            &format!(
                "total-field anomaly, nT, thinned to about {} m along lines",
                m.thin_to_m
            ),
        )?;
        parts.push(format!(
            "{} magnetic readings reduced, {} kept",
            t.n_rows(),
            pts.value.len()
        ));
    }
    Ok(parts.join("; "))
}
