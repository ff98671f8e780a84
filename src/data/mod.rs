//! Reading CSV data: remeasurement records and tree lists, column mapping, units, validation
//! with file:line:column errors, and the per-stand derived covariates.

mod frame;
pub mod units;

pub use frame::{Frame, FrameColumn};
pub use units::Units;

/// An error in input data. Every variant names the file; cell errors also name the line
/// (1-based, the header being line 1) and the column.
#[derive(Debug, thiserror::Error)]
pub enum DataError {
    /// A problem with one cell.
    #[error("{file}: line {line}, column \"{column}\": {message}")]
    Cell {
        /// File name as given by the user.
        file: String,
        /// 1-based line number in the file.
        line: u64,
        /// Column name.
        column: String,
        /// What is wrong, quoting the value.
        message: String,
    },
    /// A column that is needed but absent.
    #[error("{file}: no column \"{column}\" ({why}); the file has: {available}")]
    MissingColumn {
        /// File name.
        file: String,
        /// The column looked for.
        column: String,
        /// Why it is needed.
        why: String,
        /// The columns the file has, comma separated.
        available: String,
    },
    /// A problem with the file as a whole.
    #[error("{file}: {message}")]
    File {
        /// File name.
        file: String,
        /// What is wrong.
        message: String,
    },
}
