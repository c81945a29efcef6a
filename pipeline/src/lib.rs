//! `fieldstone-pipeline`: a project's steps and their orchestration, over
//! `fieldstone-core`; no GUI and no argument parser.
//!
//! The steps are one ordered registry ([`steps::REGISTRY`]) of types
//! implementing [`steps::Stage`]; [`plan`] works out which are stale,
//! [`run`] runs them with typed [`events`] and [`error`]s. The same crate
//! holds what the command line and the window share above core: the
//! reductions and gridding of survey tables, the run-folder files, and the
//! figures of a run.

pub mod context;
pub mod data;
pub mod error;
pub mod events;
pub mod figures;
pub mod gridding;
pub mod operator;
pub mod paths;
pub mod plan;
pub mod reduction;
pub mod runfiles;
pub mod runner;
pub mod steps;
pub mod truth;

pub use context::{load_model_context, Context, ModelContext};
pub use data::{load_points, scenario_data, write_text, Points};
pub use error::{Error, Kind, Result};
pub use events::{Events, Quiet, StepEvent};
pub use figures::{
    hole_log_for, hole_traces, map_options, run_section_figure, run_slice_figure, section_extras,
    terrain_along, FigureStyle, HoleLog,
};
pub use paths::{at, run_dir, safe_name};
pub use plan::{plan, project_states, states, Plan, Planned};
pub use runfiles::{
    load_model, load_run_array, prov, read_predicted, units_of, RunFile, TruthComparison, CAUTION,
};
pub use runner::{run, Outcome, Report, Selection};
pub use steps::appraisal;
pub use steps::constraints::{constraints_of, write_constraints};
