//! Reading CSV data: remeasurement records and tree lists, column mapping, units, validation
//! with file:line:column errors, and the per-stand derived covariates.

mod columns;
mod covariates;
mod derive;
mod frame;
mod remeasure;
mod status;
mod table;
mod tree_list;
mod tree_stream;
mod trees;
mod units;

pub use covariates::{stand_covariates, DerivedCovariate, StandCovariates};
pub use frame::{Frame, FrameColumn};
pub use remeasure::{
    load_remeasurement, load_remeasurement_bytes, ColumnNames, Purpose, RemeasureCounts,
    RemeasureSpec, Remeasurement, Required,
};
pub use status::{Outcome, Status, UnknownStatus, ACCEPTED_STATUS};
pub use table::{parse_table, read_table, sha256_hex, Table, TableOptions};
pub(crate) use tree_list::Constant;
pub use tree_list::{Attribute, AttributeValues, TreeList};
pub use tree_stream::TreeListStream;
pub use trees::{read_single_stand, read_tree_lists, TreeListSpec, TreeRecords};
pub use units::{
    qmd_from_basal_area, reineke_sdi, Units, UnknownUnits, CM_PER_INCH, HA_PER_ACRE,
    REINEKE_EXPONENT,
};

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
    /// A problem with one record (row) as a whole, such as the wrong number of fields.
    #[error("{file}: line {line}: {message}")]
    Record {
        /// File name.
        file: String,
        /// 1-based line number where the record starts.
        line: u64,
        /// What is wrong.
        message: String,
    },
    /// The file could not be opened or read.
    #[error("{file}: {source}")]
    Io {
        /// File name.
        file: String,
        /// What the operating system said.
        source: std::io::Error,
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

impl DataError {
    /// A [`DataError::Cell`] error.
    pub fn cell(
        file: impl Into<String>,
        line: u64,
        column: impl Into<String>,
        message: impl Into<String>,
    ) -> Self {
        DataError::Cell {
            file: file.into(),
            line,
            column: column.into(),
            message: message.into(),
        }
    }

    /// A [`DataError::File`] error.
    pub fn file(file: impl Into<String>, message: impl Into<String>) -> Self {
        DataError::File {
            file: file.into(),
            message: message.into(),
        }
    }
}
