//! A validated, column-oriented table of the records that enter a fit or a projection.

use std::collections::BTreeMap;

/// One column of a [`Frame`].
#[derive(Debug, Clone, PartialEq)]
pub enum FrameColumn {
    /// Every non-empty cell parsed as a number. Empty cells are `NaN`.
    Numeric(Vec<f64>),
    /// At least one cell is not a number (or the user declared the column categorical).
    Text {
        /// Distinct non-empty values in byte order.
        levels: Vec<String>,
        /// Index into `levels` per record; `u32::MAX` for an empty cell.
        codes: Vec<u32>,
        /// The first cell that is not a number, as (line, value), for error messages when a
        /// term wants this column as a number. `None` when declared categorical by the user
        /// while all cells were numeric.
        first_text: Option<(u64, String)>,
    },
}

/// Records (rows) selected for a fit, column by column, with the CSV line of each record so
/// that later stages can still point at the input.
#[derive(Debug, Clone, Default)]
pub struct Frame {
    /// The file name used in messages.
    pub source: String,
    /// 1-based CSV line of each record.
    pub lines: Vec<u64>,
    /// Columns by name: the file's columns plus derived covariates (`ba`, `bal`, …).
    pub columns: BTreeMap<String, FrameColumn>,
}

impl Frame {
    /// Number of records.
    pub fn len(&self) -> usize {
        self.lines.len()
    }

    /// True when the frame holds no records.
    pub fn is_empty(&self) -> bool {
        self.lines.is_empty()
    }

    /// The column called `name`, if present.
    pub fn column(&self, name: &str) -> Option<&FrameColumn> {
        self.columns.get(name)
    }
}
