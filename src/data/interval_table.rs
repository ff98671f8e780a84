//! The interval table of a history: one record per tree and interval, in the shape of an
//! interval-pair file, so that the loader of pair files (selection, status, derived
//! covariates per stand) serves histories too. Its stand is the plot *occasion*, so derived
//! covariates are per plot and measurement (docs/histories.md, "The interval table").

use std::path::Path;

use super::columns::ColumnBuilder;
use super::covariates::DerivedCovariate;
use super::frame::{Frame, FrameColumn};
use super::history::{read_history, History, HistorySpec};
use super::pairing::Pairing;
use super::remeasure::{load_with, ColumnNames, Purpose, RemeasureSpec, Remeasurement, Required};
use super::status::Status;
use super::status_codes::StatusCodes;
use super::table::{Table, TableOptions};
use super::DataError;

/// The plot-occasion id (`plot@t1`): the stand of the derived covariates.
pub const OCCASION_COLUMN: &str = "occasion";
/// Time at the start of the interval (decimal year).
pub const T1_COLUMN: &str = "t1";
/// Time at the end.
pub const T2_COLUMN: &str = "t2";
/// Interval length t2 − t1 in years.
pub const YEARS_COLUMN: &str = "years";
/// Diameter at the end (empty unless alive).
pub const DBH2_COLUMN: &str = "dbh2";
/// Fate at the end: alive, dead, cut or missing.
pub const FATE_COLUMN: &str = "fate";

/// The columns the interval table adds to the history's.
pub const ADDED_COLUMNS: [&str; 6] = [
    OCCASION_COLUMN,
    T1_COLUMN,
    T2_COLUMN,
    YEARS_COLUMN,
    DBH2_COLUMN,
    FATE_COLUMN,
];

/// A history loaded for a fit: the interval records, and the history and its pairing (for
/// screening, ingrowth and counts).
#[derive(Debug, Clone)]
pub struct HistoryLoad {
    /// The interval records that enter the fit, with derived covariates per plot occasion.
    pub records: Remeasurement,
    /// The history as read.
    pub history: History,
    /// Its pairing into intervals.
    pub pairing: Pairing,
}

/// The role names of the interval table of a history read with `names`: the stand is
/// [`OCCASION_COLUMN`], the second diameter [`DBH2_COLUMN`], the status [`FATE_COLUMN`],
/// the interval [`YEARS_COLUMN`]; tree, diameter and expansion keep their history names.
pub fn interval_names(names: &ColumnNames) -> ColumnNames {
    ColumnNames {
        stand: OCCASION_COLUMN.into(),
        tree: names.tree.clone(),
        dbh: names.dbh.clone(),
        dbh2: DBH2_COLUMN.into(),
        status: FATE_COLUMN.into(),
        years: YEARS_COLUMN.into(),
        expansion: names.expansion.clone(),
    }
}

/// The interval table's columns for a history with `header`: plot, tree, occasion, t1, t2,
/// years, the diameter at t1, dbh2, fate, then every other history column except the time and
/// status, in file order (their values at t1).
pub fn interval_header(header: &[String], spec: &HistorySpec) -> Vec<String> {
    let n = &spec.names;
    let mut out: Vec<String> = [
        &n.stand,
        &n.tree,
        OCCASION_COLUMN,
        T1_COLUMN,
        T2_COLUMN,
        YEARS_COLUMN,
        &n.dbh,
        DBH2_COLUMN,
        FATE_COLUMN,
    ]
    .iter()
    .map(|c| c.to_string())
    .collect();
    for h in header {
        let role = [&n.stand, &n.tree, &spec.time, &n.dbh, &n.status].contains(&h);
        if !role {
            out.push(h.clone());
        }
    }
    out
}

/// Read the history at `path`, pair it and load its interval records for the fit described
/// by `spec`, whose role names and status codes are replaced by those of the interval table
/// ([`interval_names`]).
///
/// # Errors
/// The errors of [`read_history`], [`History::pair`] and of loading pair files, and
/// [`DataError::Cell`] (line 1) for a history column named like a column the interval table
/// adds ([`ADDED_COLUMNS`]).
pub fn load_history(
    path: &Path,
    history: &HistorySpec,
    spec: &RemeasureSpec,
) -> Result<HistoryLoad, DataError> {
    let h = read_history(path, history)?;
    let pairing = h.pair()?;
    let records = load_paired(&h, &pairing, spec)?;
    Ok(HistoryLoad {
        records,
        history: h,
        pairing,
    })
}

/// [`load_history`] on a history already read and paired.
///
/// # Errors
/// As [`load_history`].
pub fn load_paired(
    h: &History,
    pairing: &Pairing,
    spec: &RemeasureSpec,
) -> Result<Remeasurement, DataError> {
    let header = interval_header(&h.header, &h.spec);
    for added in ADDED_COLUMNS {
        if header.iter().filter(|c| *c == added).count() > 1 {
            return Err(DataError::cell(
                &h.frame.source,
                1,
                added,
                format!(
                    "the interval table of a history adds a column \"{added}\" (with {}); rename the history's column",
                    ADDED_COLUMNS.join(", ")
                ),
            ));
        }
    }
    let spec = RemeasureSpec {
        names: interval_names(&h.spec.names),
        status_codes: Some(fate_codes()),
        ..spec.clone()
    };
    load_with(header.clone(), &h.frame.source, &spec, |options| {
        Ok(interval_table(h, pairing, header, options))
    })
}

/// The fate words of the interval table as status codes: missing trees are censored.
fn fate_codes() -> StatusCodes {
    let entries = [
        ("alive", Status::Alive),
        ("dead", Status::Dead),
        ("cut", Status::Censored),
        ("missing", Status::Censored),
    ];
    StatusCodes::new(entries.iter().map(|(c, s)| (c.to_string(), *s)).collect()).unwrap_or_default()
}

/// The interval records as a table: the history's rows at t1 (every column read, kept in
/// file order) plus the added columns. Each record's line is that of its row at t1.
fn interval_table(h: &History, p: &Pairing, header: Vec<String>, options: &TableOptions) -> Table {
    let iv = &p.intervals;
    let mut keep = vec![false; h.frame.len()];
    for &a in &iv.anchor {
        keep[a] = true;
    }
    let lines: Vec<u64> = iv.anchor.iter().map(|&a| h.frame.lines[a]).collect();
    let wanted = |c: &str| {
        options
            .columns
            .as_ref()
            .is_none_or(|l| l.iter().any(|x| x == c))
    };
    let text = |cells: &mut dyn Iterator<Item = String>| {
        let mut b = ColumnBuilder::new(true, iv.len());
        for (cell, &line) in cells.zip(&lines) {
            b.push(cell.as_bytes(), line);
        }
        b.finish()
    };
    let mut columns = std::collections::BTreeMap::new();
    for name in &header {
        if !wanted(name) {
            continue;
        }
        let column = match name.as_str() {
            OCCASION_COLUMN => text(
                &mut iv
                    .anchor
                    .iter()
                    .zip(&iv.t1)
                    .map(|(&a, t)| format!("{}@{t}", h.plots[h.plot[a] as usize])),
            ),
            T1_COLUMN => FrameColumn::Numeric(iv.t1.clone()),
            T2_COLUMN => FrameColumn::Numeric(iv.t2.clone()),
            YEARS_COLUMN => {
                FrameColumn::Numeric(iv.t1.iter().zip(&iv.t2).map(|(a, b)| b - a).collect())
            }
            DBH2_COLUMN => FrameColumn::Numeric(iv.dbh2.clone()),
            FATE_COLUMN => text(&mut iv.fate.iter().map(|f| f.as_str().to_string())),
            _ => match h.frame.column(name) {
                Some(c) => {
                    let mut c = c.clone();
                    c.retain(&keep, &lines);
                    c
                }
                None => continue,
            },
        };
        columns.insert(name.clone(), column);
    }
    Table {
        frame: Frame {
            source: h.frame.source.clone(),
            lines,
            columns,
        },
        header,
        sha256: h.sha256.clone(),
    }
}

/// The derived interval table of a history: every interval record with every history column
/// (at t1), the added columns, and the derived covariates per plot occasion that the history
/// can give (all five when it has an expansion column, except those it has a column of the
/// same name for). Returns the records and the column order to write them in.
///
/// # Errors
/// As [`load_paired`].
pub fn derive_intervals(
    h: &History,
    pairing: &Pairing,
) -> Result<(Remeasurement, Vec<String>), DataError> {
    let mut columns = interval_header(&h.header, &h.spec);
    let derived: Vec<DerivedCovariate> = if h.header.contains(&h.spec.names.expansion) {
        DerivedCovariate::ALL
            .into_iter()
            .filter(|d| !columns.iter().any(|c| c == d.name()))
            .collect()
    } else {
        Vec::new()
    };
    let spec = RemeasureSpec {
        purpose: Purpose::Counts,
        required: columns
            .iter()
            .map(|c| Required::new(c, "the interval table"))
            .collect(),
        derived: derived.clone(),
        categorical: h.spec.categorical.clone(),
        units: h.spec.units,
        ..RemeasureSpec::default()
    };
    let records = load_paired(h, pairing, &spec)?;
    columns.extend(derived.iter().map(|d| d.name().to_string()));
    Ok((records, columns))
}
