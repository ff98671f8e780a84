//! The crate-wide error type and its mapping to exit codes.

use std::path::PathBuf;

/// Every error the library returns. Each layer has its own error enum; this one wraps them so
/// that `main` can print the whole message and choose the exit code.
#[derive(Debug, thiserror::Error)]
pub enum Error {
    /// Bad data in a CSV file (names file, line and column where it can).
    #[error(transparent)]
    Data(#[from] crate::data::DataError),
    /// A model could not be specified, fitted or read.
    #[error(transparent)]
    Model(#[from] crate::model::ModelError),
    /// A scenario file is invalid.
    #[error(transparent)]
    Scenario(#[from] crate::scenario::ScenarioError),
    /// A projection failed.
    #[error(transparent)]
    Project(#[from] crate::project::ProjectError),
    /// A file could not be read or written.
    #[error("{path}: {source}")]
    Io {
        /// The file involved.
        path: PathBuf,
        /// What the operating system said.
        source: std::io::Error,
    },
    /// Command-line arguments that do not fit together.
    #[error("{0}")]
    Usage(String),
}

impl Error {
    /// Exit code for this error: 1 for runtime failures (such as non-convergence), 2 for bad
    /// input or usage.
    pub fn exit_code(&self) -> i32 {
        match self {
            Error::Model(e) if e.is_runtime() => 1,
            Error::Project(e) if e.is_runtime() => 1,
            Error::Io { .. } => 1,
            _ => 2,
        }
    }

    /// Wrap an I/O error with the path it concerns.
    pub fn io(path: impl Into<PathBuf>, source: std::io::Error) -> Self {
        Error::Io {
            path: path.into(),
            source,
        }
    }
}
