//! Projection scenarios (TOML, `docs/scenario.md`): schema, validation, paths relative to the
//! scenario file, cohort generation and the tree-list reader.

mod actions;
mod bind;
mod cohort;
mod components;
mod limits;
mod load;
pub mod schema;
mod species;

pub use crate::data::{Attribute, AttributeValues, TreeList};
pub use actions::{Action, ActionKind, SetValue, ThinTarget};
pub use cohort::quantile_diameters;
pub use load::{InputFile, LoadedModel, Scenario, Uncertainty};
pub use schema::{DbhDistribution, ThinFrom};
pub use species::{SpeciesSet, DEFAULT_SPECIES_COLUMN};

/// An error in a scenario file or in the inputs it names. Every variant names the file, and
/// the key path or the line and column.
#[derive(Debug, thiserror::Error)]
pub enum ScenarioError {
    /// A key with a bad or missing value.
    #[error("{file}: {key}: {message}")]
    Key {
        /// The scenario file.
        file: String,
        /// The TOML key path.
        key: String,
        /// What is wrong.
        message: String,
    },
    /// A bad cell of a tree list.
    #[error("{file}: line {line}, column \"{column}\": {message}")]
    Cell {
        /// The tree-list file.
        file: String,
        /// 1-based line (the header is line 1).
        line: u64,
        /// The column.
        column: String,
        /// What is wrong, quoting the value.
        message: String,
    },
    /// A tree list that cannot be read (file, line and column).
    #[error(transparent)]
    Data(#[from] crate::data::DataError),
    /// A tree list that cannot be used as a whole.
    #[error("{file}: {message}")]
    TreeFile {
        /// The tree-list file.
        file: String,
        /// What is wrong.
        message: String,
    },
}
