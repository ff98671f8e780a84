//! Reading the measured-tree tables of `fit height` and `fit volume`: one row per tree with
//! numeric columns (diameter, height, volume) and optional text columns (a grouping such as
//! species, a `--where` column).

use std::path::Path;

use crate::data::{read_table, DataError, Frame, FrameColumn, Table, TableOptions};
use crate::Error;

/// A `--where COL=VALUE` row filter.
#[derive(Debug, Clone, PartialEq, Eq)]
pub struct RowFilter {
    /// The column.
    pub column: String,
    /// The value kept (compared as text).
    pub value: String,
}

impl std::str::FromStr for RowFilter {
    type Err = Error;

    fn from_str(s: &str) -> Result<Self, Self::Err> {
        match s.split_once('=') {
            Some((c, v)) if !c.trim().is_empty() => Ok(RowFilter {
                column: c.trim().to_string(),
                value: v.trim().trim_matches('"').to_string(),
            }),
            _ => Err(Error::Usage(format!(
                "--where {s}: expected COL=VALUE, e.g. --where species=A"
            ))),
        }
    }
}

/// Read `numeric` and `text` columns (each with why it is needed) of the CSV at `path`.
///
/// # Errors
/// The reader's errors, and [`DataError::MissingColumn`] for a column the file lacks.
pub(crate) fn read_measured(
    path: &Path,
    numeric: &[(&str, &str)],
    text: &[(&str, &str)],
) -> Result<Table, Error> {
    let columns: Vec<String> = numeric
        .iter()
        .chain(text)
        .map(|(c, _)| c.to_string())
        .collect();
    let options = TableOptions {
        categorical: text.iter().map(|(c, _)| c.to_string()).collect(),
        columns: Some(columns),
    };
    let table = read_table(path, &options)?;
    for (column, why) in numeric.iter().chain(text) {
        if !table.has_column(column) {
            return Err(DataError::MissingColumn {
                file: table.frame.source.clone(),
                column: column.to_string(),
                why: why.to_string(),
                available: table.header_list(),
            }
            .into());
        }
    }
    Ok(table)
}

/// The values of a numeric column (empty cells NaN).
///
/// # Errors
/// [`DataError::Cell`] at the first cell that is not a number.
pub(crate) fn numbers(frame: &Frame, column: &str) -> Result<Vec<f64>, Error> {
    match frame.column(column) {
        Some(FrameColumn::Numeric(v)) => Ok(v.clone()),
        Some(c @ FrameColumn::Text { first_text, .. }) => match (c.to_numeric(), first_text) {
            (Some(v), _) => Ok(v),
            (None, Some((line, value))) => Err(DataError::cell(
                &frame.source,
                *line,
                column,
                format!("\"{value}\" is not a number"),
            )
            .into()),
            (None, None) => Err(Error::Usage(format!("column `{column}` is not numeric"))),
        },
        None => Err(Error::Usage(format!(
            "{}: column `{column}` was not read",
            frame.source
        ))),
    }
}

/// Keep the rows whose `filter.column` equals `filter.value`; returns how many were dropped.
///
/// # Errors
/// [`Error::Usage`] when no row matches, listing the values the column has.
pub(crate) fn apply_filter(frame: &mut Frame, filter: &RowFilter) -> Result<usize, Error> {
    let Some(column) = frame.column(&filter.column) else {
        return Err(Error::Usage(format!(
            "--where: column `{}` was not read",
            filter.column
        )));
    };
    let keep: Vec<bool> = (0..frame.len())
        .map(|i| column.text(i).is_some_and(|t| t == filter.value))
        .collect();
    let kept = keep.iter().filter(|k| **k).count();
    if kept == 0 {
        let values = match column {
            FrameColumn::Text { levels, .. } => levels.join(", "),
            FrameColumn::Numeric(_) => String::new(),
        };
        return Err(Error::Usage(format!(
            "--where {}={}: no row of {} has that value (it has: {values})",
            filter.column, filter.value, frame.source
        )));
    }
    let dropped = frame.len() - kept;
    frame.retain(&keep);
    Ok(dropped)
}

/// Error unless every non-missing value of `column` is positive.
///
/// # Errors
/// [`DataError::Cell`] naming the line and the value.
pub(crate) fn require_positive(frame: &Frame, column: &str, values: &[f64]) -> Result<(), Error> {
    match values.iter().position(|v| !v.is_nan() && *v <= 0.0) {
        Some(i) => Err(DataError::cell(
            &frame.source,
            frame.lines[i],
            column,
            format!("{} is not positive", values[i]),
        )
        .into()),
        None => Ok(()),
    }
}
