//! Projection scenarios (TOML): schema, validation, paths relative to the scenario file,
//! cohort generation.

/// An error in a scenario file. Names the file and the key path.
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
}
