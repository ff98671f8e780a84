//! Loading remeasurement records (`docs/data.md#remeasurement-files`) into the [`Frame`] of a
//! survival or growth fit.

use super::covariates::DerivedCovariate;
use super::derive::{add_derived, check_positive, StandPlan};
use super::frame::{Frame, FrameColumn};
use super::status::{status_per_row, Outcome, Status};
use super::status_codes::StatusCodes;
use super::table::{Table, TableOptions};
use super::units::Units;
use super::DataError;

/// The names of the columns with a fixed role. Defaults: `stand`, `tree`, `dbh`, `dbh2`,
/// `alive`, `years`, `expansion`; each can be overridden by a command-line flag.
#[derive(Debug, Clone, PartialEq, Eq)]
pub struct ColumnNames {
    /// Stand (plot) identifier; groups trees for the derived covariates.
    pub stand: String,
    /// Tree identifier.
    pub tree: String,
    /// Diameter at the first measurement (cm or in).
    pub dbh: String,
    /// Diameter at the second measurement; empty when the tree died or was cut.
    pub dbh2: String,
    /// Tree status at the second measurement (see [`Status::parse`]).
    pub status: String,
    /// Remeasurement interval in years.
    pub years: String,
    /// Expansion factor: stems per area unit the record represents.
    pub expansion: String,
}

impl Default for ColumnNames {
    fn default() -> Self {
        ColumnNames {
            stand: "stand".into(),
            tree: "tree".into(),
            dbh: "dbh".into(),
            dbh2: "dbh2".into(),
            status: "alive".into(),
            years: "years".into(),
            expansion: "expansion".into(),
        }
    }
}

/// A column the fit needs, and why (for the message when it is missing).
#[derive(Debug, Clone, PartialEq, Eq)]
pub struct Required {
    /// Column name as in the file.
    pub column: String,
    /// Why it is needed, e.g. "term `ln(dbh)`" or "--weights".
    pub why: String,
}

impl Required {
    /// A required column with its reason.
    pub fn new(column: impl Into<String>, why: impl Into<String>) -> Self {
        Required {
            column: column.into(),
            why: why.into(),
        }
    }
}

/// Which fit the records are for; decides which rows enter and what is required.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Default)]
pub enum Purpose {
    /// Survival fit on the status column: the status column is required and parsed on every
    /// row with a first diameter; cut/harvested/removed rows are left out and counted.
    #[default]
    Survival,
    /// A binomial fit whose response comes from other columns (`--successes/--trials`): no
    /// status column is used; every row with a first diameter enters.
    Counts,
    /// Growth fit: `dbh` and `dbh2` are required; rows whose status says dead or cut, and rows
    /// with an empty `dbh2`, are left out and counted; `dbh2` must be a positive number on
    /// every row that enters. The status column is used when the file has it.
    Growth,
}

/// What to load from a remeasurement file.
#[derive(Debug, Clone, Default)]
pub struct RemeasureSpec {
    /// Names of the role columns.
    pub names: ColumnNames,
    /// Survival, grouped counts or growth.
    pub purpose: Purpose,
    /// What a status of 1 (true, yes) means.
    pub one_means: Outcome,
    /// File columns that terms, the response, weights, offset or clusters need. Role columns
    /// may be listed too (`dbh` for a `dbh` term, `years` for `--years-col`): listed role
    /// columns are validated (`dbh`, `years` and `expansion` must be positive numbers).
    pub required: Vec<Required>,
    /// Derived covariates the terms use.
    pub derived: Vec<DerivedCovariate>,
    /// Derived-covariate names whose file column is to be used as it is (`--use-column`).
    pub use_columns: Vec<String>,
    /// Columns to treat as categorical even when numeric (`--categorical`).
    pub categorical: Vec<String>,
    /// Units of diameters and expansion factors.
    pub units: Units,
    /// The meaning of each status code (`--status-codes`); `None` reads the usual words
    /// (see [`Status::parse`]).
    pub status_codes: Option<StatusCodes>,
}

/// How many rows went where.
#[derive(Debug, Clone, Copy, Default, PartialEq, Eq)]
pub struct RemeasureCounts {
    /// Data rows in the file.
    pub rows_read: usize,
    /// Rows with an empty first diameter (trees that grew in between), left out.
    pub ingrowth: usize,
    /// Rows whose status is cut/harvested/removed, left out (survival and growth fits).
    pub censored: usize,
    /// Rows whose status is dead, left out of a growth fit.
    pub dead: usize,
    /// Rows without a second diameter (and no status saying dead or cut), left out of a
    /// growth fit.
    pub no_second_diameter: usize,
    /// Records that enter the fit.
    pub records: usize,
}

/// Remeasurement records ready for a fit.
#[derive(Debug, Clone)]
pub struct Remeasurement {
    /// The records that enter the fit: the columns read (required, role and field-valued
    /// derived columns) and the computed derived covariates, named as in terms (`bal`, …).
    pub frame: Frame,
    /// Alive at the second measurement, per record, when a status column was used.
    pub alive: Option<Vec<bool>>,
    /// Where the rows went.
    pub counts: RemeasureCounts,
    /// Things the user should know (e.g. a derived covariate taken from a column).
    pub warnings: Vec<String>,
    /// Derived covariates taken from the file's column of the same name rather than computed
    /// (projections recompute them from the tree list).
    pub field_covariates: Vec<DerivedCovariate>,
    /// Every column name of the file.
    pub header: Vec<String>,
    /// SHA-256 of the file, 64 lowercase hex digits.
    pub sha256: String,
}

/// The body of [`load_remeasurement_bytes`](super::load_remeasurement_bytes) once the file's `header` is known: `read` turns
/// the [`TableOptions`] worked out here (columns to read, categorical columns) into the table
/// of records. Histories reuse it with a `read` that pairs measurements into intervals.
pub(super) fn load_with(
    header: Vec<String>,
    source: &str,
    spec: &RemeasureSpec,
    read_table: impl FnOnce(&TableOptions) -> Result<Table, DataError>,
) -> Result<Remeasurement, DataError> {
    let names = &spec.names;
    let has = |c: &str| header.iter().any(|h| h == c);
    let missing = |column: &str, why: &str| DataError::MissingColumn {
        file: source.to_string(),
        column: column.to_string(),
        why: why.to_string(),
        available: header.join(", "),
    };

    let mut read: Vec<String> = Vec::new();
    let mut want = |c: &str| {
        if !read.iter().any(|r| r == c) {
            read.push(c.to_string());
        }
    };
    for r in &spec.required {
        if !has(&r.column) {
            return Err(missing(&r.column, &r.why));
        }
        want(&r.column);
    }
    for c in &spec.categorical {
        if !has(c) {
            return Err(missing(c, "declared categorical with --categorical"));
        }
    }

    let mut warnings = Vec::new();
    let plan = StandPlan::new(spec, &header, source, &mut warnings)?;
    for d in &plan.from_field {
        want(d.name());
    }
    if plan.computes() {
        if !has(&names.dbh) {
            let which: Vec<&str> = plan.compute.iter().map(|d| d.name()).collect();
            let why = format!("derived covariates {} need diameters", which.join(", "));
            return Err(missing(&names.dbh, &why));
        }
        want(&names.stand);
        want(&names.expansion);
    }
    let status_used = match spec.purpose {
        Purpose::Survival => {
            if !has(&names.status) {
                return Err(missing(&names.status, "the survival response (--status)"));
            }
            true
        }
        Purpose::Counts => false,
        Purpose::Growth => has(&names.status),
    };
    if status_used {
        want(&names.status);
    }
    let listed = |c: &str| spec.required.iter().any(|r| r.column == c);
    let need_dbh = listed(&names.dbh) || plan.computes() || spec.purpose == Purpose::Growth;
    if spec.purpose == Purpose::Growth {
        for (c, why) in [
            (&names.dbh, "the growth response"),
            (&names.dbh2, "the growth response"),
        ] {
            if !has(c) {
                return Err(missing(c, why));
            }
            want(c);
        }
    }
    if has(&names.dbh) {
        want(&names.dbh);
    }

    let mut categorical = spec.categorical.clone();
    categorical.push(names.status.clone());
    if plan.computes() {
        categorical.push(names.stand.clone());
    }
    let options = TableOptions {
        categorical: categorical.clone(),
        columns: Some(read),
    };
    let Table {
        mut frame,
        header,
        sha256,
    } = read_table(&options)?;
    let n = frame.len();

    // Rows with an empty first diameter are trees that grew in between.
    let first = frame.columns.get(&names.dbh);
    let has_first: Vec<bool> = (0..n)
        .map(|i| first.is_none_or(|c| !c.is_missing(i)))
        .collect();
    let mut counts = RemeasureCounts {
        rows_read: n,
        ingrowth: has_first.iter().filter(|&&h| !h).count(),
        ..RemeasureCounts::default()
    };
    if need_dbh {
        check_positive(&frame, &names.dbh, &has_first, "a positive diameter")?;
    }

    let status = if status_used {
        Some(status_per_row(
            &frame,
            &names.status,
            spec.one_means,
            spec.status_codes.as_ref(),
            &has_first,
        )?)
    } else {
        None
    };

    let mut keep = has_first.clone();
    for i in 0..n {
        if !keep[i] {
            continue;
        }
        let st = status.as_ref().map(|s| s[i]);
        if st == Some(Status::Censored) {
            counts.censored += 1;
            keep[i] = false;
        } else if spec.purpose == Purpose::Growth {
            if st == Some(Status::Dead) {
                counts.dead += 1;
                keep[i] = false;
            } else if frame
                .columns
                .get(&names.dbh2)
                .is_some_and(|c| c.is_missing(i))
            {
                counts.no_second_diameter += 1;
                keep[i] = false;
            }
        }
    }
    if spec.purpose == Purpose::Growth {
        check_positive(&frame, &names.dbh2, &keep, "a positive diameter")?;
    }
    if listed(&names.years) {
        check_positive(&frame, &names.years, &keep, "a positive number of years")?;
    }
    if listed(&names.expansion) && !plan.computes() {
        check_positive(
            &frame,
            &names.expansion,
            &keep,
            "a positive expansion factor",
        )?;
    }

    add_derived(&mut frame, &plan, spec, &has_first)?;

    let alive = status.map(|s| {
        s.iter()
            .zip(&keep)
            .filter(|(_, &k)| k)
            .map(|(&st, _)| st == Status::Alive)
            .collect()
    });
    frame.retain(&keep);
    // A column that was text only because of rows that were left out (say "NA" in `dbh2` of
    // dead trees) is numeric again.
    for (name, column) in frame.columns.iter_mut() {
        if !categorical.contains(name) {
            if let Some(values) = column.to_numeric() {
                *column = FrameColumn::Numeric(values);
            }
        }
    }
    counts.records = frame.len();
    // Terms call the first-measurement diameter `dbh` whatever the file calls it.
    if names.dbh != "dbh" && !frame.columns.contains_key("dbh") {
        if let Some(c) = frame.columns.get(&names.dbh).cloned() {
            frame.columns.insert("dbh".to_string(), c);
        }
    }
    if frame.is_empty() {
        return Err(DataError::file(
            source,
            format!(
                "no records left to fit: {} rows read, {} without a first diameter, {} cut or removed, {} dead, {} without a second diameter",
                counts.rows_read, counts.ingrowth, counts.censored, counts.dead, counts.no_second_diameter
            ),
        ));
    }
    Ok(Remeasurement {
        frame,
        alive,
        counts,
        warnings,
        field_covariates: plan.from_field.clone(),
        header,
        sha256,
    })
}
