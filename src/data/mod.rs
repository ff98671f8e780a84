//! Reading CSV data: remeasurement records (interval pairs or measurement histories, see
//! docs/histories.md) and tree lists, column mapping, units, validation with file:line:column
//! errors, the per-stand derived covariates, and data screening.

mod columns;
mod covariates;
mod derive;
mod duplicates;
mod frame;
mod history;
mod ingrowth;
mod interval_csv;
mod interval_table;
pub mod limits;
mod pair_file;
mod pairing;
mod pairing_walk;
mod plot_list;
mod remeasure;
mod screen;
mod status;
mod status_codes;
mod table;
mod tree_list;
mod tree_stream;
mod trees;
mod units;
mod when;

pub use covariates::{stand_covariates, DerivedCovariate, StandCovariates};
pub use frame::{Frame, FrameColumn};
pub use history::{parse_history, read_history, History, HistorySpec, MissingAs};
pub use ingrowth::{Ingrowth, IngrowthPeriod};
pub use interval_csv::frame_csv;
pub use interval_table::{
    derive_intervals, interval_header, interval_names, load_history, load_paired, HistoryLoad,
    ADDED_COLUMNS, DBH2_COLUMN, FATE_COLUMN, OCCASION_COLUMN, T1_COLUMN, T2_COLUMN, YEARS_COLUMN,
};
pub use pair_file::{load_remeasurement, load_remeasurement_bytes};
pub use pairing::{Fate, Intervals, NewTree, Occasion, Pairing, PairingCounts, Reappearance};
pub use plot_list::{plot_list_text, read_plot_list, split_plots, MAX_LISTED_PLOTS};
pub use remeasure::{
    ColumnNames, Purpose, RemeasureCounts, RemeasureSpec, Remeasurement, Required,
};
pub use screen::{
    flags_csv, median_mad, screen, Flag, FlagReason, ScreenSpec, MIN_GROUP, ROBUST_Z_LIMIT,
};
pub use status::{Outcome, Status, UnknownStatus, ACCEPTED_STATUS};
pub use status_codes::{StatusCodes, MAX_STATUS_CODES};
pub use table::{parse_table, read_table, sha256_hex, Table, TableOptions};
pub(crate) use tree_list::Constant;
pub use tree_list::{Attribute, AttributeValues, TreeList};
pub use tree_stream::TreeListStream;
pub use trees::{read_single_stand, read_tree_lists, TreeListSpec, TreeRecords};
pub use units::{
    qmd_from_basal_area, reineke_sdi, Units, UnknownUnits, CM_PER_INCH, HA_PER_ACRE,
    REINEKE_EXPONENT,
};
pub use when::{decimal_year, parse_time, YEAR_RANGE};

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
