//! The sensitivity operator of a scenario: which one, built on which data,
//! and how far the FFT operator's rows are from the exact ones.
//!
//! The inversion step and the appraisal step both call [`prepare`], so the
//! appraisal reruns see exactly the operator and data of the run they
//! appraise.

use crate::context::{Context, ModelContext};
use crate::data::{scenario_data, Points};
use crate::error::Result;
use crate::paths::data_path;
use crate::steps::constraints::constraints_of;
use fieldstone_core::constraint::build::ConstraintArrays;
use fieldstone_core::grid::geotiff::read_geotiff;
use fieldstone_core::invert::solver::Problem;
use fieldstone_core::memory::available_or_assumed;
use fieldstone_core::mesh::size::estimate;
use fieldstone_core::mesh::TensorMesh;
use fieldstone_core::operator::dense::{DenseOperator, Survey};
use fieldstone_core::operator::fft::{FftOperator, Heights, RowCheck};
use fieldstone_core::operator::Operator;
use fieldstone_core::physics::tensor::{gz_row, induced_tmi_scale, tmi_row, RowScratch};
use fieldstone_core::progress::Observer;
use fieldstone_core::project::file::{DataKind, FftHeights, OperatorChoice, ProjectFile, Scenario};
use std::path::Path;

/// Rows of the FFT operator compared with exact rows at this many data.
pub const CHECKED_ROWS: usize = 40;
/// Above this relative row error the run log and summary warn.
pub const ROW_ERROR_WARNING: f64 = 0.05;

/// Either operator, so one generic inversion serves both.
pub enum ScenarioOperator {
    Dense(DenseOperator),
    Fft(Box<FftOperator>),
}

impl Operator for ScenarioOperator {
    fn n_data(&self) -> usize {
        match self {
            ScenarioOperator::Dense(o) => o.n_data(),
            ScenarioOperator::Fft(o) => o.n_data(),
        }
    }
    fn n_cells(&self) -> usize {
        match self {
            ScenarioOperator::Dense(o) => o.n_cells(),
            ScenarioOperator::Fft(o) => o.n_cells(),
        }
    }
    fn apply(&self, m: &[f64], out: &mut [f64]) {
        match self {
            ScenarioOperator::Dense(o) => o.apply(m, out),
            ScenarioOperator::Fft(o) => o.apply(m, out),
        }
    }
    fn apply_t(&self, r: &[f64], out: &mut [f64]) {
        match self {
            ScenarioOperator::Dense(o) => o.apply_t(r, out),
            ScenarioOperator::Fft(o) => o.apply_t(r, out),
        }
    }
    fn column_norms_sq(&self) -> Vec<f64> {
        match self {
            ScenarioOperator::Dense(o) => o.column_norms_sq(),
            ScenarioOperator::Fft(o) => o.column_norms_sq(),
        }
    }
    fn kind(&self) -> &'static str {
        match self {
            ScenarioOperator::Dense(o) => o.kind(),
            ScenarioOperator::Fft(o) => o.kind(),
        }
    }
}

/// An operator ready for a run, with the data in its row order.
pub struct Prepared {
    pub op: ScenarioOperator,
    pub data: Points,
    /// Mesh index of each operator column (ascending).
    pub active_idx: Vec<usize>,
    /// Highest datum elevation, for depth weighting.
    pub reference_elevation_m: f64,
    /// FFT rows against exact rows at sample data.
    pub check: Option<RowCheck>,
    /// Lines for the run log.
    pub notes: Vec<String>,
}

impl Prepared {
    /// The inversion problem of this operator and data over `mesh` with the
    /// constraint arrays `c`.
    pub fn problem<'a>(&'a self, mesh: &'a TensorMesh, c: &'a ConstraintArrays) -> Problem<'a> {
        Problem {
            mesh,
            constraints: c,
            active: &self.active_idx,
            data: &self.data.value,
            uncertainty: &self.data.uncertainty,
            reference_elevation_m: self.reference_elevation_m,
        }
    }
}

pub fn survey_of(p: &ProjectFile, s: &Scenario) -> Result<Survey> {
    Ok(match s.data {
        DataKind::Gravity => Survey::Gravity,
        DataKind::Magnetic => Survey::Magnetic(p.inducing_field.ok_or("a magnetic scenario needs the project's inducing field (intensity, inclination, declination)")?),
    })
}

fn choose(s: &Scenario, m: &ModelContext, n_data: usize) -> Result<OperatorChoice> {
    let n_act = m.active.count();
    let avail = available_or_assumed();
    let dense_fits = (n_data as u64 * n_act as u64 * 4) <= avail / 2;
    Ok(match s.operator {
        OperatorChoice::Automatic if dense_fits => OperatorChoice::Dense,
        OperatorChoice::Automatic if m.mesh.uniform_horizontal() => OperatorChoice::Fft,
        OperatorChoice::Automatic => {
            let e = estimate(m.mesh.n_cells(), n_act, n_data, Some(avail));
            return Err(format!("the dense sensitivity ({:.1} GB) does not fit in half the {:.1} GB available, and the mesh has expanding padding so the FFT operator cannot be used. {}", e.dense_bytes as f64 / 1e9, avail as f64 / 1e9, e.advice.join("; ")).into());
        }
        other => other,
    })
}

/// Stations moved 1 cm east and north where two of their coordinates fall
/// on mesh node planes (so they sit on a cell edge), and how many moved.
pub fn off_cell_edges(mesh: &TensorMesh, xyz: &[[f64; 3]]) -> (Vec<[f64; 3]>, usize) {
    let on = |nodes: &[f64], v: f64| {
        let k = nodes.partition_point(|n| *n < v);
        [k.checked_sub(1), Some(k)]
            .into_iter()
            .flatten()
            .filter_map(|i| nodes.get(i))
            .any(|n| (n - v).abs() < 1e-6)
    };
    let mut moved = 0;
    let out = xyz
        .iter()
        .map(|p| {
            let hits = on(&mesh.x, p[0]) as u8 + on(&mesh.y, p[1]) as u8 + on(&mesh.z, p[2]) as u8;
            if hits >= 2 {
                moved += 1;
                [p[0] + 0.01, p[1] + 0.01, p[2]]
            } else {
                *p
            }
        })
        .collect();
    (out, moved)
}

/// The elevation of the data surface at (x, y): the terrain model plus the
/// median height of the stations above it, or without a terrain model the
/// elevation of the nearest datum.
struct DataSurface<'a> {
    dem: Option<&'a fieldstone_core::grid::Grid2>,
    clearance_m: f64,
    pts: &'a Points,
}

impl<'a> DataSurface<'a> {
    fn new(m: &'a ModelContext, pts: &'a Points) -> DataSurface<'a> {
        let mut clear: Vec<f64> = match &m.dem {
            Some(d) => pts
                .xyz
                .iter()
                .filter_map(|q| d.sample(q[0], q[1]).ok().map(|t| q[2] - t))
                .filter(|c| c.is_finite())
                .collect(),
            None => vec![],
        };
        clear.sort_by(|a, b| a.total_cmp(b));
        DataSurface {
            dem: m.dem.as_ref().filter(|_| !clear.is_empty()),
            clearance_m: clear.get(clear.len() / 2).copied().unwrap_or(0.0),
            pts,
        }
    }

    fn at(&self, x: f64, y: f64) -> f64 {
        if let Some(t) = self
            .dem
            .and_then(|d| d.sample(x, y).ok())
            .filter(|t| t.is_finite())
        {
            return t + self.clearance_m;
        }
        self.pts
            .xyz
            .iter()
            .min_by(|a, b| {
                let da = (a[0] - x).powi(2) + (a[1] - y).powi(2);
                let db = (b[0] - x).powi(2) + (b[1] - y).powi(2);
                da.total_cmp(&db)
            })
            .map(|q| q[2])
            .unwrap_or(0.0)
    }
}

/// The mesh, the constraint arrays and the prepared operator of a scenario:
/// what the inversion and the appraisal steps both start from.
pub fn scenario_setup<'c>(
    dir: &Path,
    p: &ProjectFile,
    ctx: &'c mut Context,
    s: &Scenario,
    obs: &dyn Observer,
) -> Result<(&'c ModelContext, ConstraintArrays, Prepared)> {
    let m = ctx.model(p)?;
    let (c, _) = constraints_of(m, s)?;
    let prep = prepare(dir, p, m, &c, s, obs)?;
    Ok((m, c, prep))
}

/// Builds the scenario's operator on its data.
pub fn prepare(
    dir: &Path,
    p: &ProjectFile,
    m: &ModelContext,
    c: &ConstraintArrays,
    s: &Scenario,
    obs: &dyn Observer,
) -> Result<Prepared> {
    let pts = scenario_data(dir, s)?;
    let survey = survey_of(p, s)?;
    let active_idx: Vec<usize> = (0..m.mesh.n_cells()).filter(|&k| c.active[k]).collect();
    let zref = pts
        .xyz
        .iter()
        .map(|q| q[2])
        .fold(f64::NEG_INFINITY, f64::max);
    let mut notes = Vec::new();
    match choose(s, m, pts.value.len())? {
        OperatorChoice::Fft => {
            // The gridded residual at the column centres.
            let kind = match s.data {
                DataKind::Gravity => "gravity",
                DataKind::Magnetic => "magnetic",
            };
            let res = read_geotiff(&data_path(dir, &format!("{kind}_residual.tif")))
                .map_err(|e| e.to_string())?;
            let [nx, ny, _] = m.mesh.shape();
            let mut mask = vec![false; nx * ny];
            let mut d = Points::default();
            let floor = pts
                .uncertainty
                .iter()
                .cloned()
                .fold(f64::INFINITY, f64::min);
            let surface = DataSurface::new(m, &pts);
            let mut draped = Vec::new();
            for j in 0..ny {
                for i in 0..nx {
                    let cc = m.mesh.centre(i, j, 0);
                    if let Ok(v) = res.sample(cc[0], cc[1]) {
                        if v.is_finite() {
                            mask[i + nx * j] = true;
                            let zd = surface.at(cc[0], cc[1]);
                            draped.push(zd);
                            d.value.push(v);
                            d.uncertainty.push(floor);
                            d.xyz.push([cc[0], cc[1], zd]);
                        }
                    }
                }
            }
            let heights = match s.fft_heights {
                FftHeights::Level => {
                    for q in &mut d.xyz {
                        q[2] = zref;
                    }
                    notes.push(format!("FFT operator: {} gridded data, all at {zref:.1} m (the highest station; data below it are treated as level there)", d.value.len()));
                    Heights::Level(zref)
                }
                FftHeights::Draped { order } => {
                    notes.push(format!("FFT operator: {} gridded data draped at their own heights (terrain + {:.1} m), kernels expanded in height to order {order}", d.value.len(), surface.clearance_m));
                    Heights::Draped {
                        z_m: draped.clone(),
                        order,
                    }
                }
            };
            obs.message(&format!("  {}", notes[notes.len() - 1]));
            let op = FftOperator::build_within(
                &m.mesh,
                &active_idx,
                &heights,
                &mask,
                survey,
                available_or_assumed(),
            )?;
            let check = check_rows(&op, &m.mesh, &active_idx, &d, &draped, survey);
            let line = format!(
                "FFT rows against exact rows at the data's own heights ({} sample data): median {:.2} %, worst {:.2} % (datum {})",
                check.rows_checked,
                100.0 * check.median_relative_error,
                100.0 * check.max_relative_error,
                check.worst_datum
            );
            obs.message(&format!("  {line}"));
            notes.push(line);
            if check.max_relative_error > ROW_ERROR_WARNING {
                let w = format!("the FFT operator's rows differ from the exact ones by up to {:.1} %; use draped heights of a higher order, or the dense operator", 100.0 * check.max_relative_error);
                obs.warning(&w);
                notes.push(format!("warning: {w}"));
            }
            Ok(Prepared {
                op: ScenarioOperator::Fft(Box::new(op)),
                data: d,
                active_idx,
                reference_elevation_m: zref,
                check: Some(check),
                notes,
            })
        }
        _ => {
            let avail = available_or_assumed();
            let line = format!(
                "dense operator: {} data × {} cells = {:.0} MB",
                pts.value.len(),
                active_idx.len(),
                pts.value.len() as f64 * active_idx.len() as f64 * 4e-6
            );
            obs.message(&format!("  {line}"));
            notes.push(line);
            let (xyz, nudged) = off_cell_edges(&m.mesh, &pts.xyz);
            if nudged > 0 {
                let line = format!("{nudged} data lay on cell edges, where the field of a cell is singular; they were moved 1 cm east and north");
                obs.message(&format!("  {line}"));
                notes.push(line);
            }
            let op = DenseOperator::build(&m.mesh, &active_idx, &xyz, survey, avail / 2, obs)?;
            Ok(Prepared {
                op: ScenarioOperator::Dense(op),
                data: pts,
                active_idx,
                reference_elevation_m: zref,
                check: None,
                notes,
            })
        }
    }
}

/// The FFT operator's rows at up to [`CHECKED_ROWS`] data spread through the
/// data order, against exact rows at the data's own (draped) heights.
fn check_rows(
    op: &FftOperator,
    mesh: &TensorMesh,
    active: &[usize],
    d: &Points,
    draped: &[f64],
    survey: Survey,
) -> RowCheck {
    let n = d.value.len();
    let step = n.div_ceil(CHECKED_ROWS).max(1);
    let sample: Vec<usize> = (0..n).step_by(step).collect();
    let nodes = mesh.nodes().ok();
    let mut full = vec![0.0; mesh.n_cells()];
    let mut scratch = RowScratch::default();
    op.compare_rows(&sample, |k| {
        let st = [d.xyz[k][0], d.xyz[k][1], draped[k]];
        let ok = match (&nodes, survey) {
            (None, _) => false,
            (Some(nd), Survey::Gravity) => gz_row(nd, st, &mut full, &mut scratch).is_ok(),
            (Some(nd), Survey::Magnetic(f)) => {
                let u = f.unit();
                tmi_row(
                    nd,
                    st,
                    u,
                    u,
                    induced_tmi_scale(f.intensity_nt),
                    &mut full,
                    &mut scratch,
                )
                .is_ok()
            }
        };
        // A station on a magnetised edge has no exact row: left out.
        ok.then(|| active.iter().map(|&c| full[c]).collect())
    })
}
