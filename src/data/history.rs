//! Reading a measurement history: one row per tree per measurement of its plot, with the
//! measurement time, status, diameter, expansion factor and attributes (docs/histories.md).
//! [`History::pair`] turns it into interval records ([`Pairing`](super::Pairing)).

use std::path::Path;

use super::duplicates::first_repeat;
use super::frame::{Frame, FrameColumn};
use super::remeasure::ColumnNames;
use super::status::{parse_with, Outcome, Status};
use super::status_codes::StatusCodes;
use super::table::{parse_table, read_bytes, TableOptions};
use super::units::Units;
use super::when::parse_time;
use super::DataError;

/// What to do with a tree alive at one measurement of its plot and absent from the next.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Default)]
pub enum MissingAs {
    /// Stop with an error listing the trees (default).
    #[default]
    Error,
    /// Count the tree as dead in that interval.
    Dead,
    /// Leave the interval out of the fits (the tree still counts in its plot's covariates).
    Drop,
}

/// How to read a history file and pair it into intervals.
#[derive(Debug, Clone, PartialEq)]
pub struct HistorySpec {
    /// Role columns: `stand` is the plot, `tree` the tree id, `dbh` the diameter, `status` the
    /// status, `expansion` the expansion factor (`dbh2` and `years` are not used).
    pub names: ColumnNames,
    /// The measurement-time column: a year or a `YYYY-MM-DD` date (`--time-col`).
    pub time: String,
    /// The meaning of each status code (`--status-codes`); `None` reads the usual words.
    pub status_codes: Option<StatusCodes>,
    /// Trees missing at a remeasurement (`--missing-as`).
    pub missing_as: MissingAs,
    /// Ingrowth threshold diameter (`--threshold-dbh`); `None`: the smallest recorded diameter.
    pub threshold_dbh: Option<f64>,
    /// Columns to read as categorical even when numeric (`--categorical`).
    pub categorical: Vec<String>,
    /// Units of diameters and expansion factors.
    pub units: Units,
}

impl Default for HistorySpec {
    fn default() -> Self {
        HistorySpec {
            names: ColumnNames {
                status: "status".into(),
                ..ColumnNames::default()
            },
            time: "year".into(),
            status_codes: None,
            missing_as: MissingAs::Error,
            threshold_dbh: None,
            categorical: Vec::new(),
            units: Units::Metric,
        }
    }
}

/// A history file, validated: every row has a plot, a tree, a time and a status; every live
/// row a positive diameter (and expansion factor, when the file has that column); no (plot,
/// tree, time) repeats.
#[derive(Debug, Clone)]
pub struct History {
    /// Every column of the file, one record per row, with its line.
    pub frame: Frame,
    /// The file's column names in file order.
    pub header: Vec<String>,
    /// SHA-256 of the file.
    pub sha256: String,
    /// How it was read.
    pub spec: HistorySpec,
    /// Plot code per row (index into `plots`).
    pub plot: Vec<u32>,
    /// Plot ids, in byte order.
    pub plots: Vec<String>,
    /// Tree code per row (codes are per file, so a tree is (plot, tree)).
    pub tree: Vec<u32>,
    /// Measurement time per row, as a decimal year.
    pub time: Vec<f64>,
    /// Status per row.
    pub status: Vec<Status>,
    /// Diameter per row (`NaN` unless alive).
    pub dbh: Vec<f64>,
    /// Expansion factor per row (`NaN` unless alive or when the file has no such column).
    pub expansion: Vec<f64>,
}

/// Read and validate the history at `path`.
///
/// # Errors
/// As [`parse_history`], and [`DataError::Io`] when the file cannot be read.
pub fn read_history(path: &Path, spec: &HistorySpec) -> Result<History, DataError> {
    let bytes = read_bytes(path)?;
    parse_history(&bytes, &path.display().to_string(), spec)
}

/// Parse and validate a history from CSV `bytes` named `source` in messages.
///
/// # Errors
/// - the table errors of [`parse_table`](super::parse_table);
/// - [`DataError::MissingColumn`] for an absent plot, tree, time, status or diameter column;
/// - [`DataError::Cell`] for an empty plot or tree, a time that is neither a year nor a
///   `YYYY-MM-DD` date, an empty or unknown status, a live tree without a positive diameter
///   or expansion factor;
/// - [`DataError::Record`] for a (plot, tree, time) that repeats, naming both lines.
///
/// # Examples
/// ```
/// use stemcast::data::{parse_history, HistorySpec, Status};
/// let csv = b"stand,tree,year,status,dbh,expansion\nA,1,2001,alive,10,50\nA,1,2006-07-02,dead,,\n";
/// let h = parse_history(csv, "plots.csv", &HistorySpec::default()).unwrap();
/// assert_eq!(h.status, [Status::Alive, Status::Dead]);
/// assert_eq!(h.time[1], 2006.0 + 182.0 / 365.0);
/// ```
pub fn parse_history(bytes: &[u8], source: &str, spec: &HistorySpec) -> Result<History, DataError> {
    let n = &spec.names;
    let mut categorical = spec.categorical.clone();
    categorical.extend([n.stand.clone(), n.tree.clone(), n.status.clone()]);
    let table = parse_table(
        bytes,
        source,
        &TableOptions {
            categorical,
            columns: None,
        },
    )?;
    let frame = &table.frame;
    for (column, why) in [
        (&n.stand, "the plot of each measurement (--stand)"),
        (&n.tree, "the tree of each measurement (--tree)"),
        (
            &spec.time,
            "the measurement time, a year or YYYY-MM-DD date (--time-col)",
        ),
        (&n.status, "the status at each measurement (--status)"),
        (&n.dbh, "the diameter at each measurement (--dbh)"),
    ] {
        if !table.has_column(column) {
            return Err(DataError::MissingColumn {
                file: source.to_string(),
                column: column.clone(),
                why: format!("{why}, needed to read a history"),
                available: table.header_list(),
            });
        }
    }
    let (plot, plots) = ids(frame, &n.stand, "plot")?;
    let (tree, _) = ids(frame, &n.tree, "tree")?;
    let time = times(frame, &spec.time)?;
    let status = statuses(frame, &n.status, spec.status_codes.as_ref())?;
    let alive: Vec<bool> = status.iter().map(|s| *s == Status::Alive).collect();
    let dbh = positive_on(frame, &n.dbh, &alive, "a positive diameter on a live tree")?;
    let expansion = if table.has_column(&n.expansion) {
        positive_on(
            frame,
            &n.expansion,
            &alive,
            "a positive expansion factor on a live tree",
        )?
    } else {
        vec![f64::NAN; frame.len()]
    };
    let keys: Vec<(u32, u32, u64)> = (0..frame.len())
        .map(|i| (plot[i], tree[i], (time[i] + 0.0).to_bits()))
        .collect();
    if let Some((a, b)) = first_repeat(&keys, &vec![true; frame.len()]) {
        return Err(DataError::Record {
            file: source.to_string(),
            line: frame.lines[b],
            message: format!(
                "plot \"{}\", tree \"{}\" is measured at {} again (first on line {}); a history holds one row per tree and measurement",
                plots[plot[b] as usize],
                cell_text(frame, &n.tree, b),
                cell_text(frame, &spec.time, b),
                frame.lines[a]
            ),
        });
    }
    Ok(History {
        frame: table.frame,
        header: table.header,
        sha256: table.sha256,
        spec: spec.clone(),
        plot,
        plots,
        tree,
        time,
        status,
        dbh,
        expansion,
    })
}

fn cell_text(frame: &Frame, column: &str, i: usize) -> String {
    frame
        .column(column)
        .and_then(|c| c.text(i))
        .unwrap_or_default()
        .into_owned()
}

fn cell(frame: &Frame, i: usize, column: &str, message: String) -> DataError {
    DataError::cell(&frame.source, frame.lines[i], column, message)
}

/// Codes and levels of a text id column (read as categorical), every cell present.
fn ids(frame: &Frame, column: &str, what: &str) -> Result<(Vec<u32>, Vec<String>), DataError> {
    let Some(FrameColumn::Text { levels, codes, .. }) = frame.column(column) else {
        return Err(DataError::file(
            &frame.source,
            format!("column \"{column}\" was not read as ids"),
        ));
    };
    if let Some(i) = codes.iter().position(|&c| c == super::columns::EMPTY_CODE) {
        return Err(cell(
            frame,
            i,
            column,
            format!("the {what} is empty; every measurement needs one"),
        ));
    }
    Ok((codes.clone(), levels.clone()))
}

/// The time of every row as a decimal year.
fn times(frame: &Frame, column: &str) -> Result<Vec<f64>, DataError> {
    let col = frame
        .column(column)
        .ok_or_else(|| DataError::file(&frame.source, format!("no column \"{column}\"")))?;
    let mut parsed: Vec<Option<Result<f64, String>>> = match col {
        FrameColumn::Text { levels, .. } => vec![None; levels.len()],
        FrameColumn::Numeric(_) => Vec::new(),
    };
    (0..frame.len())
        .map(|i| {
            let text = col
                .text(i)
                .ok_or_else(|| cell(frame, i, column, "the measurement time is empty".into()))?;
            let result = match col {
                FrameColumn::Text { codes, .. } => parsed[codes[i] as usize]
                    .get_or_insert_with(|| parse_time(&text))
                    .clone(),
                FrameColumn::Numeric(_) => parse_time(&text),
            };
            result.map_err(|m| cell(frame, i, column, m))
        })
        .collect()
}

/// The status of every row (each distinct value parsed once).
fn statuses(
    frame: &Frame,
    column: &str,
    codes: Option<&StatusCodes>,
) -> Result<Vec<Status>, DataError> {
    let Some(FrameColumn::Text {
        levels,
        codes: cells,
        ..
    }) = frame.column(column)
    else {
        return Err(DataError::file(
            &frame.source,
            format!("column \"{column}\" was not read as text"),
        ));
    };
    let parsed: Vec<_> = levels
        .iter()
        .map(|l| parse_with(l, Outcome::Alive, codes))
        .collect();
    cells
        .iter()
        .enumerate()
        .map(|(i, &c)| {
            if c == super::columns::EMPTY_CODE {
                return Err(cell(
                    frame,
                    i,
                    column,
                    "the status is empty; every measurement needs one".into(),
                ));
            }
            parsed[c as usize]
                .clone()
                .map_err(|m| cell(frame, i, column, m))
        })
        .collect()
}

/// A numeric column that must be positive on the rows where `rows` is true (`NaN` elsewhere).
fn positive_on(
    frame: &Frame,
    column: &str,
    rows: &[bool],
    what: &str,
) -> Result<Vec<f64>, DataError> {
    let col = frame
        .column(column)
        .ok_or_else(|| DataError::file(&frame.source, format!("no column \"{column}\"")))?;
    (0..frame.len())
        .map(|i| {
            if !rows[i] {
                return Ok(f64::NAN);
            }
            match col.number(i) {
                Err(text) => Err(cell(
                    frame,
                    i,
                    column,
                    format!("\"{text}\" is not a number"),
                )),
                Ok(v) if v.is_nan() => Err(cell(
                    frame,
                    i,
                    column,
                    format!("the cell is empty; it needs {what}"),
                )),
                Ok(v) if !(v.is_finite() && v > 0.0) => {
                    Err(cell(frame, i, column, format!("{v} is not {what}")))
                }
                Ok(v) => Ok(v),
            }
        })
        .collect()
}
