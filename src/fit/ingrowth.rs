//! `fit ingrowth` from a plot-period table: one row per plot and period with the number of new
//! trees, the plot area, the period length and plot covariates; optionally a file of the new
//! trees themselves for their species shares and diameter quantiles. Resolves the columns,
//! validates every cell (file, line, column), builds both parts' designs, fits the hurdle and
//! assembles the model file (`docs/ingrowth.md`).

use std::collections::BTreeMap;
use std::path::PathBuf;

use super::ingrowth_load::{positive_numbers, read_counts, read_tree_records};
use crate::data::{read_table, FrameColumn, Table, TableOptions, Units};
use crate::model::design::{build_design, Design, DesignOptions};
use crate::model::file::{CoefficientEntry, CovarianceEntry, CovarianceKind};
use crate::model::hurdle::{fit_hurdle, HurdleFit, PlotPeriods};
use crate::model::ingrowth::{AREA_VAR, YEARS_VAR};
use crate::model::ingrowth_file::{
    AnyPartFile, CountPartFile, IngrowthColumns, IngrowthFitInfo, IngrowthKind, IngrowthModelFile,
};
use crate::model::ingrowth_trees::{summarise_trees, IngrowthTreeRecords, IngrowthTrees};
use crate::model::terms::{parse_predictors, Factor, Term};
use crate::model::truncated::CountFamily;
use crate::model::ModelError;
use crate::Error;

/// Where the ingrowth tree records are and what to take from them.
#[derive(Debug, Clone)]
pub struct TreeRecordsSpec {
    /// CSV with one row per new tree.
    pub path: PathBuf,
    /// Diameter column.
    pub dbh: String,
    /// Species column, for species shares.
    pub species: Option<String>,
    /// Attribute column whose levels get shares and quantiles of their own.
    pub by: Option<String>,
    /// Number of diameter quantiles stored per group.
    pub quantiles: usize,
}

/// Everything `fit ingrowth` needs.
#[derive(Debug, Clone)]
pub struct IngrowthSpec {
    /// The plot-period CSV.
    pub path: PathBuf,
    /// Column of the number of new trees (a whole number ≥ 0).
    pub count: String,
    /// Column of the plot area (positive).
    pub area: String,
    /// Column of the period length in years (positive).
    pub years: String,
    /// Predictor terms of the any part (and of the count part unless `count_predictors`).
    pub predictors: String,
    /// Predictor terms of the count part, when they differ.
    pub count_predictors: Option<String>,
    /// The count distribution given any.
    pub family: CountFamily,
    /// Columns to treat as categorical.
    pub categorical: Vec<String>,
    /// Reference level per categorical variable.
    pub references: BTreeMap<String, String>,
    /// Fit intercepts (default).
    pub intercept: bool,
    /// Units of the area and covariates.
    pub units: Units,
    /// The new trees, for species shares and diameter quantiles.
    pub trees: Option<TreeRecordsSpec>,
}

/// A fitted ingrowth model with its model file.
#[derive(Debug, Clone)]
pub struct IngrowthFit {
    /// Both parts of the hurdle.
    pub hurdle: HurdleFit,
    /// Species shares and diameter quantiles of new trees, when tree records were given.
    pub trees: Option<IngrowthTrees>,
    /// Things the user should know.
    pub warnings: Vec<String>,
    /// The model file to write with `--out`.
    pub model: IngrowthModelFile,
}

/// Fit the ingrowth hurdle described by `spec`.
///
/// # Errors
/// Bad data (a count that is not a whole number ≥ 0, a non-positive area or period, naming
/// file, line and column), unknown columns or terms (exit code 2); non-convergence (1).
pub fn fit_ingrowth(spec: &IngrowthSpec) -> Result<IngrowthFit, Error> {
    // Term errors before the file is read.
    role_terms(&spec.predictors, spec)?;
    if let Some(p) = &spec.count_predictors {
        role_terms(p, spec)?;
    }
    let options = TableOptions {
        categorical: spec.categorical.clone(),
        columns: None,
    };
    let table = read_table(&spec.path, &options)?;
    let trees = match &spec.trees {
        None => None,
        Some(t) => Some(tree_summary(t)?),
    };
    fit_plot_periods(spec, &table, trees)
}

/// Fit the ingrowth hurdle of `spec` to a plot-period table already read (from a file, or
/// derived from a history by [`super::ingrowth_history`]), with the new trees' summary.
///
/// # Errors
/// As [`fit_ingrowth`].
pub fn fit_plot_periods(
    spec: &IngrowthSpec,
    table: &Table,
    trees: Option<IngrowthTrees>,
) -> Result<IngrowthFit, Error> {
    let any_terms = role_terms(&spec.predictors, spec)?;
    let count_terms = match &spec.count_predictors {
        Some(p) => role_terms(p, spec)?,
        None => any_terms.clone(),
    };
    for (column, flag) in [
        (&spec.count, "--count"),
        (&spec.area, "--area"),
        (&spec.years, "--years"),
    ] {
        if !table.has_column(column) {
            return Err(crate::data::DataError::MissingColumn {
                file: table.frame.source.clone(),
                column: column.clone(),
                why: format!("named by {flag}"),
                available: table.header_list(),
            }
            .into());
        }
    }
    for (var, column) in [(AREA_VAR, &spec.area), (YEARS_VAR, &spec.years)] {
        let used = any_terms.iter().chain(&count_terms).any(|t| uses(t, var));
        if used && column != var && table.has_column(var) {
            return Err(Error::Usage(format!(
                "the term variable `{var}` means the column named by --{var} (`{column}`), but {} also has a column `{var}`; rename that column",
                table.frame.source
            )));
        }
    }
    let frame = &table.frame;
    let count = read_counts(frame, &spec.count)?;
    let area = positive_numbers(frame, &spec.area, "plot area")?;
    let years = positive_numbers(frame, &spec.years, "period length in years")?;
    let mut frame = table.frame.clone();
    frame
        .columns
        .insert(AREA_VAR.into(), FrameColumn::Numeric(area.clone()));
    frame
        .columns
        .insert(YEARS_VAR.into(), FrameColumn::Numeric(years.clone()));
    let design_options = DesignOptions {
        intercept: spec.intercept,
        references: spec.references.clone(),
        declared_categorical: spec.categorical.clone(),
    };
    let any_design = build_design(&any_terms, &frame, &design_options)?;
    let count_design = build_design(&count_terms, &frame, &design_options)?;
    let hurdle = fit_hurdle(
        &PlotPeriods {
            x_any: any_design.x.view(),
            any_terms: &any_design.names,
            x_count: count_design.x.view(),
            count_terms: &count_design.names,
            count: &count,
            area: &area,
            years: &years,
        },
        spec.family,
    )?;
    let mut warnings: Vec<String> = any_design.warnings.clone();
    warnings.extend(count_design.warnings.iter().cloned());
    warnings.extend(hurdle.any.warnings.iter().map(|w| format!("any part: {w}")));
    warnings.extend(
        hurdle
            .count
            .warnings
            .iter()
            .map(|w| format!("count part: {w}")),
    );
    let model = model_file(
        spec,
        &table.sha256,
        &hurdle,
        &any_design,
        &count_design,
        &trees,
    );
    Ok(IngrowthFit {
        hurdle,
        trees,
        warnings,
        model,
    })
}

/// Parse a predictor list and rename the variables that read the area and years columns to
/// `area` and `years`, so that model files do not depend on the data's column names.
fn role_terms(predictors: &str, spec: &IngrowthSpec) -> Result<Vec<Term>, Error> {
    let mut terms = parse_predictors(predictors)?;
    if terms.is_empty() {
        return Err(Error::Usage(
            "--predictors is empty; give at least one term, e.g. --predictors \"ba, ln(years)\""
                .into(),
        ));
    }
    if let Some(t) = terms.iter().find(|t| uses(t, &spec.count)) {
        return Err(Error::Usage(format!(
            "term `{}` uses the count column `{}` as a predictor",
            t.label(),
            spec.count
        )));
    }
    for factor in terms.iter_mut().flat_map(|t| t.factors.iter_mut()) {
        let var = match factor {
            Factor::Numeric { var, .. } | Factor::Indicator { var, .. } => var,
        };
        if *var == spec.area {
            *var = AREA_VAR.into();
        } else if *var == spec.years {
            *var = YEARS_VAR.into();
        }
    }
    let mut seen: Vec<String> = Vec::new();
    for term in &terms {
        let label = term.label();
        if seen.contains(&label) {
            return Err(ModelError::Term {
                term: label,
                message: "given twice (the --area and --years columns are the variables `area` and `years`)".into(),
            }
            .into());
        }
        seen.push(label);
    }
    Ok(terms)
}

fn uses(term: &Term, var: &str) -> bool {
    term.factors.iter().any(|f| f.var() == var)
}

fn tree_summary(spec: &TreeRecordsSpec) -> Result<IngrowthTrees, Error> {
    let records = read_tree_records(spec)?;
    let mut trees = summarise_trees(
        &IngrowthTreeRecords {
            dbh: &records.dbh,
            species: records.species.as_deref(),
            group: records.group.as_deref(),
        },
        spec.quantiles,
    )?;
    trees.source = Some(spec.path.display().to_string());
    trees.species_attribute = spec.species.clone();
    trees.by = spec.by.clone();
    Ok(trees)
}

fn entries(names: &[String], estimates: &[f64], ses: &[f64]) -> Vec<CoefficientEntry> {
    names
        .iter()
        .zip(estimates)
        .zip(ses)
        .map(|((t, b), s)| CoefficientEntry {
            term: t.clone(),
            estimate: *b,
            std_error: Some(*s),
        })
        .collect()
}

fn model_file(
    spec: &IngrowthSpec,
    sha256: &str,
    h: &HurdleFit,
    any_design: &Design,
    count_design: &Design,
    trees: &Option<IngrowthTrees>,
) -> IngrowthModelFile {
    let mut categorical = any_design.categorical.clone();
    categorical.extend(count_design.categorical.clone());
    let mut ranges = any_design.ranges.clone();
    ranges.extend(count_design.ranges.clone());
    IngrowthModelFile {
        kind: IngrowthKind::Ingrowth,
        counts: spec.family,
        units: Some(spec.units.as_str().to_string()),
        any: AnyPartFile {
            link: Some("logit".into()),
            coefficients: entries(&h.any.terms, &h.any.coefficients, &h.any.std_errors),
            covariance: Some(CovarianceEntry {
                kind: CovarianceKind::Model,
                terms: h.any.terms.clone(),
                matrix: h.any.covariance.clone(),
            }),
        },
        count: CountPartFile {
            alpha: h.count.alpha,
            alpha_std_error: h.count.alpha_std_error,
            coefficients: entries(&h.count.terms, &h.count.coefficients, &h.count.std_errors),
            covariance: Some(CovarianceEntry {
                kind: CovarianceKind::Model,
                terms: h.count.covariance_names(),
                matrix: h.count.covariance.clone(),
            }),
        },
        categorical,
        trees: trees.clone(),
        fit: Some(IngrowthFitInfo {
            records: Some(h.n_obs as u64),
            positive: Some(h.n_positive as u64),
            source: Some(spec.path.display().to_string()),
            source_sha256: Some(sha256.to_string()),
            columns: Some(IngrowthColumns {
                count: spec.count.clone(),
                area: spec.area.clone(),
                years: spec.years.clone(),
            }),
            predictors: Some(spec.predictors.clone()),
            count_predictors: spec.count_predictors.clone(),
            any_log_likelihood: Some(h.any.log_likelihood),
            count_log_likelihood: Some(h.count.log_likelihood),
            log_likelihood: Some(h.log_likelihood),
            aic: Some(h.aic),
            bic: Some(h.bic),
            any_iterations: Some(h.any.iterations as u64),
            count_iterations: Some(h.count.iterations as u64),
            ranges,
        }),
    }
}
