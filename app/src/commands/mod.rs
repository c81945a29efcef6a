//! One module per headless command; each translates its options into
//! pipeline and core settings (never the reverse), calls them, and turns
//! their errors into one message and an exit code.

pub mod constraints;
pub mod demo;
pub mod export;
pub mod filter;
pub mod forward;
pub mod grid;
pub mod igrf;
pub mod inspect;
pub mod reduce;
pub mod run;

use fieldstone_core::invert::IterationRecord;
use fieldstone_core::progress::Observer;
use fieldstone_pipeline::{Events, Kind};

/// The cautions printed with the help and shown in the window.
pub const CAUTIONS: &str = "Cautions: potential-field models are non-unique. Every model that fits the data is one of \
infinitely many, and the constraints decide which one you see. Interpretation and public reporting of \
exploration results follow the reporting codes of the jurisdiction and the judgement of a qualified person.";

/// A command's failure: the message for the user and its kind, which sets
/// the exit code.
#[derive(Debug, Clone, PartialEq)]
pub struct CliError {
    pub kind: Kind,
    pub message: String,
}

impl CliError {
    /// The process exit code of this failure (documented in the README):
    /// 1 an internal fault, 2 bad input (as for a command-line usage
    /// error), 3 a request that does not fit in memory, 4 cancelled.
    pub fn exit_code(&self) -> u8 {
        match self.kind {
            Kind::Internal => 1,
            Kind::Input => 2,
            Kind::Memory => 3,
            Kind::Cancelled => 4,
        }
    }
}

impl std::fmt::Display for CliError {
    fn fmt(&self, f: &mut std::fmt::Formatter<'_>) -> std::fmt::Result {
        f.write_str(&self.message)
    }
}

/// A message as text is about the input (a file, a column, an option).
impl From<String> for CliError {
    fn from(message: String) -> CliError {
        CliError {
            kind: Kind::Input,
            message,
        }
    }
}

impl From<&str> for CliError {
    fn from(message: &str) -> CliError {
        message.to_string().into()
    }
}

impl From<fieldstone_pipeline::Error> for CliError {
    fn from(e: fieldstone_pipeline::Error) -> CliError {
        CliError {
            kind: e.kind(),
            message: e.to_string(),
        }
    }
}

impl From<fieldstone_core::memory::MemoryError> for CliError {
    fn from(e: fieldstone_core::memory::MemoryError) -> CliError {
        fieldstone_pipeline::Error::from(e).into()
    }
}

/// What a command returns.
pub type CliResult = Result<(), CliError>;

/// The command line's observer: messages and warnings on standard error,
/// inversion iterations too when `verbose`.
#[derive(Debug, Default)]
pub struct Stderr {
    pub verbose: bool,
}

impl Observer for Stderr {
    fn message(&self, text: &str) {
        eprintln!("{text}");
    }
    fn iteration(&self, r: &IterationRecord) {
        if self.verbose {
            eprintln!(
                "    iteration {:>3}: beta {:.3e}  phi_d {:.4e}  phi_m {:.4e}  chi {:.3}  CG {}  at bounds {}/{}",
                r.iteration, r.beta, r.phi_d, r.phi_m, r.chi_factor, r.cg_iterations, r.at_lower, r.at_upper
            );
        }
    }
}

impl Events for Stderr {}
