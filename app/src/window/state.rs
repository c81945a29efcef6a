//! The open project and everything the views show, loaded from its folder.

use crate::pipeline::reduction::ReadOptions;
use crate::pipeline::{
    at, load_model, load_model_context, load_points, project_states, run_dir, ModelContext, Points,
    RunFile,
};
use fieldstone_core::constraint::build::ConstraintArrays;
use fieldstone_core::grid::geotiff::read_geotiff;
use fieldstone_core::grid::read::read_grid;
use fieldstone_core::grid::Grid2;
use fieldstone_core::invert::IterationRecord;
use fieldstone_core::project::file::ProjectFile;
use fieldstone_core::project::provenance::StepState;
use fieldstone_core::survey::columns::{Role, Unit};
use fieldstone_core::survey::import::{import_survey, ImportSpec};
use fieldstone_core::table::TextOptions;
use std::cell::{Cell, RefCell};
use std::collections::BTreeMap;
use std::path::{Path, PathBuf};
use std::rc::Rc;
use std::sync::mpsc::{channel, Receiver};
use std::sync::Arc;

/// A survey table's numeric columns by name (text columns kept as text),
/// every row's line and its projected position.
#[derive(Default, Clone)]
pub struct Readings {
    pub names: Vec<String>,
    pub numbers: Vec<Option<Vec<f64>>>,
    pub lines: Vec<String>,
    pub x: Vec<f64>,
    pub y: Vec<f64>,
    /// The column of the readings (the one guessed or given the gravity or
    /// magnetic role), to colour the stations by first.
    pub value_column: Option<String>,
}

impl Readings {
    /// Reads the files of a survey through the importer (as the
    /// reductions do): positions from the coordinate columns in the
    /// project's reference `read.epsg`; every other column by its name, as
    /// written (numbers where it holds numbers).
    pub fn load(paths: &[PathBuf], read: &ReadOptions) -> Result<Readings, String> {
        let mut r = Readings::default();
        for path in paths {
            let mut spec = ImportSpec::guess_for_file(path, &TextOptions::default(), read.epsg)
                .map_err(|e| e.to_string())?;
            for (key, header) in &read.columns {
                if let Some(role) = Role::from_key(key) {
                    spec.set_role(role, header)
                        .map_err(|e| format!("{}: {e}", path.display()))?;
                }
            }
            let value = spec
                .columns
                .iter()
                .find(|c| matches!(c.role, Role::Gravity | Role::Magnetic))
                .map(|c| c.name.clone());
            if r.value_column.is_none() {
                r.value_column = value;
            }
            // Only the coordinates and the line keep their roles: the rest
            // is shown as written (a reduced table has several columns a
            // guess would call gravity).
            for c in spec.columns.iter_mut() {
                if !matches!(
                    c.role,
                    Role::Easting | Role::Northing | Role::Longitude | Role::Latitude | Role::Line
                ) {
                    c.role = Role::PassThrough;
                    c.unit = Unit::None;
                }
            }
            let s = import_survey(path, &spec).map_err(|e| e.to_string())?;
            let n0 = r.x.len();
            let n = s.n_rows();
            for c in &spec.columns {
                let values: Option<Vec<f64>> = match c.role {
                    Role::Easting if s.lat.is_none() || spec.epsg.is_some() => Some(s.x.clone()),
                    Role::Northing if s.lat.is_none() || spec.epsg.is_some() => Some(s.y.clone()),
                    Role::Longitude => s.lon.clone(),
                    Role::Latitude => s.lat.clone(),
                    _ => s
                        .channels
                        .iter()
                        .find(|ch| ch.name == c.name)
                        .map(|ch| ch.values.clone()),
                };
                let k = match r.names.iter().position(|m| m.eq_ignore_ascii_case(&c.name)) {
                    Some(k) => k,
                    None => {
                        r.names.push(c.name.clone());
                        r.numbers.push(Some(vec![f64::NAN; n0]));
                        r.names.len() - 1
                    }
                };
                match (&mut r.numbers[k], values) {
                    (Some(v), Some(new)) => v.extend(new),
                    (slot, _) => *slot = None,
                }
            }
            // Columns of earlier files this file lacks.
            for v in r.numbers.iter_mut().flatten() {
                v.resize(n0 + n, f64::NAN);
            }
            let mut line_of = vec![String::new(); n];
            for l in &s.lines {
                for &row in &l.rows {
                    if let Some(x) = line_of.get_mut(row as usize) {
                        *x = l.name.clone();
                    }
                }
            }
            r.lines.extend(line_of);
            r.x.extend_from_slice(&s.x);
            r.y.extend_from_slice(&s.y);
        }
        Ok(r)
    }

    pub fn column(&self, name: &str) -> Option<&Vec<f64>> {
        let i = self
            .names
            .iter()
            .position(|n| n.eq_ignore_ascii_case(name))?;
        self.numbers[i].as_ref()
    }
}

/// A finished run of a scenario.
pub struct RunView {
    pub file: RunFile,
    pub model: Vec<f64>,
    pub observed: Points,
    pub predicted: Vec<f64>,
    pub log: Vec<IterationRecord>,
    /// The normalised depth-of-investigation index (full mesh) and the
    /// appraisal report, when the scenario was appraised.
    pub doi: Option<Vec<f64>>,
    pub appraisal: Option<crate::pipeline::appraisal::AppraisalFile>,
}

/// A drill hole for the map: id, collar and points along its trace.
pub type HoleTrace = (String, [f64; 3], Vec<[f64; 3]>);

/// What the views draw. Loaded from the project folder, never inside a
/// frame's drawing: the tables and grids are shared (`Arc`) so a view that
/// needs one takes a handle, not a copy.
#[derive(Default)]
pub struct Views {
    pub gravity_raw: Option<Arc<Readings>>,
    pub gravity_reduced: Option<Arc<Readings>>,
    pub magnetic_reduced: Option<Arc<Readings>>,
    pub grids: BTreeMap<String, Arc<Grid2>>,
    /// Data points the inversions fit, by kind (`gravity`, `magnetic`).
    pub data_counts: BTreeMap<String, usize>,
    pub model: Option<Arc<ModelContext>>,
    pub holes: Vec<HoleTrace>,
    pub runs: BTreeMap<String, Arc<RunView>>,
    pub problems: Vec<String>,
}

/// The open project.
pub struct Doc {
    pub dir: PathBuf,
    pub project: ProjectFile,
    pub read_only: Option<String>,
    /// The project as last saved, to tell unsaved edits.
    pub saved: ProjectFile,
    pub undo: Vec<ProjectFile>,
    pub redo: Vec<ProjectFile>,
    pub states: Vec<(String, StepState)>,
    pub views: Views,
    /// Counts every change of the project or the views; derived data are
    /// cached against it.
    pub generation: u64,
    /// The generation the step states were planned for, and the planning
    /// under way off the frame (its generation and where its answer comes).
    states_generation: Option<u64>,
    planning: Option<(u64, Receiver<PlannedStates>)>,
    /// Views being read from the folder off the frame.
    loading: Option<Receiver<Views>>,
    /// Read the views again once the current edit is committed.
    reload_pending: bool,
    /// The constraint arrays of one scenario at one generation.
    constraints: RefCell<Option<ConstraintCache>>,
    /// How often the plan and the constraint arrays were worked out (the
    /// window test counts them).
    pub plans_started: Cell<usize>,
    pub constraint_builds: Cell<usize>,
    /// Other derived data of the views (point lists, colourings), by key,
    /// with the generation they were made at.
    memo: RefCell<std::collections::HashMap<String, Derived>>,
    pub derived_builds: Cell<usize>,
}

/// The step states a planning thread sends back.
type PlannedStates = Result<Vec<(String, StepState)>, String>;

/// A derived value and the generation it was made at.
type Derived = (u64, Rc<dyn std::any::Any>);

/// Constraint arrays (and warnings) of a scenario, or the message why not.
pub type Constraints = Rc<Result<(ConstraintArrays, Vec<String>), String>>;

struct ConstraintCache {
    generation: u64,
    scenario: fieldstone_core::project::file::Scenario,
    arrays: Constraints,
}

/// The autosave file of a project folder.
pub fn autosave_path(dir: &Path) -> PathBuf {
    dir.join(".autosave.project.json")
}

impl Doc {
    pub fn open(dir: &Path) -> Result<Doc, String> {
        let l = ProjectFile::load(dir).map_err(|e| e.to_string())?;
        let mut d = Doc {
            dir: dir.to_path_buf(),
            saved: l.project.clone(),
            project: l.project,
            read_only: l.read_only_because,
            undo: vec![],
            redo: vec![],
            states: vec![],
            views: Views::default(),
            generation: 0,
            states_generation: None,
            planning: None,
            loading: None,
            reload_pending: false,
            constraints: RefCell::new(None),
            plans_started: Cell::new(0),
            constraint_builds: Cell::new(0),
            memo: RefCell::new(Default::default()),
            derived_builds: Cell::new(0),
        };
        d.reload();
        Ok(d)
    }

    pub fn dirty(&self) -> bool {
        self.project != self.saved
    }

    /// Records the project before an edit (for undo).
    pub fn before_edit(&mut self) {
        self.undo.push(self.project.clone());
        if self.undo.len() > 200 {
            self.undo.remove(0);
        }
        self.redo.clear();
    }

    pub fn undo(&mut self) -> bool {
        match self.undo.pop() {
            Some(p) => {
                self.redo.push(std::mem::replace(&mut self.project, p));
                true
            }
            None => false,
        }
    }

    pub fn redo(&mut self) -> bool {
        match self.redo.pop() {
            Some(p) => {
                self.undo.push(std::mem::replace(&mut self.project, p));
                true
            }
            None => false,
        }
    }

    pub fn save(&mut self) -> Result<(), String> {
        if let Some(why) = &self.read_only {
            return Err(why.clone());
        }
        self.project.save(&self.dir).map_err(|e| e.to_string())?;
        self.saved = self.project.clone();
        let _ = std::fs::remove_file(autosave_path(&self.dir));
        Ok(())
    }

    /// Writes unsaved edits to the autosave file (atomically).
    pub fn autosave(&self) -> Result<(), String> {
        if !self.dirty() || self.read_only.is_some() {
            return Ok(());
        }
        let text = serde_json::to_string_pretty(&self.project).map_err(|e| e.to_string())?;
        crate::pipeline::write_text(&autosave_path(&self.dir), &text).map_err(String::from)
    }

    /// Marks the project as changed: derived data are worked out again and
    /// the step states planned again (off the frame, see [`Doc::poll`]).
    pub fn changed(&mut self) {
        self.generation += 1;
    }

    /// Takes the answer of the planning under way and starts planning when
    /// the project changed since the states were planned. Planning reads
    /// and hashes every input file, so it runs on its own thread; the frame
    /// shows the last states until the new ones arrive. One planning at a
    /// time: edits made meanwhile are planned when it ends.
    pub fn poll(&mut self) {
        if self.reload_pending && self.loading.is_none() {
            self.reload_pending = false;
            self.reload();
        }
        if let Some(rx) = &self.loading {
            match rx.try_recv() {
                Ok(v) => {
                    self.loading = None;
                    self.take_views(v);
                }
                Err(std::sync::mpsc::TryRecvError::Empty) => {}
                Err(std::sync::mpsc::TryRecvError::Disconnected) => self.loading = None,
            }
        }
        if let Some((generation, rx)) = &self.planning {
            match rx.try_recv() {
                Ok(r) => {
                    self.states = r.unwrap_or_default();
                    self.states_generation = Some(*generation);
                    self.planning = None;
                }
                Err(std::sync::mpsc::TryRecvError::Empty) => return,
                Err(std::sync::mpsc::TryRecvError::Disconnected) => self.planning = None,
            }
        }
        if self.states_generation != Some(self.generation) {
            let (tx, rx) = channel();
            let (dir, project) = (self.dir.clone(), self.project.clone());
            std::thread::spawn(move || {
                let _ = tx.send(project_states(&dir, &project).map_err(String::from));
            });
            self.plans_started.set(self.plans_started.get() + 1);
            self.planning = Some((self.generation, rx));
        }
    }

    /// True while the step states are being planned.
    pub fn planning(&self) -> bool {
        self.planning.is_some()
    }

    /// Data derived from the project and the views, made once per
    /// generation for each `key` (which must name everything else the data
    /// depend on: a column, a line, a colouring option).
    pub fn derived<T: 'static>(&self, key: String, make: impl FnOnce() -> T) -> Rc<T> {
        if let Some((g, v)) = self.memo.borrow().get(&key) {
            if *g == self.generation {
                if let Ok(v) = v.clone().downcast::<T>() {
                    return v;
                }
            }
        }
        self.derived_builds.set(self.derived_builds.get() + 1);
        let v = Rc::new(make());
        let mut memo = self.memo.borrow_mut();
        memo.retain(|_, (g, _)| *g == self.generation);
        memo.insert(key, (self.generation, v.clone()));
        v
    }

    /// The survey's line names, sorted, each once (made once per change).
    pub fn survey_lines(&self) -> Rc<Vec<String>> {
        self.derived("survey lines".into(), || {
            let mut lines: Vec<String> = self
                .views
                .gravity_raw
                .as_ref()
                .map(|r| r.lines.clone())
                .unwrap_or_default();
            lines.sort();
            lines.dedup();
            lines
        })
    }

    /// The constraint arrays of `scenario` on the loaded mesh, built once
    /// per generation of the project and the views (`None` before a mesh).
    pub fn constraint_arrays(
        &self,
        scenario: &fieldstone_core::project::file::Scenario,
    ) -> Option<Constraints> {
        let m = self.views.model.as_ref()?;
        let mut cache = self.constraints.borrow_mut();
        if let Some(c) = cache.as_ref() {
            if c.generation == self.generation && &c.scenario == scenario {
                return Some(c.arrays.clone());
            }
        }
        self.constraint_builds.set(self.constraint_builds.get() + 1);
        let arrays: Constraints =
            Rc::new(crate::pipeline::constraints_of(m, scenario).map_err(String::from));
        *cache = Some(ConstraintCache {
            generation: self.generation,
            scenario: scenario.clone(),
            arrays: arrays.clone(),
        });
        Some(arrays)
    }

    pub fn state_of(&self, key: &str) -> Option<StepState> {
        self.states.iter().find(|(k, _)| k == key).map(|(_, s)| *s)
    }

    /// Reads what the views show from the project folder on a thread of
    /// its own (a survey table may take seconds); [`Doc::poll`] takes them.
    pub fn reload(&mut self) {
        let (tx, rx) = channel();
        let (dir, project) = (self.dir.clone(), self.project.clone());
        std::thread::spawn(move || {
            let _ = tx.send(load_views(&dir, &project));
        });
        self.loading = Some(rx);
    }

    /// Reads the views again after this frame's edit is committed (an
    /// import changed the survey's files).
    pub fn reload_after_edit(&mut self) {
        self.reload_pending = true;
    }

    /// True while the views are being read.
    pub fn loading(&self) -> bool {
        self.loading.is_some() || self.reload_pending
    }

    /// Waits for the views being read (tests, and closing).
    pub fn wait_loaded(&mut self) {
        if self.reload_pending {
            self.reload_pending = false;
            self.reload();
        }
        if let Some(rx) = self.loading.take() {
            if let Ok(v) = rx.recv() {
                self.take_views(v);
            }
        }
    }

    /// Takes views loaded off the frame (after a run).
    pub fn take_views(&mut self, views: Views) {
        self.views = views;
        self.changed();
    }
}

/// Loads what the views show from the project folder; missing outputs are
/// simply absent. Reads files: call it off the frame (a job does after a
/// run) or once when a project opens.
pub fn load_views(dir: &Path, p: &ProjectFile) -> Views {
    let mut v = Views::default();
    let mut note = |r: Result<(), String>| {
        if let Err(e) = r {
            v.problems.push(e);
        }
    };
    if let Some(g) = &p.gravity {
        note(
            g.files()
                .map(|f| at(dir, f))
                .collect::<Result<Vec<_>, _>>()
                .map_err(String::from)
                .and_then(|files| {
                    Readings::load(
                        &files,
                        &ReadOptions {
                            columns: g.columns.clone(),
                            units: g.units.clone(),
                            epsg: p.epsg,
                        },
                    )
                })
                .map(|r| v.gravity_raw = Some(Arc::new(r))),
        );
    }
    // The reductions' outputs keep the survey's own columns.
    let plain = ReadOptions {
        epsg: p.epsg,
        ..Default::default()
    };
    let red = dir.join("data/gravity_reduced.csv");
    if red.exists() {
        note(Readings::load(&[red], &plain).map(|r| v.gravity_reduced = Some(Arc::new(r))));
    }
    let mred = dir.join("data/magnetic_reduced.csv");
    if mred.exists() {
        note(Readings::load(&[mred], &plain).map(|r| v.magnetic_reduced = Some(Arc::new(r))));
    }
    if let Some(d) = &p.dem {
        note(
            at(dir, d)
                .map_err(String::from)
                .and_then(|f| read_grid(&f).map_err(|e| e.to_string()))
                .map(|g| {
                    v.grids.insert("terrain".into(), Arc::new(g));
                }),
        );
    }
    for s in &p.surfaces {
        note(
            at(dir, &s.file)
                .map_err(String::from)
                .and_then(|f| read_grid(&f).map_err(|e| e.to_string()))
                .map(|g| {
                    v.grids.insert(s.name.clone(), Arc::new(g));
                }),
        );
    }
    for kind in ["gravity", "magnetic"] {
        for what in ["grid", "regional", "residual"] {
            let f = dir.join(format!("data/{kind}_{what}.tif"));
            if f.exists() {
                note(read_geotiff(&f).map_err(|e| e.to_string()).map(|g| {
                    v.grids.insert(format!("{kind}_{what}"), Arc::new(g));
                }));
            }
        }
    }
    for key in crate::window::panels::grids::further_grid_keys(p) {
        let f = dir.join(format!("data/{key}.tif"));
        if f.exists() {
            note(read_geotiff(&f).map_err(|e| e.to_string()).map(|g| {
                v.grids.insert(key.clone(), Arc::new(g));
            }));
        }
    }
    for kind in ["gravity", "magnetic"] {
        if let Some(pts) = data_points(dir, kind) {
            v.data_counts.insert(kind.to_string(), pts.value.len());
        }
    }
    match load_model_context(dir, p) {
        Ok(m) => {
            v.holes = crate::pipeline::hole_traces(&m);
            for s in &p.scenarios {
                let rd = run_dir(dir, &s.name);
                let Ok(text) = std::fs::read_to_string(rd.join("summary.json")) else {
                    continue;
                };
                let Ok(file) = serde_json::from_str::<RunFile>(&text) else {
                    continue;
                };
                let Ok(model) = load_model(dir, &s.name, m.mesh.n_cells()) else {
                    continue;
                };
                let log = std::fs::read_to_string(rd.join("log.json"))
                    .ok()
                    .and_then(|t| serde_json::from_str(&t).ok())
                    .unwrap_or_default();
                let (observed, predicted) =
                    crate::pipeline::read_predicted(&rd.join("predicted.csv")).unwrap_or_default();
                let appraisal = crate::pipeline::appraisal::read_appraisal(dir, &s.name);
                let doi = appraisal
                    .as_ref()
                    .and_then(|a| a.doi.as_ref())
                    .and_then(|_| {
                        crate::pipeline::load_run_array(dir, &s.name, "doi.npy", m.mesh.n_cells())
                            .ok()
                    });
                v.runs.insert(
                    s.name.clone(),
                    Arc::new(RunView {
                        file,
                        model,
                        observed,
                        predicted,
                        log,
                        doi,
                        appraisal,
                    }),
                );
            }
            v.model = Some(Arc::new(m));
        }
        Err(e) => v.problems.push(e.to_string()),
    }
    v
}

/// Loads the points table of a data kind, when the pipeline has made it.
pub fn data_points(dir: &Path, kind: &str) -> Option<Points> {
    load_points(&dir.join(format!("data/{kind}_data.csv"))).ok()
}
