//! Errors of the pipeline, as types: what went wrong, in which step, and
//! whether the user cancelled.
//!
//! Messages from core keep their own wording (file, line, column or field);
//! this type adds the step's key and a [`Kind`] that the command line turns
//! into an exit code and the window into the name of the failed step.

use fieldstone_core::memory::MemoryError;
use thiserror::Error;

/// What kind of failure, for exit codes and the window.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Kind {
    /// A file, a column, a setting the user can fix.
    Input,
    /// A request that would not fit in the memory available.
    Memory,
    /// The user asked the work to stop.
    Cancelled,
    /// A fault of the program or the machine (a disk write that failed, a
    /// file the program wrote that it cannot read back).
    Internal,
}

/// An error of the pipeline.
#[derive(Debug, Error)]
pub enum Error {
    /// Input the user can fix; the message names the file, line, column or
    /// setting.
    #[error("{0}")]
    Input(String),
    /// A request that would not fit in memory, with what to change.
    #[error("{0}")]
    Memory(String),
    /// The user cancelled.
    #[error("cancelled")]
    Cancelled,
    /// A fault of the program or the machine.
    #[error("{0}")]
    Internal(String),
    /// A step failed (or was cancelled); its files were put back as they were.
    #[error("step {key}: {source}")]
    Step {
        key: String,
        #[source]
        source: Box<Error>,
    },
    /// A step failed and putting its files back failed too.
    #[error("step {key}: {source}; putting the files back also failed: {restore}")]
    NotRestored {
        key: String,
        #[source]
        source: Box<Error>,
        restore: String,
    },
}

impl Error {
    /// The kind of the failure, looking through the step that wraps it.
    pub fn kind(&self) -> Kind {
        match self {
            Error::Input(_) => Kind::Input,
            Error::Memory(_) => Kind::Memory,
            Error::Cancelled => Kind::Cancelled,
            Error::Internal(_) | Error::NotRestored { .. } => Kind::Internal,
            Error::Step { source, .. } => source.kind(),
        }
    }

    /// True when the user cancelled.
    pub fn is_cancelled(&self) -> bool {
        self.kind() == Kind::Cancelled
    }

    /// The key of the step that failed, if a step did.
    pub fn step(&self) -> Option<&str> {
        match self {
            Error::Step { key, .. } | Error::NotRestored { key, .. } => Some(key),
            _ => None,
        }
    }

    /// An internal fault with a message.
    pub fn internal(message: impl Into<String>) -> Error {
        Error::Internal(message.into())
    }
}

/// Most messages that reach the pipeline as text are about input: core's
/// readers and checks word them with file, line and field.
impl From<String> for Error {
    fn from(message: String) -> Error {
        Error::Input(message)
    }
}

impl From<&str> for Error {
    fn from(message: &str) -> Error {
        Error::Input(message.to_string())
    }
}

impl From<MemoryError> for Error {
    fn from(e: MemoryError) -> Error {
        Error::Memory(e.to_string())
    }
}

impl From<fieldstone_core::mesh::recipe::MeshError> for Error {
    fn from(e: fieldstone_core::mesh::recipe::MeshError) -> Error {
        match e {
            fieldstone_core::mesh::recipe::MeshError::Memory(m) => m.into(),
            other => Error::Input(format!("mesh: {other}")),
        }
    }
}

impl From<fieldstone_core::grid::mincurv::GriddingError> for Error {
    fn from(e: fieldstone_core::grid::mincurv::GriddingError) -> Error {
        use fieldstone_core::grid::mincurv::GriddingError as G;
        match e {
            G::Memory(m) => m.into(),
            G::Cancelled => Error::Cancelled,
            other => Error::Input(other.to_string()),
        }
    }
}

impl From<fieldstone_core::operator::dense::OperatorError> for Error {
    fn from(e: fieldstone_core::operator::dense::OperatorError) -> Error {
        use fieldstone_core::operator::dense::OperatorError as O;
        match e {
            O::Memory(m) => m.into(),
            e @ O::TooBig { .. } => Error::Memory(e.to_string()),
            O::Cancelled => Error::Cancelled,
            other => Error::Input(other.to_string()),
        }
    }
}

impl From<fieldstone_core::invert::solver::InversionError> for Error {
    fn from(e: fieldstone_core::invert::solver::InversionError) -> Error {
        use fieldstone_core::invert::solver::InversionError as I;
        match e {
            I::Cancelled => Error::Cancelled,
            other => Error::Input(other.to_string()),
        }
    }
}

/// The window and older callers take messages as text.
impl From<Error> for String {
    fn from(e: Error) -> String {
        e.to_string()
    }
}

/// Results of the pipeline.
pub type Result<T, E = Error> = std::result::Result<T, E>;

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn a_step_error_keeps_its_key_and_kind() {
        let e = Error::Step {
            key: "grid".into(),
            source: Box::new(Error::Memory("a grid would need 9 GB".into())),
        };
        assert_eq!(e.kind(), Kind::Memory);
        assert_eq!(e.step(), Some("grid"));
        assert_eq!(e.to_string(), "step grid: a grid would need 9 GB");
        let c = Error::Step {
            key: "inversion/smooth".into(),
            source: Box::new(Error::Cancelled),
        };
        assert!(c.is_cancelled());
        assert_eq!(c.step(), Some("inversion/smooth"));
    }

    #[test]
    fn memory_refusals_from_core_are_memory_errors() {
        let m = fieldstone_core::memory::check("a mesh", 10, 1, "use larger cells").unwrap_err();
        let e: Error = fieldstone_core::mesh::recipe::MeshError::Memory(m).into();
        assert_eq!(e.kind(), Kind::Memory);
    }
}
