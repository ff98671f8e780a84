//! Cell-by-cell validation of the ingrowth inputs: counts, plot areas and period lengths of the
//! plot-period table, and the diameters, species and group labels of the tree records. Every
//! error names file, line and column.

use super::ingrowth::TreeRecordsSpec;
use crate::data::{read_table, DataError, Frame, TableOptions};
use crate::Error;

/// Largest number of new trees accepted for one plot period.
pub const MAX_COUNT: u64 = 1_000_000;
/// Largest total of new trees over all plot periods (the count likelihood loops over them).
pub const MAX_TOTAL_COUNT: u64 = 100_000_000;

fn cell(frame: &Frame, i: usize, column: &str, message: String) -> Error {
    DataError::Cell {
        file: frame.source.clone(),
        line: frame.lines.get(i).copied().unwrap_or(0),
        column: column.to_string(),
        message,
    }
    .into()
}

/// Every cell of `column` as a number; empty or non-numeric cells are errors.
fn numbers(frame: &Frame, column: &str, what: &str) -> Result<Vec<f64>, Error> {
    let col = frame.column(column).ok_or_else(|| {
        Error::Usage(format!(
            "{}: column `{column}` was not loaded",
            frame.source
        ))
    })?;
    (0..frame.len())
        .map(|i| match col.number(i) {
            Ok(v) if v.is_nan() => Err(cell(
                frame,
                i,
                column,
                format!("empty, but the {what} is needed"),
            )),
            Ok(v) => Ok(v),
            Err(text) => Err(cell(
                frame,
                i,
                column,
                format!("\"{text}\" is not a number ({what})"),
            )),
        })
        .collect()
}

/// The counts of new trees: whole numbers from 0 to [`MAX_COUNT`], at most
/// [`MAX_TOTAL_COUNT`] in all.
///
/// # Errors
/// [`DataError::Cell`] for an empty, non-numeric, negative, fractional or too large count;
/// [`DataError::File`] when the total is too large.
pub fn read_counts(frame: &Frame, column: &str) -> Result<Vec<u64>, Error> {
    let values = numbers(frame, column, "number of new trees")?;
    let mut total: u64 = 0;
    let mut counts = Vec::with_capacity(values.len());
    for (i, v) in values.into_iter().enumerate() {
        let message = if v < 0.0 {
            Some(format!(
                "{v} is negative; a count of new trees is a whole number ≥ 0"
            ))
        } else if v.fract() != 0.0 || !v.is_finite() {
            Some(format!(
                "{v} is not a whole number; a count of new trees is a whole number ≥ 0"
            ))
        } else if v > MAX_COUNT as f64 {
            Some(format!(
                "{v} new trees in one plot period is above the limit of {MAX_COUNT}"
            ))
        } else {
            None
        };
        if let Some(m) = message {
            return Err(cell(frame, i, column, m));
        }
        let c = v as u64;
        total += c;
        counts.push(c);
    }
    if total > MAX_TOTAL_COUNT {
        return Err(DataError::file(
            frame.source.clone(),
            format!("the counts in column \"{column}\" add up to {total} new trees, above the limit of {MAX_TOTAL_COUNT}"),
        )
        .into());
    }
    Ok(counts)
}

/// Every cell of `column` as a positive, finite number.
///
/// # Errors
/// [`DataError::Cell`] naming the first cell that is empty, not a number, or not positive.
pub fn positive_numbers(frame: &Frame, column: &str, what: &str) -> Result<Vec<f64>, Error> {
    let values = numbers(frame, column, what)?;
    if let Some(i) = values.iter().position(|v| !(*v > 0.0 && v.is_finite())) {
        return Err(cell(
            frame,
            i,
            column,
            format!(
                "{} is not positive; the {what} must be a positive number",
                values[i]
            ),
        ));
    }
    Ok(values)
}

/// The tree records as plain columns.
#[derive(Debug, Clone)]
pub struct TreeRecords {
    /// Diameters, positive.
    pub dbh: Vec<f64>,
    /// Species labels.
    pub species: Option<Vec<String>>,
    /// Group labels.
    pub group: Option<Vec<String>>,
}

/// Read the ingrowth tree records: positive diameters, and non-empty species and group labels.
///
/// # Errors
/// [`DataError`]s naming file, line and column.
pub fn read_tree_records(spec: &TreeRecordsSpec) -> Result<TreeRecords, Error> {
    let labels: Vec<String> = spec.species.iter().chain(&spec.by).cloned().collect();
    let table = read_table(
        &spec.path,
        &TableOptions {
            categorical: labels.clone(),
            columns: None,
        },
    )?;
    for column in std::iter::once(&spec.dbh).chain(&labels) {
        if !table.has_column(column) {
            return Err(DataError::MissingColumn {
                file: table.frame.source.clone(),
                column: column.clone(),
                why: "ingrowth tree records".into(),
                available: table.header_list(),
            }
            .into());
        }
    }
    let frame = &table.frame;
    let dbh = positive_numbers(frame, &spec.dbh, "diameter of the new tree")?;
    let text = |column: &Option<String>| -> Result<Option<Vec<String>>, Error> {
        let Some(name) = column else { return Ok(None) };
        let col = frame.column(name).ok_or_else(|| {
            Error::Usage(format!("{}: column `{name}` was not loaded", frame.source))
        })?;
        (0..frame.len())
            .map(|i| {
                col.text(i).map(|s| s.into_owned()).ok_or_else(|| {
                    cell(
                        frame,
                        i,
                        name,
                        "empty, but every new tree needs a label here".into(),
                    )
                })
            })
            .collect::<Result<Vec<_>, _>>()
            .map(Some)
    };
    Ok(TreeRecords {
        dbh,
        species: text(&spec.species)?,
        group: text(&spec.by)?,
    })
}
