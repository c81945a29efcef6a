//! The headless pipeline: every stale step of a project, in order.
//!
//! import → reduce → grid → regional → mesh are shared by all scenarios;
//! constraints → inversion → (appraisal) → exports run per scenario. Each step records its
//! inputs (content hashes of the files it reads, or the fingerprint of the
//! step before it), its parameters hash, the program version and its start
//! and end time in the project's provenance; a step whose record matches and
//! whose outputs exist is skipped. The project is saved atomically after
//! every step, so an interrupted run loses at most the step in progress; a
//! step that fails or is cancelled puts the files under `data/` and `runs/`
//! back as they were before it (`core::io::undo`).

mod data;
pub use data::write_text;
use fieldstone_core::io::undo::Snapshot;
pub mod appraisal;
pub mod operator;
mod steps;

pub use data::{load_points, Points};
pub use steps::{
    constraints_of, hole_log_for, hole_traces, load_model, load_model_context, load_run_array,
    map_options, prov, read_predicted, run_section_figure, run_slice_figure, scenario_data,
    section_extras, terrain_along, units_of, write_constraints, FigureStyle, HoleLog, ModelContext,
    RunFile, TruthComparison, CAUTION,
};

use fieldstone_core::progress::Observer;
use fieldstone_core::project::file::{ProjectFile, Scenario};
use fieldstone_core::project::provenance::{hash_bytes, hash_json, StepRecord, StepState};
use std::path::{Path, PathBuf};

/// Which scenarios to run.
#[derive(Debug, Clone, PartialEq)]
pub enum Selection {
    /// Only the shared steps (import to mesh).
    None,
    /// The first scenario of the project.
    First,
    Named(String),
    All,
}

/// What a pipeline run did.
#[derive(Debug, Clone, Default)]
pub struct Report {
    /// (step key, "ran" | "up to date", seconds).
    pub steps: Vec<(String, &'static str, f64)>,
}

impl Report {
    pub fn ran(&self) -> usize {
        self.steps.iter().filter(|s| s.1 == "ran").count()
    }
}

/// A step of the chain as it stands now.
#[derive(Debug, Clone)]
pub struct Planned {
    pub key: String,
    pub inputs: Vec<(String, String)>,
    pub parameters_hash: String,
    pub outputs: Vec<PathBuf>,
}

fn fingerprint(inputs: &[(String, String)], params: &str) -> String {
    hash_json(&(inputs, params))
}

/// Relative input files of the project (for the import step's hashes).
fn input_files(p: &ProjectFile) -> Vec<String> {
    let mut v = Vec::new();
    if let Some(g) = &p.gravity {
        v.push(g.file.clone());
    }
    if let Some(m) = &p.magnetic {
        v.push(m.file.clone());
        v.extend(m.base_file.clone());
    }
    v.extend(p.dem.clone());
    if let Some(h) = &p.drill_holes {
        v.push(h.collars.clone());
        v.extend(h.surveys.clone());
        v.extend(h.intervals.clone());
    }
    v.extend(p.surfaces.iter().map(|s| s.file.clone()));
    v.extend(p.wireframes.iter().map(|s| s.file.clone()));
    v.extend(p.truth.clone());
    v
}

/// Resolves a project-relative path.
pub fn at(dir: &Path, rel: &str) -> Result<PathBuf, String> {
    fieldstone_core::project::paths::resolve_inside(dir, rel).map_err(|e| e.to_string())
}

/// The folder of a scenario's run.
pub fn run_dir(dir: &Path, scenario: &str) -> PathBuf {
    dir.join("runs").join(safe_name(scenario))
}

/// A file-system-safe form of a scenario name.
pub fn safe_name(s: &str) -> String {
    s.chars()
        .map(|c| {
            if c.is_ascii_alphanumeric() || c == '-' || c == '_' {
                c
            } else {
                '_'
            }
        })
        .collect()
}

/// The shared chain, and each scenario's name with its chain.
pub type Plan = (Vec<Planned>, Vec<(String, Vec<Planned>)>);

/// The shared chain and the chain of each scenario, with current hashes.
pub fn plan(dir: &Path, p: &ProjectFile) -> Result<Plan, String> {
    let mut shared = Vec::new();
    let mut inputs = Vec::new();
    for rel in input_files(p) {
        let path = at(dir, &rel)?;
        let bytes = std::fs::read(&path)
            .map_err(|e| format!("{}: {e} (named in project.json)", path.display()))?;
        inputs.push((rel, hash_bytes(&bytes)));
    }
    let d = |f: &str| dir.join("data").join(f);
    let mut push = |key: &str,
                    inputs: Vec<(String, String)>,
                    params: String,
                    outputs: Vec<PathBuf>|
     -> String {
        let fp = fingerprint(&inputs, &params);
        shared.push(Planned {
            key: key.into(),
            inputs,
            parameters_hash: params,
            outputs,
        });
        fp
    };
    let fp = push(
        "import",
        inputs,
        hash_json(&(
            &p.gravity,
            &p.magnetic,
            &p.dem,
            &p.drill_holes,
            &p.surfaces,
            &p.wireframes,
            p.epsg,
        )),
        vec![d("import_report.json")],
    );
    let mut red_out = vec![];
    if p.gravity.is_some() {
        red_out.push(d("gravity_reduced.csv"));
        red_out.push(d("gravity_stations.csv"));
    }
    if p.magnetic.is_some() {
        red_out.push(d("magnetic_reduced.csv"));
        red_out.push(d("magnetic_points.csv"));
    }
    let fp = push(
        "reduce",
        vec![("upstream".into(), fp)],
        hash_json(&(
            &p.gravity_reduction,
            &p.gravity,
            &p.magnetic,
            p.background_density_g_cc,
        )),
        red_out,
    );
    let kinds: Vec<&str> = [
        p.gravity.as_ref().map(|_| "gravity"),
        p.magnetic.as_ref().map(|_| "magnetic"),
    ]
    .into_iter()
    .flatten()
    .collect();
    let fp = push(
        "grid",
        vec![("upstream".into(), fp)],
        hash_json(&p.gridding),
        kinds.iter().map(|k| d(&format!("{k}_grid.tif"))).collect(),
    );
    let fp = push(
        "regional",
        vec![("upstream".into(), fp)],
        hash_json(&(&p.regional, &p.magnetic_regional)),
        kinds
            .iter()
            .flat_map(|k| {
                [
                    d(&format!("{k}_regional.tif")),
                    d(&format!("{k}_residual.tif")),
                    d(&format!("{k}_data.csv")),
                ]
            })
            .collect(),
    );
    let mesh_fp = push(
        "mesh",
        vec![("upstream".into(), fp)],
        hash_json(&p.mesh),
        vec![d("mesh.json"), d("active.npy")],
    );
    let mut per = Vec::new();
    for s in &p.scenarios {
        let rd = run_dir(dir, &s.name);
        let c_params = hash_json(&(&s.layers, s.data));
        let c_in = vec![("upstream".into(), mesh_fp.clone())];
        let c_fp = fingerprint(&c_in, &c_params);
        let i_in = vec![("upstream".into(), c_fp)];
        // The default heights leave the hash as it was before the field
        // existed, so runs recorded then stay up to date.
        let i_params = if s.fft_heights == Default::default() {
            hash_json(&(&s.settings, s.operator, s.data, p.inducing_field))
        } else {
            hash_json(&(
                &s.settings,
                s.operator,
                s.data,
                p.inducing_field,
                s.fft_heights,
            ))
        };
        let i_fp = fingerprint(&i_in, &i_params);
        let mut chain = vec![
            Planned {
                key: format!("constraints/{}", s.name),
                inputs: c_in,
                parameters_hash: c_params,
                outputs: vec![rd.join("constraints.vtr")],
            },
            Planned {
                key: format!("inversion/{}", s.name),
                inputs: i_in,
                parameters_hash: i_params,
                outputs: [
                    "model.npy",
                    "model.vtr",
                    "summary.json",
                    "log.csv",
                    "predicted.csv",
                ]
                .iter()
                .map(|f| rd.join(f))
                .collect(),
            },
        ];
        // Appraisal (when asked for) reruns the inversion with changed
        // references or held regions; exports follow it so a changed
        // appraisal leaves the inversion alone.
        let mut upstream = i_fp;
        if let Some(a) = &s.appraisal {
            let a_in = vec![("upstream".into(), upstream)];
            let a_params = hash_json(a);
            upstream = fingerprint(&a_in, &a_params);
            let mut outputs = vec![rd.join("appraisal.json")];
            if a.doi_reference_shift.is_some() {
                outputs.push(rd.join("doi.npy"));
            }
            chain.push(Planned {
                key: format!("appraisal/{}", s.name),
                inputs: a_in,
                parameters_hash: a_params,
                outputs,
            });
        }
        chain.push(Planned {
            key: format!("exports/{}", s.name),
            inputs: vec![("upstream".into(), upstream)],
            parameters_hash: hash_json(&p.exports),
            outputs: vec![rd.join("exports.json")],
        });
        per.push((s.name.clone(), chain));
    }
    Ok((shared, per))
}

/// States of a chain: done when the record matches and the outputs exist;
/// everything after a step that is not done is stale (or not started).
pub fn states(records: &[StepRecord], chain: &[&Planned]) -> Vec<StepState> {
    let mut upstream_ok = true;
    chain
        .iter()
        .map(|pl| {
            let rec = records.iter().find(|r| r.step == pl.key);
            let st = match rec {
                None => StepState::NotStarted,
                Some(r)
                    if upstream_ok
                        && r.inputs == pl.inputs
                        && r.parameters_hash == pl.parameters_hash
                        && pl.outputs.iter().all(|o| o.exists()) =>
                {
                    StepState::Done
                }
                Some(_) => StepState::Stale,
            };
            if st != StepState::Done {
                upstream_ok = false;
            }
            st
        })
        .collect()
}

/// The state of every step of a project: the shared chain, then each
/// scenario's chain.
pub fn project_states(dir: &Path, p: &ProjectFile) -> Result<Vec<(String, StepState)>, String> {
    let (shared, per) = plan(dir, p)?;
    let mut out = Vec::new();
    let sh: Vec<&Planned> = shared.iter().collect();
    for (pl, st) in shared.iter().zip(states(&p.provenance, &sh)) {
        out.push((pl.key.clone(), st));
    }
    for (_, chain) in &per {
        let mut c: Vec<&Planned> = shared.iter().collect();
        c.extend(chain.iter());
        let st = states(&p.provenance, &c);
        for (pl, s) in chain.iter().zip(&st[shared.len()..]) {
            out.push((pl.key.clone(), *s));
        }
    }
    Ok(out)
}

/// The time now, ISO 8601 UTC to the second.
pub(crate) fn now_iso() -> String {
    let t = std::time::SystemTime::now()
        .duration_since(std::time::UNIX_EPOCH)
        .map(|d| d.as_secs_f64())
        .unwrap_or(0.0);
    fieldstone_core::survey::time::format_iso(t.floor())
}

fn record(p: &mut ProjectFile, pl: &Planned, started: String) {
    p.provenance.retain(|r| r.step != pl.key);
    p.provenance.push(StepRecord {
        step: pl.key.clone(),
        inputs: pl.inputs.clone(),
        parameters_hash: pl.parameters_hash.clone(),
        program_version: format!("fieldstone {}", env!("CARGO_PKG_VERSION")),
        started,
        finished: now_iso(),
    });
}

/// Runs the stale steps of the project in `dir` for the selected scenarios
/// (all steps with `force`), saving the project after each.
pub fn run(
    dir: &Path,
    which: &Selection,
    force: bool,
    obs: &dyn Observer,
) -> Result<Report, String> {
    let loaded = ProjectFile::load(dir).map_err(|e| e.to_string())?;
    if let Some(why) = loaded.read_only_because {
        return Err(format!("{why}; run it with the newer program"));
    }
    let mut p = loaded.project;
    let scenarios: Vec<Scenario> = match which {
        Selection::All => p.scenarios.clone(),
        Selection::None => vec![],
        Selection::First => p.scenarios.first().cloned().into_iter().collect(),
        Selection::Named(n) => vec![p
            .scenarios
            .iter()
            .find(|s| &s.name == n)
            .cloned()
            .ok_or_else(|| {
                format!(
                    "no scenario '{n}' in {} (there are: {})",
                    dir.join("project.json").display(),
                    p.scenarios
                        .iter()
                        .map(|s| s.name.as_str())
                        .collect::<Vec<_>>()
                        .join(", ")
                )
            })?],
    };
    let (shared, per) = plan(dir, &p)?;
    let mut report = Report::default();
    std::fs::create_dir_all(dir.join("data"))
        .map_err(|e| format!("{}: {e}", dir.join("data").display()))?;
    let mut ctx = steps::Context::new(dir);
    let run_step = |p: &mut ProjectFile,
                    ctx: &mut steps::Context,
                    chain: &[&Planned],
                    idx: usize,
                    scenario: Option<&Scenario>,
                    report: &mut Report|
     -> Result<(), String> {
        let pl = chain[idx];
        let st = states(&p.provenance, &chain[..=idx]);
        if !force && st[idx] == StepState::Done {
            obs.message(&format!("{:<34} up to date", pl.key));
            report.steps.push((pl.key.clone(), "up to date", 0.0));
            return Ok(());
        }
        if obs.cancelled() {
            return Err("cancelled".into());
        }
        let started = now_iso();
        let t0 = std::time::Instant::now();
        obs.message(&format!("{:<34} running", pl.key));
        let step = pl.key.split('/').next().unwrap_or("");
        // A step that fails or is cancelled leaves the project's files as
        // they were before it.
        let snapshot = Snapshot::take(dir, &["data", "runs"]).map_err(|e| {
            format!(
                "step {}: could not record the project's files before the step: {e}",
                pl.key
            )
        })?;
        // A cancel that arrives while the step runs undoes the step, even
        // when the step finished before it looked at the flag.
        let outcome = match steps::run_step(step, p, ctx, scenario, obs) {
            Ok(_) if obs.cancelled() => Err("cancelled".to_string()),
            other => other,
        };
        let summary = match outcome {
            Ok(s) => {
                snapshot.discard().map_err(|e| e.to_string())?;
                s
            }
            Err(e) => {
                ctx.forget_model();
                return Err(match snapshot.restore() {
                    Ok(()) => format!("step {}: {e}", pl.key),
                    Err(r) => format!(
                        "step {}: {e}; putting the files back also failed: {r}",
                        pl.key
                    ),
                });
            }
        };
        let secs = t0.elapsed().as_secs_f64();
        obs.message(&format!("{:<34} done in {secs:.1} s: {summary}", pl.key));
        record(p, pl, started);
        p.save(dir).map_err(|e| e.to_string())?;
        report.steps.push((pl.key.clone(), "ran", secs));
        Ok(())
    };
    let sh: Vec<&Planned> = shared.iter().collect();
    for i in 0..sh.len() {
        run_step(&mut p, &mut ctx, &sh, i, None, &mut report)?;
    }
    for s in &scenarios {
        let (_, chain) = per
            .iter()
            .find(|(n, _)| n == &s.name)
            .ok_or("scenario vanished")?;
        let mut c: Vec<&Planned> = shared.iter().collect();
        c.extend(chain.iter());
        for i in shared.len()..c.len() {
            run_step(&mut p, &mut ctx, &c, i, Some(s), &mut report)?;
        }
    }
    Ok(report)
}
