//! The projector: per-tree state arrays, one sub-step, the expected-value and Monte Carlo
//! drivers, and streaming summaries.

/// An error during a projection.
#[derive(Debug, thiserror::Error)]
pub enum ProjectError {
    /// The projection cannot run with these inputs.
    #[error("{0}")]
    Invalid(String),
}

impl ProjectError {
    /// True for failures of the computation itself (exit code 1).
    pub fn is_runtime(&self) -> bool {
        false
    }
}
