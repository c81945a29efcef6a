//! Writing the demo project folder.

use super::truth::TrueModel;
use crate::constraint::build::{Assignments, Contact, ContactAlong, HoleValues, Layer};
use crate::constraint::region::Region;
use crate::drillhole::desurvey::direction;
use crate::filter::regional::RegionalMethod;
use crate::geodesy::crs::Crs;
use crate::geodesy::igrf::{decimal_year_of_date, IgrfModel};
use crate::grid::geotiff::write_geotiff;
use crate::grid::Grid2;
use crate::invert::{InversionSettings, Weighting};
use crate::mesh::recipe::{MeshRecipe, Padding};
use crate::physics::gravity::prism_gz_mgal;
use crate::physics::magnetic::{prism_field_nt, tmi_nt, InducingField};
use crate::physics::Prism;
use crate::progress::Observer;
use crate::project::file::{
    DataKind, ExportSettings, GravityInput, GridSettings, HoleInput, MagneticInput, NamedFile,
    OperatorChoice, ProjectFile, Scenario, SectionLine,
};
use crate::reduce::gravity::{reduce_station, GravitySettings};
use crate::reduce::magnetic::mean_inducing_field;
use crate::reduce::terrain::{terrain_corrections, TerrainSettings};
use crate::reduce::tide::tide_effect_mgal;
use crate::time::{format_iso, parse_datetime, DateOrder};
use rayon::prelude::*;
use std::fmt::Write as _;
use std::path::{Path, PathBuf};
use thiserror::Error;

/// How big a demo to write.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum DemoSize {
    /// Stations every 25 m on 100 m lines over 1.5 × 1.0 km, magnetics every
    /// 5 m, a 25 m mesh.
    Full,
    /// Stations every 50 m on 200 m lines, magnetics every 10 m, a 50 m mesh
    /// (tests and quick looks: every scenario runs in seconds).
    Small,
}

#[derive(Debug, Error)]
pub enum DemoError {
    #[error("{path} already holds a project; choose an empty folder so nothing is overwritten")]
    NotEmpty { path: PathBuf },
    #[error("could not write {path}: {message}")]
    Write { path: PathBuf, message: String },
    #[error("{0}")]
    Compute(String),
    #[error("the demo generation was cancelled")]
    Cancelled,
}

/// What was written.
#[derive(Debug, Clone)]
pub struct DemoReport {
    pub folder: PathBuf,
    pub gravity_stations: usize,
    pub gravity_readings: usize,
    pub magnetic_readings: usize,
    pub holes: usize,
    pub files: Vec<String>,
}

/// South-west corner of the invented survey, UTM zone 17N (EPSG:32617).
pub const ORIGIN: [f64; 2] = [452_000.0, 5_401_000.0];
pub const EPSG: u32 = 32617;
const GRAVITY_DATE: &str = "2026-07-13T13:00:00Z";
const MAGNETIC_DATE: &str = "2026-07-20";

/// A small deterministic generator (SplitMix64) with normal deviates.
struct Rng(u64);

impl Rng {
    fn next_u64(&mut self) -> u64 {
        self.0 = self.0.wrapping_add(0x9E37_79B9_7F4A_7C15);
        let mut z = self.0;
        z = (z ^ (z >> 30)).wrapping_mul(0xBF58_476D_1CE4_E5B9);
        z = (z ^ (z >> 27)).wrapping_mul(0x94D0_49BB_1331_11EB);
        z ^ (z >> 31)
    }
    fn uniform(&mut self) -> f64 {
        ((self.next_u64() >> 11) as f64 + 0.5) / (1u64 << 53) as f64
    }
    fn normal(&mut self, sigma: f64) -> f64 {
        let (u, v) = (self.uniform(), self.uniform());
        sigma * (-2.0 * u.ln()).sqrt() * (2.0 * std::f64::consts::PI * v).cos()
    }
}

struct Geometry {
    station_m: f64,
    line_m: f64,
    mag_m: f64,
    mesh_cell_m: f64,
    truth_cell_m: f64,
    width_m: f64,
    height_m: f64,
}

fn geometry(size: DemoSize) -> Geometry {
    match size {
        DemoSize::Full => Geometry {
            station_m: 25.0,
            line_m: 100.0,
            mag_m: 5.0,
            mesh_cell_m: 25.0,
            truth_cell_m: 12.5,
            width_m: 1500.0,
            height_m: 1000.0,
        },
        DemoSize::Small => Geometry {
            station_m: 50.0,
            line_m: 200.0,
            mag_m: 10.0,
            mesh_cell_m: 50.0,
            truth_cell_m: 25.0,
            width_m: 1500.0,
            height_m: 1000.0,
        },
    }
}

/// The prisms of the true model with their density contrast and
/// susceptibility: cover columns and body voxels of `cell` metres.
fn truth_prisms(t: &TrueModel, cell: f64) -> Vec<(Prism, f64, f64)> {
    let [x0, x1, y0, y1] = t.cover_extent_m;
    let (nx, ny) = (
        ((x1 - x0) / cell).round() as usize,
        ((y1 - y0) / cell).round() as usize,
    );
    let mut out = Vec::new();
    for j in 0..ny {
        for i in 0..nx {
            let (xa, ya) = (x0 + i as f64 * cell, y0 + j as f64 * cell);
            let (xc, yc) = (xa + 0.5 * cell, ya + 0.5 * cell);
            let (top, base) = (t.terrain_m(xc, yc), t.cover_base_m(xc, yc));
            if let Ok(p) = Prism::new([xa, xa + cell], [ya, ya + cell], [base, top]) {
                out.push((p, t.cover_density_contrast_g_cc, 0.0));
            }
        }
    }
    // Body voxels in the bounding box of both fault blocks.
    let b = &t.body;
    let reach = b.depth_extent_m * b.dip_deg.to_radians().cos() + b.thickness_m;
    let (bx0, bx1) = (
        b.top_x_m - b.thickness_m,
        b.top_x_m + reach + t.fault.shift_east_m,
    );
    let (by0, by1) = (
        b.centre_y_m - 0.5 * b.length_m,
        b.centre_y_m + 0.5 * b.length_m,
    );
    let (bz0, bz1) = (
        b.top_z_m - t.fault.throw_m - b.depth_extent_m - b.thickness_m,
        b.top_z_m + b.thickness_m,
    );
    let n = |a: f64, c: f64| ((c - a) / cell).ceil() as usize;
    for k in 0..n(bz0, bz1) {
        for j in 0..n(by0, by1) {
            for i in 0..n(bx0, bx1) {
                let lo = [
                    bx0 + i as f64 * cell,
                    by0 + j as f64 * cell,
                    bz0 + k as f64 * cell,
                ];
                let c = [lo[0] + 0.5 * cell, lo[1] + 0.5 * cell, lo[2] + 0.5 * cell];
                if t.in_body(c) {
                    if let Ok(p) = Prism::new(
                        [lo[0], lo[0] + cell],
                        [lo[1], lo[1] + cell],
                        [lo[2], lo[2] + cell],
                    ) {
                        // The body replaces cover where a voxel reaches into it.
                        out.push((p, b.density_contrast_g_cc, b.susceptibility_si));
                    }
                }
            }
        }
    }
    out
}

struct Writer {
    dir: PathBuf,
    files: Vec<String>,
}

impl Writer {
    /// Writes `rel` with `write`, creating its folder, and records it.
    fn file(
        &mut self,
        rel: &str,
        write: impl FnOnce(&Path) -> Result<(), String>,
    ) -> Result<(), DemoError> {
        let path = self.dir.join(rel);
        let fail = |path: &Path, message: String| DemoError::Write {
            path: path.to_path_buf(),
            message,
        };
        if let Some(p) = path.parent() {
            std::fs::create_dir_all(p).map_err(|e| fail(p, e.to_string()))?;
        }
        write(&path).map_err(|m| fail(&path, m))?;
        self.files.push(rel.to_string());
        Ok(())
    }
    fn text(&mut self, rel: &str, body: &str) -> Result<(), DemoError> {
        self.file(rel, |p| std::fs::write(p, body).map_err(|e| e.to_string()))
    }
    fn grid(&mut self, rel: &str, g: &Grid2) -> Result<(), DemoError> {
        self.file(rel, |p| write_geotiff(p, g).map_err(|e| e.to_string()))
    }
}

#[allow(clippy::too_many_arguments)]
fn sampled_grid(
    x0: f64,
    y0: f64,
    cell: f64,
    nx: usize,
    ny: usize,
    units: &str,
    note: &str,
    mut f: impl FnMut(f64, f64) -> f64,
) -> Result<Grid2, DemoError> {
    let mut g = Grid2::new_empty(x0, y0, cell, cell, nx, ny)
        .map_err(|e| DemoError::Compute(e.to_string()))?;
    for j in 0..ny {
        for i in 0..nx {
            g.values[i + nx * j] = f(g.x_of(i), g.y_of(j));
        }
    }
    g.epsg = Some(EPSG);
    g.units = units.into();
    g.note = note.into();
    Ok(g)
}

/// Writes the demo project into `out` (which must not hold a project).
pub fn write_demo(out: &Path, size: DemoSize, obs: &dyn Observer) -> Result<DemoReport, DemoError> {
    if out.join(crate::project::file::PROJECT_FILE).exists() {
        return Err(DemoError::NotEmpty {
            path: out.to_path_buf(),
        });
    }
    let g = geometry(size);
    let t = TrueModel::demo(ORIGIN);
    let crs = Crs::from_epsg(EPSG).map_err(|e| DemoError::Compute(e.to_string()))?;
    let [e0, n0] = ORIGIN;
    let mut w = Writer {
        dir: out.to_path_buf(),
        files: vec![],
    };
    let mut rng = Rng(0x5EED_F1E1_D570_4E00);
    let step = |k: usize, msg: &str| {
        obs.message(msg);
        obs.progress(k, 8);
    };
    let cancelled = || -> Result<(), DemoError> {
        if obs.cancelled() {
            Err(DemoError::Cancelled)
        } else {
            Ok(())
        }
    };

    // Terrain model: 20 m cells, 1.5 km beyond the survey on every side.
    step(0, "terrain model");
    let dem_cell = 20.0;
    let (dx0, dy0) = (e0 - 1500.0, n0 - 1500.0);
    let (dnx, dny) = (
        ((g.width_m + 3000.0) / dem_cell) as usize + 1,
        ((g.height_m + 3000.0) / dem_cell) as usize + 1,
    );
    let dem = sampled_grid(
        dx0,
        dy0,
        dem_cell,
        dnx,
        dny,
        "m",
        "INVENTED demo terrain, elevations above the ellipsoid",
        |x, y| t.terrain_m(x, y),
    )?;
    w.grid("inputs/terrain.tif", &dem)?;
    let mut cover_rng = Rng(77);
    let cover = sampled_grid(e0 - 300.0, n0 - 300.0, 25.0, ((g.width_m + 600.0) / 25.0) as usize + 1, ((g.height_m + 600.0) / 25.0) as usize + 1, "m",
        "INVENTED interpreted base of glacial cover (from drilling and a refraction line), elevation", |x, y| t.cover_base_m(x, y) + cover_rng.normal(1.5))?;
    w.grid("inputs/base_of_cover.tif", &cover)?;

    // Stations.
    let n_lines = (g.height_m / g.line_m).round() as usize + 1;
    let per_line = (g.width_m / g.station_m).round() as usize + 1;
    let mut stations: Vec<(String, usize, [f64; 3])> = Vec::new();
    for l in 0..n_lines {
        for s in 0..per_line {
            // Lines alternate direction as a crew walks them.
            let s2 = if l % 2 == 0 { s } else { per_line - 1 - s };
            let (x, y) = (e0 + s2 as f64 * g.station_m, n0 + l as f64 * g.line_m);
            stations.push((
                format!("L{}-{:03}", 100 + l, s2),
                100 + l,
                [x, y, t.terrain_m(x, y)],
            ));
        }
    }
    let base_xyz = [e0 - 50.0, n0 - 50.0, t.terrain_m(e0 - 50.0, n0 - 50.0)];

    // Forward model of the truth.
    step(1, "forward modelling the true model");
    let prisms = truth_prisms(&t, g.truth_cell_m);
    let gz = |p: [f64; 3]| -> f64 {
        prisms
            .iter()
            .filter(|(_, d, _)| *d != 0.0)
            .map(|(pr, d, _)| prism_gz_mgal(pr, p, *d))
            .sum::<f64>()
    };
    let mut all_pts: Vec<[f64; 3]> = stations.iter().map(|s| s.2).collect();
    all_pts.push(base_xyz);
    let anomaly: Vec<f64> = all_pts
        .par_iter()
        .map(|p| gz(*p) + t.regional_at(p[0], p[1]))
        .collect();
    cancelled()?;

    // Observed absolute gravity consistent with the reductions: the complete
    // Bouguer anomaly is linear in g with slope 1, so g = anomaly − CBA(0).
    step(2, "gravity readings");
    let settings = GravitySettings::default();
    let ts = TerrainSettings {
        density_g_cc: settings.density_g_cc,
        outer_radius_m: 1500.0,
        ..Default::default()
    };
    let tc = terrain_corrections(&dem, None, &all_pts, &ts, obs)
        .map_err(|e| DemoError::Compute(e.to_string()))?;
    let latlon: Vec<(f64, f64)> = all_pts
        .iter()
        .map(|p| {
            crs.unproject(p[0], p[1])
                .map_err(|e| DemoError::Compute(e.to_string()))
        })
        .collect::<Result<_, _>>()?;
    let g_abs: Vec<f64> = (0..all_pts.len())
        .map(|k| {
            anomaly[k]
                - reduce_station(&settings, 0.0, latlon[k].0, all_pts[k][2], tc[k])
                    .complete_bouguer_anomaly
        })
        .collect();
    let base_k = all_pts.len() - 1;
    let base_value = (g_abs[base_k] * 1000.0).round() / 1000.0;
    // Readings: two lines a day in loops base → line → base, 4 minutes per
    // station, meter drift 0.035 mGal/h, 0.01 mGal reading noise.
    let t_start =
        parse_datetime(GRAVITY_DATE, DateOrder::YearMonthDay).map_err(DemoError::Compute)?;
    let dial = 4321.0 - base_value;
    let drift_per_s = 0.035 / 3600.0;
    let mut grav = String::from("# INVENTED demo data (Harrow Fen, invented). Relative gravimeter readings; heights above the WGS 84 ellipsoid; x, y in EPSG:32617.\nstation,line,x,y,height_m,time,gravity_mgal\n");
    let mut clock = t_start;
    let mut readings = 0;
    let read = |clock: f64, k: usize, rng: &mut Rng| -> f64 {
        let (lat, lon) = latlon[k];
        g_abs[k]
            + tide_effect_mgal(clock, lat, lon, all_pts[k][2], 1.16)
            + dial
            + drift_per_s * (clock - t_start)
            + rng.normal(0.01)
    };
    let row = |out: &mut String, id: &str, line: usize, p: [f64; 3], clock: f64, v: f64| {
        writeln!(
            out,
            "{id},{line},{:.2},{:.2},{:.2},{},{v:.4}",
            p[0],
            p[1],
            p[2],
            format_iso(clock)
        )
        .ok();
    };
    for l in 0..n_lines {
        if l % 2 == 0 && l > 0 {
            // Next day, 13:00 UTC.
            clock = t_start + 86_400.0 * (l / 2) as f64;
        }
        let b = read(clock, base_k, &mut rng);
        row(&mut grav, "BASE", 0, base_xyz, clock, b);
        readings += 1;
        clock += 900.0;
        for s in 0..per_line {
            let k = l * per_line + s;
            let (id, line, p) = &stations[k];
            let v = read(clock, k, &mut rng);
            row(&mut grav, id, *line, *p, clock, v);
            readings += 1;
            clock += 240.0;
        }
        clock += 660.0;
        let b = read(clock, base_k, &mut rng);
        row(&mut grav, "BASE", 0, base_xyz, clock, b);
        readings += 1;
        clock += 1800.0;
    }
    w.text("inputs/gravity_readings.csv", &grav)?;
    cancelled()?;

    // Magnetics: sensor 2 m above ground, one reading every mag_m metres at
    // about 1 m/s, diurnal from a base record every 10 s.
    step(3, "magnetic readings");
    let year =
        decimal_year_of_date(MAGNETIC_DATE).map_err(|e| DemoError::Compute(e.to_string()))?;
    let model = IgrfModel::igrf14()
        .at_date(year)
        .map_err(|e| DemoError::Compute(e.to_string()))?;
    let per_mag = (g.width_m / g.mag_m).round() as usize + 1;
    let mut mag_pts = Vec::new();
    for l in 0..n_lines {
        for s in 0..per_mag {
            let s2 = if l % 2 == 0 { s } else { per_mag - 1 - s };
            let (x, y) = (e0 + s2 as f64 * g.mag_m, n0 + l as f64 * g.line_m);
            mag_pts.push((100 + l, [x, y, t.terrain_m(x, y) + 2.0]));
        }
    }
    let mag_ll: Vec<(f64, f64)> = mag_pts
        .iter()
        .map(|(_, p)| {
            crs.unproject(p[0], p[1])
                .map_err(|e| DemoError::Compute(e.to_string()))
        })
        .collect::<Result<_, _>>()?;
    let main: Vec<_> = mag_pts
        .par_iter()
        .zip(&mag_ll)
        .map(|((_, p), (lat, lon))| model.field(*lat, *lon, p[2]))
        .collect::<Result<_, _>>()
        .map_err(|e| DemoError::Compute(e.to_string()))?;
    let inducing: InducingField = mean_inducing_field(&main)
        .ok_or_else(|| DemoError::Compute("no magnetic readings".into()))?;
    let m_unit = inducing.induced_magnetization(1.0);
    let u = inducing.unit();
    let body: Vec<&(Prism, f64, f64)> = prisms.iter().filter(|(_, _, k)| *k != 0.0).collect();
    let tmi: Vec<f64> = mag_pts
        .par_iter()
        .map(|(_, p)| {
            let mut b = [0.0; 3];
            for (pr, _, k) in &body {
                let m = [m_unit[0] * k, m_unit[1] * k, m_unit[2] * k];
                if let Some(f) = prism_field_nt(pr, *p, m) {
                    for q in 0..3 {
                        b[q] += f[q];
                    }
                }
            }
            tmi_nt(b, u)
        })
        .collect();
    cancelled()?;
    let day = parse_datetime(
        &format!("{MAGNETIC_DATE}T12:30:00Z"),
        DateOrder::YearMonthDay,
    )
    .map_err(DemoError::Compute)?;
    let diurnal = |s: f64| -> f64 {
        let h = (s - day) / 3600.0;
        -18.0 * (2.0 * std::f64::consts::PI * (h + 2.0) / 24.0).sin()
            + 3.0 * (2.0 * std::f64::consts::PI * h / 1.3).sin()
    };
    let base_len = (7.5 * 3600.0 / 10.0) as usize;
    let mut base_vals = Vec::with_capacity(base_len);
    let (blat, blon) = crs
        .unproject(base_xyz[0], base_xyz[1])
        .map_err(|e| DemoError::Compute(e.to_string()))?;
    let f_base = model
        .field(blat, blon, base_xyz[2] + 2.0)
        .map_err(|e| DemoError::Compute(e.to_string()))?
        .f_nt;
    for k in 0..base_len {
        let s = day + 10.0 * k as f64;
        base_vals.push((s, f_base + diurnal(s) + rng.normal(0.1)));
    }
    let base_mean = base_vals.iter().map(|v| v.1).sum::<f64>() / base_len as f64;
    let mut base_csv =
        String::from("# INVENTED demo base-station magnetometer record (nT)\ntime,mag_nt\n");
    for (s, v) in &base_vals {
        writeln!(base_csv, "{},{:.2}", format_iso(*s), v).ok();
    }
    w.text("inputs/magnetic_base.csv", &base_csv)?;
    let mut mag = String::from("# INVENTED demo data (Harrow Fen, invented). Total-field readings, sensor 2 m above ground; x, y in EPSG:32617.\nline,x,y,height_m,time,mag_nt\n");
    let mut clock = day + 600.0;
    for (k, (line, p)) in mag_pts.iter().enumerate() {
        if k > 0 && k % per_mag == 0 {
            clock += 300.0;
        }
        // The base value at this time, as the base magnetometer recorded it
        // (the record is what the reduction subtracts).
        let bi = ((clock - day) / 10.0).floor() as usize;
        let w1 = (clock - day) / 10.0 - bi as f64;
        let bt = base_vals[bi].1 * (1.0 - w1) + base_vals[(bi + 1).min(base_len - 1)].1 * w1;
        let v = main[k].f_nt + tmi[k] + (bt - base_mean) + rng.normal(0.5);
        writeln!(
            mag,
            "{line},{:.2},{:.2},{:.2},{},{:.2}",
            p[0],
            p[1],
            p[2],
            format_iso(clock),
            v
        )
        .ok();
        clock += g.mag_m;
    }
    w.text("inputs/magnetic_readings.csv", &mag)?;

    // Drill holes: six shallow holes, 5 m intervals.
    step(4, "drill holes");
    let holes: [(&str, f64, f64, f64, f64, f64); 6] = [
        ("HF-01", 650.0, 300.0, 0.0, -90.0, 160.0),
        ("HF-02", 900.0, 250.0, 270.0, -60.0, 200.0),
        ("HF-03", 300.0, 400.0, 0.0, -90.0, 120.0),
        ("HF-04", 760.0, 750.0, 0.0, -90.0, 170.0),
        ("HF-05", 1200.0, 600.0, 0.0, -90.0, 100.0),
        ("HF-06", 500.0, 850.0, 90.0, -70.0, 110.0),
    ];
    let mut collars = String::from("# INVENTED demo drill holes\nhole_id,x,y,z,total_depth\n");
    let mut surveys = String::from("hole_id,depth,azimuth,dip\n");
    let mut intervals = String::from("hole_id,from,to,density,susceptibility,lithology\n");
    for (id, u0, v0, az, dip, td) in holes {
        let (x, y) = (e0 + u0, n0 + v0);
        let z = t.terrain_m(x, y);
        writeln!(collars, "{id},{x:.2},{y:.2},{z:.2},{td}").ok();
        writeln!(surveys, "{id},0,{az},{dip}\n{id},{td},{az},{dip}").ok();
        let d = direction(az, dip);
        let mut from = 0.0;
        while from < td - 1e-9 {
            let to = (from + 5.0).min(td);
            let mid = 0.5 * (from + to);
            let p = [x + d[0] * mid, y + d[1] * mid, z + d[2] * mid];
            let (rho, chi, lith) = if t.in_body(p) {
                (
                    2.67 + t.body.density_contrast_g_cc + rng.normal(0.04),
                    t.body.susceptibility_si * (1.0 + rng.normal(0.15)),
                    "GABBRO",
                )
            } else if t.density_at(p) != 0.0 {
                (
                    2.67 + t.cover_density_contrast_g_cc + rng.normal(0.05),
                    (0.0002 + rng.normal(0.0001)).abs(),
                    "TILL",
                )
            } else {
                (
                    2.67 + rng.normal(0.03),
                    (0.0005 + rng.normal(0.0002)).abs(),
                    "GNEISS",
                )
            };
            writeln!(intervals, "{id},{from},{to},{rho:.3},{chi:.5},{lith}").ok();
            from = to;
        }
    }
    w.text("inputs/collars.csv", &collars)?;
    w.text("inputs/surveys.csv", &surveys)?;
    w.text("inputs/intervals.csv", &intervals)?;

    // The geologist's wireframe: one block through both fault blocks, a
    // little off the truth (dip 50° instead of 55°, thicker), as an
    // interpretation would be.
    step(5, "wireframe");
    let b = t.body;
    let (dip, th, ext) = (50f64.to_radians(), 170.0, 330.0);
    let (ys, yn) = (
        b.centre_y_m - 0.5 * b.length_m,
        b.centre_y_m + 0.5 * b.length_m,
    );
    let (ux, uz) = (dip.cos(), -dip.sin());
    let (nx_, nz_) = (dip.sin(), dip.cos());
    let top = [b.top_x_m + 30.0, b.top_z_m - 15.0];
    let corners2 = [
        [top[0] - 0.5 * th * nx_, top[1] - 0.5 * th * nz_],
        [top[0] + 0.5 * th * nx_, top[1] + 0.5 * th * nz_],
        [
            top[0] + 0.5 * th * nx_ + ext * ux,
            top[1] + 0.5 * th * nz_ + ext * uz,
        ],
        [
            top[0] - 0.5 * th * nx_ + ext * ux,
            top[1] - 0.5 * th * nz_ + ext * uz,
        ],
    ];
    let mut obj = String::from(
        "# INVENTED demo: a geologist's interpreted wireframe of the intrusive (closed)\n",
    );
    for y in [ys, yn] {
        for c in corners2 {
            writeln!(obj, "v {:.2} {:.2} {:.2}", c[0], y, c[1]).ok();
        }
    }
    // Faces, counter-clockwise seen from outside (vertices 1–4 south, 5–8 north).
    for f in [
        [1, 3, 2],
        [1, 4, 3],
        [5, 6, 7],
        [5, 7, 8],
        [1, 2, 6],
        [1, 6, 5],
        [2, 3, 7],
        [2, 7, 6],
        [3, 4, 8],
        [3, 8, 7],
        [4, 1, 5],
        [4, 5, 8],
    ] {
        writeln!(obj, "f {} {} {}", f[0], f[1], f[2]).ok();
    }
    w.text("inputs/intrusive_interpretation.obj", &obj)?;

    // The truth, with its warning.
    step(6, "truth and project file");
    let truth_json =
        serde_json::to_string_pretty(&t).map_err(|e| DemoError::Compute(e.to_string()))?;
    w.text("truth/true_model.json", &truth_json)?;
    w.text("truth/README.txt", "INVENTED. This folder holds the known model from which the demo data were computed, so each scenario can be compared with the truth. Real surveys have no such folder: every model that fits real data is one of infinitely many.\n")?;

    // The project file.
    let mut p = ProjectFile::new("Harrow Fen (invented demo)");
    p.epsg = Some(EPSG);
    p.background_density_g_cc = settings.density_g_cc;
    p.inducing_field = Some(inducing);
    p.gravity = Some(GravityInput {
        base_station: Some("BASE".into()),
        base_value_mgal: Some(base_value),
        terrain_outer_m: Some(1500.0),
        ..GravityInput::of_file("inputs/gravity_readings.csv")
    });
    p.magnetic = Some(MagneticInput {
        file: "inputs/magnetic_readings.csv".into(),
        base_file: Some("inputs/magnetic_base.csv".into()),
        date: MAGNETIC_DATE.into(),
        thin_to_m: g.station_m,
        uncertainty_floor_nt: 1.0,
        uncertainty_percent: 2.0,
        given: None,
        more_files: vec![],
        columns: vec![],
        units: vec![],
    });
    p.dem = Some("inputs/terrain.tif".into());
    p.drill_holes = Some(HoleInput {
        collars: "inputs/collars.csv".into(),
        surveys: Some("inputs/surveys.csv".into()),
        intervals: Some("inputs/intervals.csv".into()),
    });
    p.surfaces = vec![NamedFile {
        name: "base_of_cover".into(),
        file: "inputs/base_of_cover.tif".into(),
    }];
    p.wireframes = vec![NamedFile {
        name: "intrusive_interpretation".into(),
        file: "inputs/intrusive_interpretation.obj".into(),
    }];
    p.gravity_reduction = Some(settings);
    p.gridding = Some(GridSettings {
        cell_m: g.station_m / 2.0,
        tension: 0.25,
    });
    // The regional from a (fictional) provincial compilation: the true
    // plane, rounded as a compilation would give it.
    let [rc, rgx, rgy] = t.regional_mgal;
    p.regional = Some(RegionalMethod::Plane {
        origin_m: ORIGIN,
        value: (rc * 10.0).round() / 10.0 + 0.05,
        gradient_per_km: [
            (rgx * 10.0).round() / 10.0,
            (rgy * 10.0).round() / 10.0 + 0.02,
        ],
    });
    let c = g.mesh_cell_m;
    p.mesh = Some(MeshRecipe {
        cell_xy_m: [c, c],
        // Layers of 12.5 m at the top whatever the horizontal cell, so the
        // 20–40 m cover spans two or more layers.
        cell_z_m: 12.5,
        z_growth: 1.08,
        // Stations at cell centres in plan (common practice).
        x_range_m: [e0 - 2.5 * c, e0 + g.width_m + 2.5 * c],
        y_range_m: [n0 - 2.5 * c, n0 + g.height_m + 2.5 * c],
        top_m: (t.terrain_mean_m + 25.0).ceil(),
        depth_m: 500.0,
        padding: Padding::Expanding {
            cells: 5,
            factor: 1.4,
        },
        bottom_padding_cells: 3,
        bottom_padding_factor: 1.4,
    });
    p.scenarios = demo_scenarios();
    p.exports = ExportSettings {
        sections: vec![
            SectionLine {
                name: "south_block_ew".into(),
                vertices: vec![[e0, n0 + 300.0], [e0 + g.width_m, n0 + 300.0]],
            },
            SectionLine {
                name: "north_block_ew".into(),
                vertices: vec![[e0, n0 + 700.0], [e0 + g.width_m, n0 + 700.0]],
            },
        ],
        slice_depths_m: vec![60.0, 120.0, 200.0],
        figures: true,
        figure_dpi: Some(150.0),
        colour_map: None,
        hole_distance_m: Some(40.0),
    };
    p.truth = Some("truth/true_model.json".into());
    p.save(out).map_err(|e| DemoError::Write {
        path: out.to_path_buf(),
        message: e.to_string(),
    })?;
    w.files.push("project.json".into());
    step(8, "done");
    Ok(DemoReport {
        folder: out.to_path_buf(),
        gravity_stations: stations.len(),
        gravity_readings: readings,
        magnetic_readings: mag_pts.len(),
        holes: holes.len(),
        files: w.files,
    })
}

/// The scenarios of the demo: the same data, three sets of assumptions for
/// density and one for susceptibility.
pub fn demo_scenarios() -> Vec<Scenario> {
    use crate::invert::appraise::{AppraisalSettings, DoiPattern, FeatureTestSpec, Hold};
    let whole_bounds = |lo: f64, hi: f64| Layer {
        name: "bounds everywhere".into(),
        enabled: true,
        region: Region::Whole,
        assign: Assignments {
            lower: Some(lo),
            upper: Some(hi),
            ..Default::default()
        },
    };
    let smooth = InversionSettings::default();
    let focused = InversionSettings {
        norms: [0.0, 2.0, 2.0, 2.0],
        // Bounds and IRLS make each solve harder; more CG keeps the misfit on target.
        max_cg: 100,
        // The misfit settles within a few reweightings; more cost time
        // without changing the model much.
        max_irls_iterations: 8,
        ..Default::default()
    };
    // Drilling and mapping inform the reference model, so it carries weight:
    // a smallness weight of 0.01 instead of the 1e-4 of a reference guessed as 0.
    let informed = InversionSettings {
        alpha_s: 1e-2,
        ..Default::default()
    };
    let magnetic = InversionSettings {
        weighting: Weighting::Depth { exponent_q: 3.0 },
        // Positivity leaves many cells at the bound; more CG per step keeps
        // the misfit on target.
        max_cg: 100,
        ..Default::default()
    };
    vec![
        Scenario {
            name: "smooth".into(),
            data: DataKind::Gravity,
            operator: OperatorChoice::Automatic,
            layers: vec![],
            settings: smooth.clone(),
            fft_heights: Default::default(),
            // What of the smooth model did the data decide, and does the
            // data need the geologist's intrusive at all?
            appraisal: Some(AppraisalSettings {
                doi_reference_shift: Some(0.1),
                doi_cutoff: 0.4,
                doi_pattern: DoiPattern::Checkerboard { block_m: None },
                feature_tests: vec![FeatureTestSpec {
                    name: "intrusive".into(),
                    region: Region::Wireframe {
                        name: "intrusive_interpretation".into(),
                    },
                    background: 0.0,
                    hold: Hold::Fixed,
                }],
            }),
        },
        Scenario {
            name: "bounds_focusing".into(),
            data: DataKind::Gravity,
            operator: OperatorChoice::Automatic,
            layers: vec![whole_bounds(-0.6, 0.45)],
            settings: focused,
            fft_heights: Default::default(),
            appraisal: None,
        },
        Scenario {
            name: "drilling_cover_contact".into(),
            data: DataKind::Gravity,
            operator: OperatorChoice::Automatic,
            layers: vec![
                whole_bounds(-0.6, 0.45),
                Layer {
                    name: "geologist's wireframe (a guess: low weight)".into(),
                    enabled: true,
                    region: Region::Wireframe {
                        name: "intrusive_interpretation".into(),
                    },
                    assign: Assignments {
                        reference: Some(0.3),
                        reference_weight: Some(0.2),
                        ..Default::default()
                    },
                },
                Layer {
                    name: "glacial cover above its interpreted base".into(),
                    enabled: true,
                    region: Region::AboveSurface {
                        surface: "base_of_cover".into(),
                    },
                    assign: Assignments {
                        lower: Some(-0.6),
                        upper: Some(-0.3),
                        reference: Some(-0.5),
                        reference_weight: Some(1.0),
                        starting: Some(-0.5),
                        sharp_contact: Some(Contact {
                            factor: 0.05,
                            along: ContactAlong::Surface {
                                name: "base_of_cover".into(),
                            },
                        }),
                        ..Default::default()
                    },
                },
                Layer {
                    name: "logged densities (trusted)".into(),
                    enabled: true,
                    region: Region::DrillHoles {
                        radius_m: 40.0,
                        decay: true,
                    },
                    assign: Assignments {
                        reference_weight: Some(10.0),
                        from_holes: Some(HoleValues {
                            column: "density".into(),
                            background: 2.67,
                            radius_m: 40.0,
                            decay: true,
                        }),
                        ..Default::default()
                    },
                },
            ],
            settings: informed,
            fft_heights: Default::default(),
            appraisal: None,
        },
        Scenario {
            name: "magnetic_bounds".into(),
            data: DataKind::Magnetic,
            operator: OperatorChoice::Automatic,
            layers: vec![whole_bounds(0.0, 0.2)],
            settings: magnetic,
            fft_heights: Default::default(),
            appraisal: None,
        },
    ]
}
