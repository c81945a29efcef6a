//! The work of each pipeline step.

use super::data::{load_points, write_points, write_text, Points};
use super::operator::scenario_setup;
use super::{at, run_dir};
use crate::commands::grid::{GridArgs, Method};
use crate::commands::reduce::{EllipsoidArg, FreeAirArg, GravityArgs, MagneticArgs};
use fieldstone_core::constraint::build::{build, ConstraintArrays, Defaults};
use fieldstone_core::constraint::region::Inputs;
use fieldstone_core::constraint::wireframe::Wireframe;
use fieldstone_core::demo::truth::TrueModel;
use fieldstone_core::drillhole::tables::{load_holes, DrillholeSpec};
use fieldstone_core::drillhole::DipConvention;
use fieldstone_core::export::figure::{
    map_figure, section_figure_with, MapOptions, ProjectedHole, SectionExtras, BASE_DPI,
};
use fieldstone_core::export::section::{plan_slice, project_onto_line, section, SliceLevel};
use fieldstone_core::export::voxel::{
    mesh_description, write_npy, write_vtr, CellArray, Provenance,
};
use fieldstone_core::filter::regional::{separate, RegionalMethod};
use fieldstone_core::geodesy::normal_gravity::GravityEllipsoid;
use fieldstone_core::grid::geotiff::{read_geotiff, write_geotiff};
use fieldstone_core::grid::Grid2;
use fieldstone_core::invert::solver::invert;
use fieldstone_core::io::atomic::write_bytes_atomically;
use fieldstone_core::memory::available_or_assumed;
use fieldstone_core::mesh::size::estimate;
use fieldstone_core::mesh::topo::{active_cells, ActiveCells};
use fieldstone_core::mesh::TensorMesh;
use fieldstone_core::progress::Observer;
use fieldstone_core::project::file::{DataKind, ProjectFile, Scenario};
use fieldstone_core::project::provenance::hash_json;
use fieldstone_core::reduce::gravity::FreeAir;
use fieldstone_core::table::passthrough::read_passthrough;
use fieldstone_core::table::TextOptions;
use std::fmt::Write as _;
use std::path::{Path, PathBuf};

/// What later steps need and earlier steps made, loaded once per run.
pub struct Context {
    dir: PathBuf,
    model: Option<ModelContext>,
}

impl Context {
    pub fn new(dir: &Path) -> Context {
        Context {
            dir: dir.to_path_buf(),
            model: None,
        }
    }
    /// Drops the loaded mesh and inputs (after a failed step).
    pub fn forget_model(&mut self) {
        self.model = None;
    }
    pub(crate) fn model(&mut self, p: &ProjectFile) -> Result<&ModelContext, String> {
        if self.model.is_none() {
            self.model = Some(load_model_context(&self.dir, p)?);
        }
        Ok(self.model.as_ref().expect("just set"))
    }
}

/// The mesh, its active cells and the named inputs constraint regions use.
pub struct ModelContext {
    pub mesh: TensorMesh,
    pub active: ActiveCells,
    pub dem: Option<Grid2>,
    pub inputs: Inputs,
}

fn hole_spec(dir: &Path, p: &ProjectFile) -> Result<Option<DrillholeSpec>, String> {
    let Some(h) = &p.drill_holes else {
        return Ok(None);
    };
    Ok(Some(DrillholeSpec {
        collars: at(dir, &h.collars)?,
        surveys: h.surveys.as_deref().map(|s| at(dir, s)).transpose()?,
        intervals: h.intervals.as_deref().map(|s| at(dir, s)).transpose()?,
        dip_convention: DipConvention::NegativeDown,
        text: TextOptions::default(),
    }))
}

/// Builds the mesh from the recipe, its active cells under the DEM, and
/// loads the surfaces, wireframes and drill holes.
pub fn load_model_context(dir: &Path, p: &ProjectFile) -> Result<ModelContext, String> {
    let recipe = p
        .mesh
        .as_ref()
        .ok_or("the project has no mesh recipe (set one in Model space)")?;
    let mesh = recipe.build().map_err(|e| format!("mesh: {e}"))?;
    let dem = p
        .dem
        .as_deref()
        .map(|f| at(dir, f).and_then(|f| read_geotiff(&f).map_err(|e| e.to_string())))
        .transpose()?;
    let active = active_cells(&mesh, dem.as_ref(), false, true).map_err(|e| e.to_string())?;
    let mut inputs = Inputs::default();
    for s in &p.surfaces {
        inputs.surfaces.insert(
            s.name.clone(),
            read_geotiff(&at(dir, &s.file)?).map_err(|e| e.to_string())?,
        );
    }
    for w in &p.wireframes {
        inputs.wireframes.insert(
            w.name.clone(),
            Wireframe::read(&at(dir, &w.file)?).map_err(|e| e.to_string())?,
        );
    }
    if let Some(spec) = hole_spec(dir, p)? {
        inputs.holes = Some(load_holes(&spec).map_err(|e| e.to_string())?.0);
    }
    Ok(ModelContext {
        mesh,
        active,
        dem,
        inputs,
    })
}

pub(crate) fn data_path(dir: &Path, f: &str) -> PathBuf {
    dir.join("data").join(f)
}

/// Runs one step; returns a one-line summary.
pub fn run_step(
    step: &str,
    p: &mut ProjectFile,
    ctx: &mut Context,
    scenario: Option<&Scenario>,
    obs: &dyn Observer,
) -> Result<String, String> {
    let dir = ctx.dir.clone();
    match step {
        "import" => import(&dir, p),
        "reduce" => reduce(&dir, p, obs),
        "grid" => grid(&dir, p, obs),
        "regional" => regional(&dir, p, obs),
        "mesh" => {
            ctx.model = None;
            mesh_step(&dir, p, ctx)
        }
        "constraints" => {
            let s = scenario.ok_or("no scenario")?;
            let m = ctx.model(p)?;
            let (c, warnings) = constraints_of(m, s)?;
            let rd = run_dir(&dir, &s.name);
            std::fs::create_dir_all(&rd).map_err(|e| format!("{}: {e}", rd.display()))?;
            write_constraints(&rd.join("constraints.vtr"), &m.mesh, &c, p, s)?;
            for w in &warnings {
                obs.message(&format!("  warning: {w}"));
            }
            let free = c
                .active
                .iter()
                .zip(&c.fixed)
                .filter(|(a, f)| **a && !**f)
                .count();
            Ok(format!(
                "{} layers, {free} free active cells, {} warnings",
                s.layers.iter().filter(|l| l.enabled).count(),
                warnings.len()
            ))
        }
        "inversion" => {
            let s = scenario.ok_or("no scenario")?;
            inversion(&dir, p, ctx, s, obs)
        }
        "exports" => {
            let s = scenario.ok_or("no scenario")?;
            exports(&dir, p, ctx, s, obs)
        }
        "appraisal" => {
            let s = scenario.ok_or("no scenario")?;
            super::appraisal::run(&dir, p, ctx, s, obs)
        }
        other => Err(format!("unknown step {other}")),
    }
}

fn import(dir: &Path, p: &ProjectFile) -> Result<String, String> {
    let mut report = serde_json::Map::new();
    let mut parts = Vec::new();
    let need = |t: &fieldstone_core::table::passthrough::PassThroughTable,
                cols: &[&str]|
     -> Result<(), String> {
        for c in cols {
            t.require(c, "see the project's survey settings")
                .map_err(|e| e.to_string())?;
        }
        Ok(())
    };
    if let Some(g) = &p.gravity {
        let t = read_passthrough(&at(dir, &g.file)?, &[]).map_err(|e| e.to_string())?;
        need(&t, &["x", "y", "height_m", "gravity_mgal"])?;
        if g.base_station.is_some() {
            need(&t, &["time", "station"])?;
        }
        report.insert("gravity_readings".into(), t.n_rows().into());
        parts.push(format!("{} gravity readings", t.n_rows()));
    }
    if let Some(m) = &p.magnetic {
        let t = read_passthrough(&at(dir, &m.file)?, &[]).map_err(|e| e.to_string())?;
        need(&t, &["x", "y", "height_m", "mag_nt"])?;
        report.insert("magnetic_readings".into(), t.n_rows().into());
        parts.push(format!("{} magnetic readings", t.n_rows()));
    }
    if let Some(d) = &p.dem {
        let g = read_geotiff(&at(dir, d)?).map_err(|e| e.to_string())?;
        if let (Some(a), Some(b)) = (g.epsg, p.epsg) {
            if a != b {
                return Err(format!(
                    "{d} is in EPSG:{a} but the project is in EPSG:{b}; reproject one"
                ));
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
            return Err(format!("{}: {}", w.file, c.report()));
        }
        parts.push(format!("wireframe {} closed", w.name));
    }
    for s in &p.surfaces {
        read_geotiff(&at(dir, &s.file)?).map_err(|e| e.to_string())?;
    }
    write_text(
        &data_path(dir, "import_report.json"),
        &serde_json::to_string_pretty(&report).unwrap_or_default(),
    )?;
    Ok(parts.join(", "))
}

/// A reduced table and the numbers of four of its columns.
fn numeric_columns(
    path: &Path,
    names: [&str; 4],
) -> Result<
    (
        fieldstone_core::table::passthrough::PassThroughTable,
        [Vec<f64>; 4],
    ),
    String,
> {
    let t = read_passthrough(path, &[]).map_err(|e| e.to_string())?;
    let mut cols: [Vec<f64>; 4] = Default::default();
    for (c, name) in cols.iter_mut().zip(names) {
        let i = t.require(name, "").map_err(|e| e.to_string())?;
        *c = t.numbers(i, true).map_err(|e| e.to_string())?;
    }
    Ok((t, cols))
}

fn reduce(dir: &Path, p: &ProjectFile, obs: &dyn Observer) -> Result<String, String> {
    let mut parts = Vec::new();
    if let Some(g) = &p.gravity {
        let s = p.gravity_reduction.unwrap_or_default();
        let out = data_path(dir, "gravity_reduced.csv");
        crate::commands::reduce::gravity_with(
            &GravityArgs {
                input: at(dir, &g.file)?,
                density: s.density_g_cc,
                out: out.clone(),
                ellipsoid: match s.ellipsoid {
                    GravityEllipsoid::Grs80 => EllipsoidArg::Grs80,
                    GravityEllipsoid::Wgs84 => EllipsoidArg::Wgs84,
                },
                free_air: match s.free_air {
                    FreeAir::SecondOrder => FreeAirArg::SecondOrder,
                    FreeAir::FirstOrder => FreeAirArg::FirstOrder,
                },
                no_atmospheric: !s.atmospheric,
                no_curvature: !s.curvature,
                dem: match (&p.dem, g.terrain_outer_m) {
                    (Some(d), Some(_)) => Some(at(dir, d)?),
                    _ => None,
                },
                terrain_outer_m: g.terrain_outer_m.filter(|_| p.dem.is_some()),
                terrain_inner_m: 0.0,
                far_dem: None,
                epsg: p.epsg,
                base_value: g.base_value_mgal,
                base_station: g.base_station.clone(),
                max_drift: g.max_drift_mgal_per_h,
                no_tide: !g.tide,
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
        crate::commands::reduce::magnetic(&MagneticArgs {
            input: at(dir, &m.file)?,
            date: m.date.clone(),
            out: out.clone(),
            base: m.base_file.as_deref().map(|b| at(dir, b)).transpose()?,
            datum_nt: None,
            max_gap_s: 120.0,
            epsg: p.epsg,
        })?;
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

fn kinds(p: &ProjectFile) -> Vec<(&'static str, &'static str, &'static str, &'static str)> {
    // (kind, points file, value column, units)
    let mut v = Vec::new();
    if p.gravity.is_some() {
        v.push(("gravity", "gravity_stations.csv", "cba_mgal", "mGal"));
    }
    if p.magnetic.is_some() {
        v.push(("magnetic", "magnetic_points.csv", "tmi_nt", "nT"));
    }
    v
}

fn grid(dir: &Path, p: &ProjectFile, obs: &dyn Observer) -> Result<String, String> {
    let gs = p
        .gridding
        .clone()
        .ok_or("the project has no gridding settings")?;
    let mut parts = Vec::new();
    for (kind, file, col, units) in kinds(p) {
        let out = data_path(dir, &format!("{kind}_grid.tif"));
        crate::commands::grid::run_with(
            &GridArgs {
                input: data_path(dir, file),
                x: "x".into(),
                y: "y".into(),
                value: col.into(),
                cell: gs.cell_m,
                out: out.clone(),
                tension: gs.tension,
                blank_m: None,
                hull: false,
                method: Method::MinCurvature,
                epsg: p.epsg,
                units: units.into(),
            },
            obs,
        )?;
        parts.push(format!("{kind} gridded at {} m", gs.cell_m));
    }
    Ok(parts.join(", "))
}

fn regional(dir: &Path, p: &ProjectFile, obs: &dyn Observer) -> Result<String, String> {
    let mut parts = Vec::new();
    for (kind, file, col, _) in kinds(p) {
        let method = match kind {
            "gravity" => p
                .regional
                .clone()
                .ok_or("the project has no regional method for gravity")?,
            _ => p
                .magnetic_regional
                .clone()
                .unwrap_or(RegionalMethod::Plane {
                    origin_m: [0.0, 0.0],
                    value: 0.0,
                    gradient_per_km: [0.0, 0.0],
                }),
        };
        let g = read_geotiff(&data_path(dir, &format!("{kind}_grid.tif")))
            .map_err(|e| e.to_string())?;
        let (reg, res) = separate(&g, &method, obs).map_err(|e| e.to_string())?;
        write_geotiff(&data_path(dir, &format!("{kind}_regional.tif")), &reg)
            .map_err(|e| e.to_string())?;
        write_geotiff(&data_path(dir, &format!("{kind}_residual.tif")), &res)
            .map_err(|e| e.to_string())?;
        let pts = load_points(&data_path(dir, file))?;
        let (floor, pct) = match kind {
            "gravity" => p
                .gravity
                .as_ref()
                .map(|g| (g.uncertainty_floor_mgal, g.uncertainty_percent))
                .unwrap_or((0.02, 0.0)),
            _ => p
                .magnetic
                .as_ref()
                .map(|m| (m.uncertainty_floor_nt, m.uncertainty_percent))
                .unwrap_or((1.0, 2.0)),
        };
        let mut out = Points::default();
        let mut skipped = 0;
        for k in 0..pts.value.len() {
            match reg.sample(pts.xyz[k][0], pts.xyz[k][1]) {
                Ok(r) if r.is_finite() => {
                    let v = pts.value[k] - r;
                    out.xyz.push(pts.xyz[k]);
                    out.value.push(v);
                    out.uncertainty.push(floor + 0.01 * pct * v.abs());
                }
                _ => skipped += 1,
            }
        }
        write_points(&data_path(dir, &format!("{kind}_data.csv")), &out, &format!("residual_{col}"), &format!("residual after the regional ({method:?}) at the data points, with the data uncertainty (floor {floor} + {pct} %)"))?;
        parts.push(format!(
            "{kind}: {} residual data{}",
            out.value.len(),
            if skipped > 0 {
                format!(" ({skipped} outside the regional grid left out)")
            } else {
                String::new()
            }
        ));
    }
    Ok(parts.join("; "))
}

pub fn prov(p: &ProjectFile, source: &str, units: &str) -> Provenance {
    Provenance {
        program: format!("Fieldstone {}", env!("CARGO_PKG_VERSION")),
        source: source.into(),
        units: units.into(),
        background: format!(
            "density contrasts relative to {} g/cm³",
            p.background_density_g_cc
        ),
        epsg: p.epsg,
    }
}

fn mesh_step(dir: &Path, p: &ProjectFile, ctx: &mut Context) -> Result<String, String> {
    let m = ctx.model(p)?;
    let n_data = kinds(p)
        .iter()
        .map(|(k, ..)| {
            load_points(&data_path(dir, &format!("{k}_data.csv")))
                .map(|d| d.value.len())
                .unwrap_or(0)
        })
        .max()
        .unwrap_or(0);
    let est = estimate(
        m.mesh.n_cells(),
        m.active.count(),
        n_data,
        Some(available_or_assumed()),
    );
    let pv = prov(p, "mesh recipe of project.json", "m");
    let mut desc =
        serde_json::to_value(mesh_description(&m.mesh, &pv)).map_err(|e| e.to_string())?;
    desc["active_cells"] = m.active.count().into();
    desc["size_estimate"] = serde_json::to_value(&est).map_err(|e| e.to_string())?;
    write_text(
        &data_path(dir, "mesh.json"),
        &serde_json::to_string_pretty(&desc).unwrap_or_default(),
    )?;
    let act: Vec<f64> = m.active.as_values();
    write_npy(&data_path(dir, "active.npy"), &m.mesh, &act).map_err(|e| e.to_string())?;
    let [nx, ny, nz] = m.mesh.shape();
    Ok(format!(
        "{nx} × {ny} × {nz} = {} cells, {} active; dense sensitivity {:.0} MB",
        m.mesh.n_cells(),
        m.active.count(),
        est.dense_bytes as f64 / 1e6
    ))
}

/// The constraint arrays of a scenario.
pub fn constraints_of(
    m: &ModelContext,
    s: &Scenario,
) -> Result<(ConstraintArrays, Vec<String>), String> {
    let d = match s.data {
        DataKind::Gravity => Defaults::density(),
        DataKind::Magnetic => Defaults::susceptibility(),
    };
    build(&m.mesh, &m.active, &s.layers, d, &m.inputs).map_err(|e| e.to_string())
}

pub fn units_of(k: DataKind) -> (&'static str, &'static str) {
    match k {
        DataKind::Gravity => ("g/cm³ (density contrast)", "mGal"),
        DataKind::Magnetic => ("SI (susceptibility)", "nT"),
    }
}

fn finite_or_nan(v: &[f64]) -> Vec<f64> {
    v.iter()
        .map(|x| if x.is_finite() { *x } else { f64::NAN })
        .collect()
}

pub fn write_constraints(
    path: &Path,
    mesh: &TensorMesh,
    c: &ConstraintArrays,
    p: &ProjectFile,
    s: &Scenario,
) -> Result<(), String> {
    let (lo, hi) = (finite_or_nan(&c.lower), finite_or_nan(&c.upper));
    let fixed: Vec<f64> = c.fixed.iter().map(|f| if *f { 1.0 } else { 0.0 }).collect();
    let active: Vec<f64> = c
        .active
        .iter()
        .map(|f| if *f { 1.0 } else { 0.0 })
        .collect();
    let arrays = [
        CellArray {
            name: "lower_bound",
            values: &lo,
        },
        CellArray {
            name: "upper_bound",
            values: &hi,
        },
        CellArray {
            name: "reference",
            values: &c.reference,
        },
        CellArray {
            name: "reference_weight",
            values: &c.reference_weight,
        },
        CellArray {
            name: "starting",
            values: &c.starting,
        },
        CellArray {
            name: "fixed",
            values: &fixed,
        },
        CellArray {
            name: "active",
            values: &active,
        },
    ];
    let pv = prov(
        p,
        &format!(
            "constraints of scenario '{}' (unbounded shown as NaN)",
            s.name
        ),
        units_of(s.data).0,
    );
    write_vtr(path, mesh, &arrays, &pv, true).map_err(|e| e.to_string())
}

/// The data of a scenario.
pub fn scenario_data(dir: &Path, s: &Scenario) -> Result<Points, String> {
    load_points(&data_path(
        dir,
        match s.data {
            DataKind::Gravity => "gravity_data.csv",
            DataKind::Magnetic => "magnetic_data.csv",
        },
    ))
}

/// Comparison of a model with the known truth of an invented project.
#[derive(Debug, Clone, serde::Serialize, serde::Deserialize, PartialEq)]
pub struct TruthComparison {
    pub rms_difference_core: f64,
    pub rms_difference_body: f64,
    pub body_cells: usize,
    pub correlation_core: f64,
}

fn truth_on_mesh(
    dir: &Path,
    p: &ProjectFile,
    m: &ModelContext,
    kind: DataKind,
) -> Result<Option<Vec<f64>>, String> {
    let Some(t) = &p.truth else { return Ok(None) };
    let path = at(dir, t)?;
    let text = std::fs::read_to_string(&path).map_err(|e| format!("{}: {e}", path.display()))?;
    let tm: TrueModel =
        serde_json::from_str(&text).map_err(|e| format!("{}: {e}", path.display()))?;
    Ok(Some(match kind {
        DataKind::Gravity => tm.on_mesh(&m.mesh, &m.active.active, 3, |t, q| t.density_at(q)),
        DataKind::Magnetic => {
            tm.on_mesh(&m.mesh, &m.active.active, 3, |t, q| t.susceptibility_at(q))
        }
    }))
}

fn compare(mesh: &TensorMesh, active: &[bool], model: &[f64], truth: &[f64]) -> TruthComparison {
    let [nx, ny, _] = mesh.shape();
    let in_core = |c: usize| {
        let (i, j, k) = (c % nx, (c / nx) % ny, c / (nx * ny));
        let [(i0, i1), (j0, j1), (k0, k1)] = mesh.core;
        (i0..i1).contains(&i) && (j0..j1).contains(&j) && (k0..k1).contains(&k)
    };
    let tmax = truth.iter().cloned().fold(0.0f64, f64::max);
    let (mut s2, mut n, mut b2, mut nb) = (0.0, 0usize, 0.0, 0usize);
    let (mut sm, mut st, mut smm, mut stt, mut smt) = (0.0, 0.0, 0.0, 0.0, 0.0);
    for c in 0..model.len() {
        if !active[c] || !in_core(c) {
            continue;
        }
        let d = model[c] - truth[c];
        s2 += d * d;
        n += 1;
        if tmax > 0.0 && truth[c] >= 0.5 * tmax {
            b2 += d * d;
            nb += 1;
        }
        sm += model[c];
        st += truth[c];
        smm += model[c] * model[c];
        stt += truth[c] * truth[c];
        smt += model[c] * truth[c];
    }
    let nf = n.max(1) as f64;
    let cov = smt / nf - sm * st / (nf * nf);
    let var = ((smm / nf - (sm / nf).powi(2)) * (stt / nf - (st / nf).powi(2))).sqrt();
    TruthComparison {
        rms_difference_core: (s2 / nf).sqrt(),
        rms_difference_body: (b2 / nb.max(1) as f64).sqrt(),
        body_cells: nb,
        correlation_core: if var > 0.0 { cov / var } else { 0.0 },
    }
}

/// Everything in a run's `summary.json`.
#[derive(Debug, Clone, serde::Serialize, serde::Deserialize)]
pub struct RunFile {
    pub scenario: String,
    pub data: DataKind,
    pub model_units: String,
    pub data_units: String,
    pub background: String,
    pub program: String,
    #[serde(flatten)]
    pub summary: fieldstone_core::invert::RunSummary,
    pub truth_comparison: Option<TruthComparison>,
    /// For the FFT operator: its rows against exact rows at sample data.
    #[serde(default)]
    pub operator_check: Option<fieldstone_core::operator::fft::RowCheck>,
    /// SHA-256 of the JSON of the mesh recipe, the constraint layers and the
    /// inversion settings this model came from.
    #[serde(default)]
    pub recipe_hashes: std::collections::BTreeMap<String, String>,
    pub caution: String,
}

pub const CAUTION: &str = "Potential-field models are non-unique: this model is one of infinitely many that fit the data, and the constraints decided which one you see. Interpretation and public reporting of exploration results follow the reporting codes of the jurisdiction and the judgement of a qualified person.";

fn inversion(
    dir: &Path,
    p: &ProjectFile,
    ctx: &mut Context,
    s: &Scenario,
    obs: &dyn Observer,
) -> Result<String, String> {
    let (m, c, prep) = scenario_setup(dir, p, ctx, s, obs)?;
    let pb = prep.problem(&m.mesh, &c);
    let result = invert(&prep.op, &pb, &s.settings, obs).map_err(|e| e.to_string())?;
    let (data_used, active_idx) = (&prep.data, &prep.active_idx);
    let rd = run_dir(dir, &s.name);
    std::fs::create_dir_all(&rd).map_err(|e| format!("{}: {e}", rd.display()))?;
    let mut full = vec![f64::NAN; m.mesh.n_cells()];
    for (v, &k) in result.model.iter().zip(active_idx) {
        full[k] = *v;
    }
    let (mu, du) = units_of(s.data);
    write_npy(&rd.join("model.npy"), &m.mesh, &full).map_err(|e| e.to_string())?;
    let truth = truth_on_mesh(dir, p, m, s.data)?;
    let comparison = truth.as_ref().map(|t| {
        let model0: Vec<f64> = full
            .iter()
            .map(|v| if v.is_finite() { *v } else { 0.0 })
            .collect();
        compare(&m.mesh, &c.active, &model0, t)
    });
    let pv = prov(p, &format!("inversion of scenario '{}'", s.name), mu);
    let mut arrays = vec![CellArray {
        name: "model",
        values: &full,
    }];
    let truth_nan: Option<Vec<f64>> = truth.as_ref().map(|t| {
        t.iter()
            .zip(&c.active)
            .map(|(v, a)| if *a { *v } else { f64::NAN })
            .collect()
    });
    if let Some(t) = &truth_nan {
        arrays.push(CellArray {
            name: "true_model_invented",
            values: t,
        });
        write_npy(&rd.join("true_model_invented.npy"), &m.mesh, t).map_err(|e| e.to_string())?;
    }
    write_vtr(&rd.join("model.vtr"), &m.mesh, &arrays, &pv, true).map_err(|e| e.to_string())?;
    // Predicted data and residuals.
    let mut csv = format!("# predicted data of scenario '{}', {du}\nx,y,z,observed,predicted,residual,uncertainty,normalised_residual\n", s.name);
    for k in 0..data_used.value.len() {
        let [x, y, z] = data_used.xyz[k];
        let (o, pr, u) = (
            data_used.value[k],
            result.predicted[k],
            data_used.uncertainty[k],
        );
        writeln!(
            csv,
            "{x:.3},{y:.3},{z:.3},{o:.6},{pr:.6},{:.6},{u:.6},{:.4}",
            o - pr,
            (o - pr) / u
        )
        .ok();
    }
    write_text(&rd.join("predicted.csv"), &csv)?;
    let mut log = String::from(
        "iteration,beta,phi_d,phi_m,chi_factor,cg_iterations,at_lower,at_upper,epsilon,elapsed_s\n",
    );
    for r in &result.log {
        writeln!(
            log,
            "{},{:.6e},{:.6e},{:.6e},{:.5},{},{},{},{},{:.3}",
            r.iteration,
            r.beta,
            r.phi_d,
            r.phi_m,
            r.chi_factor,
            r.cg_iterations,
            r.at_lower,
            r.at_upper,
            r.epsilon.map(|e| format!("{e:.3e}")).unwrap_or_default(),
            r.elapsed_s
        )
        .ok();
    }
    write_text(&rd.join("log.csv"), &log)?;
    write_text(
        &rd.join("log.json"),
        &serde_json::to_string_pretty(&result.log).unwrap_or_default(),
    )?;
    let rf = RunFile {
        scenario: s.name.clone(),
        data: s.data,
        model_units: mu.into(),
        data_units: du.into(),
        background: pv.background.clone(),
        program: pv.program.clone(),
        summary: result.summary.clone(),
        truth_comparison: comparison.clone(),
        operator_check: prep.check.clone(),
        recipe_hashes: [
            ("mesh", hash_json(&p.mesh)),
            ("layers", hash_json(&s.layers)),
            ("settings", hash_json(&s.settings)),
        ]
        .into_iter()
        .map(|(k, v)| (k.to_string(), v))
        .collect(),
        caution: CAUTION.into(),
    };
    write_text(
        &rd.join("summary.json"),
        &serde_json::to_string_pretty(&rf).map_err(|e| e.to_string())?,
    )?;
    Ok(format!(
        "{} data, {} cells, chi-factor {:.3}, {} iterations, {}{}",
        result.summary.n_data,
        result.summary.n_cells_active,
        result.summary.chi_factor,
        result.summary.iterations,
        result.summary.stopped_because,
        comparison
            .map(|c| format!(
                "; against the invented truth: RMS {:.4} in the core, {:.4} in the body",
                c.rms_difference_core, c.rms_difference_body
            ))
            .unwrap_or_default()
    ))
}

/// Loads a run's model (full mesh, NaN in air) from `model.npy`.
pub fn load_model(dir: &Path, scenario: &str, n_cells: usize) -> Result<Vec<f64>, String> {
    load_run_array(dir, scenario, "model.npy", n_cells)
}

/// Loads a per-cell array of a run (`model.npy`, `doi.npy`, …; full mesh,
/// NaN in air).
pub fn load_run_array(
    dir: &Path,
    scenario: &str,
    file: &str,
    n_cells: usize,
) -> Result<Vec<f64>, String> {
    let path = run_dir(dir, scenario).join(file);
    let bytes = std::fs::read(&path).map_err(|e| format!("{}: {e}", path.display()))?;
    if bytes.len() < 10 || &bytes[..6] != b"\x93NUMPY" {
        return Err(format!("{} is not a NumPy file", path.display()));
    }
    let hl = u16::from_le_bytes([bytes[8], bytes[9]]) as usize;
    let body = bytes
        .get(10 + hl..)
        .ok_or_else(|| format!("{} is cut short inside its header", path.display()))?;
    if body.len() != n_cells * 8 {
        return Err(format!(
            "{} holds {} values but the mesh has {n_cells} cells; rerun the scenario",
            path.display(),
            body.len() / 8
        ));
    }
    Ok(body
        .chunks_exact(8)
        .map(|c| f64::from_le_bytes(c.try_into().expect("8 bytes")))
        .collect())
}

/// Observed points (with uncertainty) and predicted values from a run's `predicted.csv`.
pub fn read_predicted(path: &Path) -> Option<(Points, Vec<f64>)> {
    let text = std::fs::read_to_string(path).ok()?;
    let mut obs = Points::default();
    let mut pred = Vec::new();
    for line in text.lines().filter(|l| !l.starts_with('#')).skip(1) {
        let v: Vec<f64> = line.split(',').filter_map(|s| s.parse().ok()).collect();
        if v.len() >= 7 {
            obs.xyz.push([v[0], v[1], v[2]]);
            obs.value.push(v[3]);
            pred.push(v[4]);
            obs.uncertainty.push(v[6]);
        }
    }
    Some((obs, pred))
}

/// Every drill hole of the project: id, collar and 21 points down its
/// desurveyed trace to the total depth (or the last logged interval).
pub fn hole_traces(m: &ModelContext) -> Vec<(String, [f64; 3], Vec<[f64; 3]>)> {
    let Some(hs) = &m.inputs.holes else {
        return vec![];
    };
    hs.holes
        .iter()
        .map(|h| {
            let tr = fieldstone_core::drillhole::desurvey::Trace::of(h);
            let td = h
                .total_depth_m
                .or(h.intervals.last().map(|i| i.to_m))
                .unwrap_or(0.0);
            (
                h.id.clone(),
                h.collar,
                (0..=20).map(|k| tr.at(td * k as f64 / 20.0)).collect(),
            )
        })
        .collect()
}

/// The logged values shown beside holes on a section: which interval column
/// and the background subtracted so they sit on the model's scale.
#[derive(Debug, Clone, PartialEq)]
pub struct HoleLog {
    pub column: usize,
    pub background: f64,
    pub label: String,
}

/// The hole log matching a scenario's model: the column a layer takes its
/// reference from, else a density column for gravity or a susceptibility
/// column for magnetics (by name).
pub fn hole_log_for(m: &ModelContext, p: &ProjectFile, s: &Scenario) -> Option<HoleLog> {
    let hs = m.inputs.holes.as_ref()?;
    let (mu, _) = units_of(s.data);
    let unit = mu.split(" (").next().unwrap_or(mu);
    let from_layer = s
        .layers
        .iter()
        .filter(|l| l.enabled)
        .find_map(|l| l.assign.from_holes.as_ref())
        .and_then(|hv| {
            hs.value_names
                .iter()
                .position(|n| n.eq_ignore_ascii_case(&hv.column))
                .map(|c| (c, hv.background))
        });
    let (column, background) = from_layer.or_else(|| {
        let (key, bg) = match s.data {
            DataKind::Gravity => ("dens", p.background_density_g_cc),
            DataKind::Magnetic => ("sus", 0.0),
        };
        hs.value_names
            .iter()
            .position(|n| n.to_ascii_lowercase().contains(key))
            .map(|c| (c, bg))
    })?;
    let name = &hs.value_names[column];
    let label = if background != 0.0 {
        format!("logged {name} − {background} {unit}")
    } else {
        format!("logged {name} ({unit})")
    };
    Some(HoleLog {
        column,
        background,
        label,
    })
}

/// How a run's figures are drawn (project export settings or command options).
#[derive(Debug, Clone, Default, PartialEq)]
pub struct FigureStyle {
    /// Holes and data within this distance of a section line are projected
    /// onto it (default: one core cell).
    pub hole_distance_m: Option<f64>,
    pub colour_map: Option<fieldstone_core::export::figure::ColourMap>,
    /// Map figures: contour interval in the grid's units (None: no contours).
    pub contour_interval: Option<f64>,
    /// Map figures: shade by the grid's relief.
    pub hillshade: bool,
}

/// What a map figure of the project shows besides its grid: drill-hole
/// collars, the project's section lines, the polygons of a scenario's
/// layers and, when given, station positions.
pub fn map_options(
    p: &ProjectFile,
    m: Option<&ModelContext>,
    scenario: Option<&Scenario>,
    stations: Vec<[f64; 2]>,
    style: &FigureStyle,
    title: String,
    units: &str,
) -> MapOptions {
    let collars = m
        .map(|m| {
            hole_traces(m)
                .into_iter()
                .map(|(id, c, _)| (id, [c[0], c[1]]))
                .collect()
        })
        .unwrap_or_default();
    let polygons = scenario
        .map(|s| {
            s.layers
                .iter()
                .filter(|l| l.enabled)
                .filter_map(|l| match &l.region {
                    fieldstone_core::constraint::region::Region::Polygon { vertices, .. } => {
                        Some((l.name.clone(), vertices.clone()))
                    }
                    _ => None,
                })
                .collect()
        })
        .unwrap_or_default();
    MapOptions {
        title,
        units: units.into(),
        colour_map: style.colour_map,
        hillshade: style.hillshade,
        contour_interval: style.contour_interval,
        stations,
        polygons,
        lines: p
            .exports
            .sections
            .iter()
            .map(|l| (l.name.clone(), l.vertices.clone()))
            .collect(),
        collars,
        caption: format!(
            "{}{} — {}",
            p.name,
            scenario
                .map(|s| format!(" — scenario {}", s.name))
                .unwrap_or_default(),
            now_date()
        ),
    }
}

/// The figure of a plan slice of a scenario's model.
pub fn run_slice_figure(
    p: &ProjectFile,
    m: &ModelContext,
    s: &Scenario,
    g: &Grid2,
    title: String,
    style: &FigureStyle,
) -> fieldstone_core::export::figure::Figure {
    let (mu, _) = units_of(s.data);
    map_figure(
        g,
        &map_options(p, Some(m), Some(s), vec![], style, title, mu),
    )
}

impl FigureStyle {
    /// The style the project's export settings ask for.
    pub fn of(p: &ProjectFile) -> FigureStyle {
        FigureStyle {
            hole_distance_m: p.exports.hole_distance_m,
            colour_map: p
                .exports
                .colour_map
                .as_deref()
                .and_then(fieldstone_core::export::figure::ColourMap::named),
            contour_interval: None,
            hillshade: false,
        }
    }
}

/// Drill holes and data near a section line, for its figure: holes and data
/// within `max_off_m` of the line are projected onto it, holes with their
/// logged values when `log` names a column.
pub fn section_extras(
    m: &ModelContext,
    line: &[[f64; 2]],
    run: Option<(&Points, &[f64])>,
    max_off_m: f64,
    data_units: &str,
    caption: String,
    log: Option<&HoleLog>,
) -> SectionExtras {
    let mut e = SectionExtras {
        data_units: data_units.into(),
        caption,
        log_label: log.map(|l| l.label.clone()).unwrap_or_default(),
        ..Default::default()
    };
    let project = |p: [f64; 3]| {
        project_onto_line(line, [p[0], p[1]])
            .filter(|(_, off)| *off <= max_off_m)
            .map(|(d, _)| [d, p[2]])
    };
    let holes = m
        .inputs
        .holes
        .as_ref()
        .map(|h| h.holes.as_slice())
        .unwrap_or(&[]);
    for ((id, _, trace), hole) in hole_traces(m).into_iter().zip(holes) {
        let pts: Vec<[f64; 2]> = trace.iter().filter_map(|p| project(*p)).collect();
        if pts.len() < 2 {
            continue;
        }
        let mut logs = Vec::new();
        if let Some(l) = log {
            let tr = fieldstone_core::drillhole::desurvey::Trace::of(hole);
            for iv in &hole.intervals {
                let Some(v) = iv.values.get(l.column).filter(|v| v.is_finite()) else {
                    continue;
                };
                if let (Some(a), Some(b)) = (project(tr.at(iv.from_m)), project(tr.at(iv.to_m))) {
                    logs.push((a, b, v - l.background));
                }
            }
        }
        e.holes.push(ProjectedHole {
            id,
            trace: pts,
            logs,
        });
    }
    if let Some((obs, pred)) = run {
        let mut rows: Vec<(f64, f64, f64)> = obs
            .xyz
            .iter()
            .zip(obs.value.iter().zip(pred))
            .filter_map(|(p, (o, q))| {
                project_onto_line(line, [p[0], p[1]])
                    .filter(|(_, off)| *off <= max_off_m)
                    .map(|(d, _)| (d, *o, *q))
            })
            .collect();
        rows.sort_by(|a, b| a.0.total_cmp(&b.0));
        e.observed = rows.iter().map(|r| [r.0, r.1]).collect();
        e.predicted = rows.iter().map(|r| [r.0, r.2]).collect();
    }
    e
}

/// The figure of a section of a scenario's model: terrain, drill holes with
/// their logged values and data within the style's distance of the line
/// (default one core cell), the caption with project, run and date.
#[allow(clippy::too_many_arguments)]
pub fn run_section_figure(
    dir: &Path,
    p: &ProjectFile,
    m: &ModelContext,
    s: &Scenario,
    samples: &[fieldstone_core::export::section::SectionSample],
    line: &[[f64; 2]],
    title: &str,
    style: &FigureStyle,
) -> fieldstone_core::export::figure::Figure {
    let (mu, du) = units_of(s.data);
    let cell = m.mesh.x[m.mesh.core[0].0 + 1] - m.mesh.x[m.mesh.core[0].0];
    let run = read_predicted(&run_dir(dir, &s.name).join("predicted.csv"));
    let caption = format!("{} — scenario {} — {}", p.name, s.name, now_date());
    let log = hole_log_for(m, p, s);
    let mut extras = section_extras(
        m,
        line,
        run.as_ref().map(|(o, q)| (o, q.as_slice())),
        style.hole_distance_m.unwrap_or(cell),
        du,
        caption,
        log.as_ref(),
    );
    extras.colour_map = style.colour_map;
    section_figure_with(
        samples,
        &m.mesh.z,
        &terrain_along(m, samples),
        title,
        mu,
        &extras,
    )
}

fn now_date() -> String {
    super::now_iso().chars().take(10).collect()
}

/// Terrain elevation under each distinct sample position of a section.
pub fn terrain_along(
    m: &ModelContext,
    samples: &[fieldstone_core::export::section::SectionSample],
) -> Vec<[f64; 2]> {
    let [nx, _, _] = m.mesh.shape();
    let mut out: Vec<[f64; 2]> = Vec::new();
    for q in samples {
        if out.last().is_some_and(|l| l[0] == q.distance_m) {
            continue;
        }
        if let Some((i, j, _)) = m.mesh.locate([q.x, q.y, m.mesh.z[0]]) {
            let z = m.active.surface_m[i + nx * j];
            if z.is_finite() {
                out.push([q.distance_m, z]);
            }
        }
    }
    out.sort_by(|a, b| a[0].total_cmp(&b[0]));
    out.dedup_by(|a, b| a[0] == b[0]);
    out
}

/// Predicted data and misfit (observed − predicted) of a run gridded on the
/// lattice of the residual grid it inverted (minimum curvature, blanked where
/// that grid is blank): `predicted.tif` and `misfit.tif` in the run folder.
fn fit_grids(
    dir: &Path,
    s: &Scenario,
    rd: &Path,
    observer: &dyn Observer,
) -> Result<Vec<String>, String> {
    let kind = match s.data {
        DataKind::Gravity => "gravity",
        DataKind::Magnetic => "magnetic",
    };
    let (_, du) = units_of(s.data);
    let Some((obs, pred)) = read_predicted(&rd.join("predicted.csv")) else {
        return Ok(vec![]);
    };
    let template = read_geotiff(&data_path(dir, &format!("{kind}_residual.tif")))
        .map_err(|e| e.to_string())?;
    let x: Vec<f64> = obs.xyz.iter().map(|p| p[0]).collect();
    let y: Vec<f64> = obs.xyz.iter().map(|p| p[1]).collect();
    let misfit: Vec<f64> = obs.value.iter().zip(&pred).map(|(o, q)| o - q).collect();
    let settings = fieldstone_core::grid::mincurv::MinCurvSettings::default();
    let mut files = vec![];
    for (name, v, what) in [
        ("predicted", &pred, "predicted data"),
        ("misfit", &misfit, "observed minus predicted"),
    ] {
        let mut g = fieldstone_core::grid::mincurv::min_curvature(
            &x, &y, v, &template, &settings, observer,
        )
        .map_err(|e| format!("gridding the {what} of '{}': {e}", s.name))?;
        for (gv, tv) in g.values.iter_mut().zip(&template.values) {
            if !tv.is_finite() {
                *gv = f64::NAN;
            }
        }
        g.units = du.into();
        g.epsg = template.epsg;
        g.note = format!(
            "{what} of scenario {}, gridded by minimum curvature",
            s.name
        );
        let f = format!("{name}.tif");
        write_geotiff(&rd.join(&f), &g).map_err(|e| e.to_string())?;
        files.push(f);
    }
    Ok(files)
}

fn exports(
    dir: &Path,
    p: &ProjectFile,
    ctx: &mut Context,
    s: &Scenario,
    obs: &dyn Observer,
) -> Result<String, String> {
    let stop = || -> Result<(), String> {
        if obs.cancelled() {
            Err("cancelled".into())
        } else {
            Ok(())
        }
    };
    let m = ctx.model(p)?;
    let model = load_model(dir, &s.name, m.mesh.n_cells())?;
    let rd = run_dir(dir, &s.name);
    let (mu, _) = units_of(s.data);
    stop()?;
    let mut files = fit_grids(dir, s, &rd, obs)?;
    let step = m.mesh.x[m.mesh.core[0].0 + 1] - m.mesh.x[m.mesh.core[0].0];
    for line in &p.exports.sections {
        stop()?;
        let samples = section(&m.mesh, &model, &line.vertices, step).map_err(|e| e.to_string())?;
        let mut csv = format!(
            "# section '{}' of scenario '{}', {mu}; NaN in air\ndistance_m,x,y,elevation_m,value\n",
            line.name, s.name
        );
        for q in &samples {
            writeln!(
                csv,
                "{:.2},{:.2},{:.2},{:.2},{:.6}",
                q.distance_m, q.x, q.y, q.elevation_m, q.value
            )
            .ok();
        }
        let f = format!("section_{}.csv", super::safe_name(&line.name));
        write_text(&rd.join(&f), &csv)?;
        files.push(f);
        if p.exports.figures {
            let fig = run_section_figure(
                dir,
                p,
                m,
                s,
                &samples,
                &line.vertices,
                &format!("{} — section {}", s.name, line.name),
                &FigureStyle::of(p),
            );
            let dpi = p.exports.figure_dpi.unwrap_or(BASE_DPI);
            for (ext, bytes) in [
                ("png", fig.png_at_dpi(dpi)),
                ("svg", fig.svg().into_bytes()),
            ] {
                let f = format!("section_{}.{ext}", super::safe_name(&line.name));
                write_bytes_atomically(&rd.join(&f), &bytes).map_err(|e| e.to_string())?;
                files.push(f);
            }
        }
    }
    for d in &p.exports.slice_depths_m {
        stop()?;
        let g = plan_slice(
            &m.mesh,
            &model,
            SliceLevel::Depth(*d),
            Some(&m.active.surface_m),
        )
        .map_err(|e| e.to_string())?;
        let f = format!("slice_{d}m_depth.tif");
        write_geotiff(&rd.join(&f), &g).map_err(|e| e.to_string())?;
        files.push(f);
        if p.exports.figures {
            let fig = run_slice_figure(
                p,
                m,
                s,
                &g,
                format!("{} — plan slice {d} m below the surface", s.name),
                &FigureStyle::of(p),
            );
            let dpi = p.exports.figure_dpi.unwrap_or(BASE_DPI);
            for (ext, bytes) in [
                ("png", fig.png_at_dpi(dpi)),
                ("svg", fig.svg().into_bytes()),
            ] {
                let f = format!("slice_{d}m_depth.{ext}");
                write_bytes_atomically(&rd.join(&f), &bytes).map_err(|e| e.to_string())?;
                files.push(f);
            }
        }
    }
    write_text(
        &rd.join("exports.json"),
        &serde_json::to_string_pretty(&files).unwrap_or_default(),
    )?;
    Ok(format!("{} files", files.len()))
}
