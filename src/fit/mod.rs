//! The fitting pipelines behind `stemcast fit survival` and `stemcast fit growth`: resolve the
//! columns the terms need, load the records, build the design matrix, fit, and assemble the
//! model file. Rendering the results as text or JSON lives in [`summary`].

pub mod candidates;
pub mod chart;
pub mod cluster;
pub mod curves;
pub mod estimate;
pub mod exclude;
pub mod folds;
pub mod growth;
pub mod growth_load;
pub mod growth_mixed;
pub mod hd_summary;
pub mod height;
pub mod ingrowth;
pub mod ingrowth_history;
pub mod ingrowth_load;
pub mod ingrowth_summary;
pub mod judge;
pub mod load;
pub mod measured;
pub mod mixed;
pub mod mixed_summary;
pub mod rank;
pub mod rank_growth;
pub mod rank_growth_render;
pub mod rank_mixed;
pub mod rank_render;
pub mod source;
pub mod summary;
pub mod survival;
pub mod survival_summary;
pub mod volume;

use std::collections::BTreeMap;
use std::path::PathBuf;

use crate::data::{ColumnNames, DerivedCovariate, Required, Units};
use crate::model::terms::{parse_predictors, Term};
use crate::model::ModelError;

/// Options shared by both fits: where the data is and how to read it.
#[derive(Debug, Clone)]
pub struct DataOptions {
    /// The remeasurement CSV.
    pub path: PathBuf,
    /// Role-column names (`--stand`, `--expansion`, `--dbh`, `--dbh2`, `--status`, ...).
    pub names: ColumnNames,
    /// Derived-covariate names to take from the file (`--use-column`).
    pub use_columns: Vec<String>,
    /// Columns to treat as categorical (`--categorical`).
    pub categorical: Vec<String>,
    /// Reference level per categorical variable (`--reference COL=LEVEL`).
    pub references: BTreeMap<String, String>,
    /// Fit an intercept (default) or not (`--no-intercept`).
    pub intercept: bool,
    /// Units of diameters and per-area values.
    pub units: Units,
    /// Status codes, the plot column, histories and screening (docs/histories.md).
    pub input: source::InputOptions,
}

impl Default for DataOptions {
    /// No file yet, the default column names, an intercept, metric units.
    fn default() -> Self {
        DataOptions {
            path: PathBuf::new(),
            names: ColumnNames::default(),
            use_columns: Vec::new(),
            categorical: Vec::new(),
            references: BTreeMap::new(),
            intercept: true,
            units: Units::default(),
            input: Default::default(),
        }
    }
}

impl DataOptions {
    /// Read `path` with the default column names (`stand`, `tree`, `dbh`, `dbh2`, `alive`,
    /// `years`, `expansion`), an intercept and metric units.
    pub fn new(path: impl Into<PathBuf>) -> Self {
        DataOptions {
            path: path.into(),
            ..DataOptions::default()
        }
    }
}

/// The remeasurement interval as given on the command line.
#[derive(Debug, Clone, PartialEq)]
pub enum Years {
    /// `--years N`: every record has the same interval.
    Fixed(f64),
    /// `--years-col COL`: an interval per record.
    Column(String),
    /// Neither: use the default `years` column if the file has one, else no period.
    Default,
}

/// Parsed predictor terms and the data columns and derived covariates they need.
#[derive(Debug, Clone)]
pub struct TermNeeds {
    /// The terms as written.
    pub terms: Vec<Term>,
    /// File columns the terms read.
    pub required: Vec<Required>,
    /// Derived covariates to compute.
    pub derived: Vec<DerivedCovariate>,
}

/// Parse `--predictors` and work out what the terms need from the file.
///
/// # Errors
/// A term outside the grammar (`docs/model-files.md#term-grammar`).
pub fn term_needs(predictors: &str, data: &DataOptions) -> Result<TermNeeds, ModelError> {
    let terms = parse_predictors(predictors)?;
    let intercept_only = predictors
        .split(',')
        .any(|t| t.trim() == crate::model::terms::INTERCEPT_ONLY);
    if terms.is_empty() && !intercept_only {
        return Err(ModelError::Invalid(
            "--predictors is empty; give at least one term, e.g. --predictors \"dbh\", or 1 for the intercept alone".into(),
        ));
    }
    if terms.is_empty() && !data.intercept {
        return Err(ModelError::Invalid(
            "--predictors 1 fits the intercept alone, which --no-intercept removes; drop one of them".into(),
        ));
    }
    let mut required: Vec<Required> = Vec::new();
    let mut derived: Vec<DerivedCovariate> = Vec::new();
    for term in &terms {
        for factor in &term.factors {
            let var = factor.var();
            // Derived covariates are always planned: the data layer either computes them or,
            // with --use-column, reads the file's column and warns that projections recompute
            // them.
            if let Some(d) = DerivedCovariate::from_name(var) {
                if !derived.contains(&d) {
                    derived.push(d);
                }
                continue;
            }
            // The term `dbh` always means the first-measurement diameter, whatever `--dbh`
            // names its column, so that model files stay projectable.
            let column = if var == "dbh" {
                data.names.dbh.as_str()
            } else {
                var
            };
            if !required.iter().any(|r| r.column == column) {
                required.push(Required::new(column, format!("term `{}`", term.label())));
            }
        }
    }
    Ok(TermNeeds {
        terms,
        required,
        derived,
    })
}

/// Parse `COL=LEVEL` reference options.
///
/// # Errors
/// An option without `=`.
pub fn parse_references(items: &[String]) -> Result<BTreeMap<String, String>, ModelError> {
    items
        .iter()
        .map(|s| {
            s.split_once('=')
                .map(|(c, l)| (c.trim().to_string(), l.trim().trim_matches('"').to_string()))
                .ok_or_else(|| ModelError::Invalid(format!("--reference {s}: expected COL=LEVEL")))
        })
        .collect()
}

/// The common interval of `years`, if all lie within the tolerance of their median.
///
/// # Errors
/// A message pointing to `--interval annualized` / `exposure` when they differ.
pub fn common_interval(years: &[f64], source: &str) -> Result<f64, ModelError> {
    let mut sorted: Vec<f64> = years.to_vec();
    sorted.sort_by(f64::total_cmp);
    let n = sorted.len();
    if n == 0 {
        return Err(ModelError::Invalid(format!("{source}: no records")));
    }
    let median = if n % 2 == 1 {
        sorted[n / 2]
    } else {
        0.5 * (sorted[n / 2 - 1] + sorted[n / 2])
    };
    let (lo, hi) = (sorted[0], sorted[n - 1]);
    let tol = crate::tolerance::INTERVAL_RTOL * median;
    if (hi - median).abs() > tol || (median - lo).abs() > tol {
        return Err(ModelError::Invalid(format!(
            "{source}: remeasurement intervals range from {lo} to {hi} years, not all within 5 % of their median {median}; a fixed-interval model needs equal intervals: use --interval annualized (P = p^L) or --interval exposure (cloglog with offset ln L)"
        )));
    }
    Ok(median)
}

/// Whether the CSV file's header names `column` (false when the file cannot be read: the
/// loader reports that properly).
pub fn file_has_column(path: &std::path::Path, column: &str) -> bool {
    csv::Reader::from_path(path)
        .and_then(|mut r| r.headers().map(|h| h.iter().any(|c| c.trim() == column)))
        .unwrap_or(false)
}

/// Check diameter-class lower bounds: at least one, finite, strictly increasing.
///
/// # Errors
/// [`crate::Error::Usage`] naming the offending bounds.
pub fn check_classes(breaks: &[f64]) -> Result<(), crate::Error> {
    if breaks.is_empty() || breaks.iter().any(|b| !b.is_finite()) {
        return Err(crate::Error::Usage(
            "--dbh-classes needs finite class bounds, e.g. --dbh-classes 0,5,10,20,40".into(),
        ));
    }
    if let Some(w) = breaks.windows(2).find(|w| w[0] >= w[1]) {
        return Err(crate::Error::Usage(format!(
            "--dbh-classes must increase: {} is followed by {}",
            w[0], w[1]
        )));
    }
    Ok(())
}
