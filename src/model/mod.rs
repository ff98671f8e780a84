//! Model specification, fitting and storage: predictor terms, the binomial GLM (IRLS), the
//! growth OLS, diagnostics, and the model file format.

pub mod annualized;
pub mod cluster;
mod compile_error;
pub mod design;
pub mod diagnostics;
pub(crate) mod fastmath;
pub mod file;
pub mod firth;
pub mod glm;
pub mod growth;
pub mod height;
pub mod height_file;
pub mod hurdle;
pub mod ingrowth;
pub mod ingrowth_file;
pub mod ingrowth_trees;
pub(crate) mod irls;
pub mod linalg;
pub mod link;
pub mod mixed;
pub mod nls;
pub mod predictor;
pub mod robust;
pub mod separation;
pub mod stored;
pub mod terms;
pub mod tree_volume;
pub mod truncated;
pub mod truncated_fit;
pub mod volume;

use crate::data::DataError;

/// An error while specifying, fitting or reading a model.
#[derive(Debug, thiserror::Error)]
pub enum ModelError {
    /// A predictor term that cannot be parsed or evaluated.
    #[error("term `{term}`: {message}")]
    Term {
        /// The term as written.
        term: String,
        /// What is wrong, with a suggestion where there is one.
        message: String,
    },
    /// Bad data met while building the design matrix.
    #[error(transparent)]
    Data(#[from] DataError),
    /// A predictor is constant, or a linear combination of others.
    #[error("{message}")]
    RankDeficient {
        /// The aliased term.
        term: String,
        /// A full sentence naming the term and why.
        message: String,
    },
    /// The maximum-likelihood estimate does not exist.
    #[error("{kind} separation: the maximum-likelihood estimate does not exist; the outcome is perfectly predicted by {}; refit with --firth (penalised likelihood) or drop or merge those terms", .terms.join(", "))]
    Separation {
        /// "complete" or "quasi-complete".
        kind: String,
        /// The terms that separate.
        terms: Vec<String>,
    },
    /// The iterative fit did not converge (a runtime failure, exit code 1).
    #[error(
        "the fit did not converge in {iterations} iterations (last deviance {deviance:.6}); {hint}"
    )]
    NotConverged {
        /// Iterations performed.
        iterations: usize,
        /// The deviance at the last iteration.
        deviance: f64,
        /// What to try.
        hint: String,
    },
    /// A height–diameter curve did not converge (a runtime failure, exit code 1); the message
    /// says where the iterations stopped and what to try.
    #[error("{0}")]
    CurveNotConverged(String),
    /// A model file that cannot be read or does not describe a usable model.
    #[error("{file}: {key}: {message}")]
    File {
        /// The model file.
        file: String,
        /// The TOML key path (or "file" for the file as a whole).
        key: String,
        /// What is wrong.
        message: String,
    },
    /// Options that cannot be used together, or a specification that makes no sense.
    #[error("{0}")]
    Invalid(String),
}

impl ModelError {
    /// True for failures of the computation itself (exit code 1) rather than of the input.
    pub fn is_runtime(&self) -> bool {
        matches!(
            self,
            ModelError::NotConverged { .. } | ModelError::CurveNotConverged(_)
        )
    }
}
