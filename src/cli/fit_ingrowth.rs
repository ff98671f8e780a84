//! `stemcast fit ingrowth`: the hurdle model of new trees from a plot-period table
//! (`docs/ingrowth.md`).

use std::path::PathBuf;

use clap::{Args, ValueEnum};
use stemcast::data::Units;
use stemcast::data::{ColumnNames, HistorySpec};
use stemcast::fit::ingrowth::{
    fit_ingrowth, fit_plot_periods, IngrowthFit, IngrowthSpec, TreeRecordsSpec,
};
use stemcast::fit::ingrowth_history::{
    history_plot_periods, HistoryTreesSpec, AREA_COLUMN, COUNT_COLUMN, YEARS_COLUMN,
};
use stemcast::fit::ingrowth_summary::{ingrowth_json, ingrowth_text};
use stemcast::fit::parse_references;
use stemcast::model::ingrowth_trees::MAX_QUANTILES;
use stemcast::model::truncated::CountFamily;
use stemcast::Error;

use super::fit_args::{Format, UnitsArg};
use super::input_args::{history_options, status_codes, HistoryArgs};

/// `fit ingrowth --history`: derive the plot-period table and the new trees, then fit.
fn from_history(a: &IngrowthArgs, spec: &IngrowthSpec) -> Result<IngrowthFit, Error> {
    let options = history_options(&a.reading, true)?.unwrap_or_default();
    let hspec = HistorySpec {
        names: ColumnNames {
            stand: a.stand.clone(),
            tree: a.reading.tree.clone(),
            dbh: a.dbh.clone(),
            status: a.status.clone(),
            expansion: a.expansion.clone(),
            ..ColumnNames::default()
        },
        time: options.time,
        status_codes: status_codes(&a.reading)?,
        missing_as: options.missing_as,
        threshold_dbh: options.threshold_dbh,
        categorical: a.categorical.clone(),
        units: spec.units,
    };
    let derived = history_plot_periods(
        &a.data,
        &hspec,
        &HistoryTreesSpec {
            species: a.species_col.clone(),
            by: a.by.clone(),
            quantiles: a.dbh_quantiles,
        },
    )?;
    let mut fit = fit_plot_periods(spec, &derived.table, Some(derived.trees))?;
    for c in derived.skipped {
        fit.warnings.push(format!(
            "history column `{c}` is a plot attribute but has the name of a derived column; it was left out"
        ));
    }
    Ok(fit)
}

#[derive(Debug, Clone, Copy, PartialEq, Eq, ValueEnum)]
pub(crate) enum CountsArg {
    /// Zero-truncated negative binomial NB2 (Var = μ + αμ² before truncation).
    #[value(alias = "negative_binomial", alias = "nb")]
    NegativeBinomial,
    /// Zero-truncated Poisson.
    Poisson,
}

/// Arguments of `fit ingrowth`.
#[derive(Debug, Args)]
pub struct IngrowthArgs {
    /// Plot-period CSV: one row per plot and period with the number of new trees, the plot
    /// area, the period length and plot covariates at the start of the period; or, with
    /// --history, a measurement history.
    data: PathBuf,
    /// Read DATA as a measurement history (one row per tree per measurement) and derive the
    /// plot-period table from it: the columns `ingrowth`, `area` (1/expansion), `years`, `ba`,
    /// `stems`, `qmd` and the plot attributes at the start of each period (docs/ingrowth.md).
    #[arg(long, conflicts_with_all = ["count", "area", "years", "trees"])]
    history: bool,
    /// History: plot column.
    #[arg(
        long,
        value_name = "COL",
        default_value = "stand",
        requires = "history"
    )]
    stand: String,
    /// History: diameter column.
    #[arg(long, value_name = "COL", default_value = "dbh", requires = "history")]
    dbh: String,
    /// History: status column.
    #[arg(
        long,
        value_name = "COL",
        default_value = "status",
        requires = "history"
    )]
    status: String,
    /// History: expansion-factor column (stems per hectare, or per acre with --units
    /// imperial); every tree of a plot has the same one, whose inverse is the plot area.
    #[arg(
        long,
        value_name = "COL",
        default_value = "expansion",
        requires = "history"
    )]
    expansion: String,
    #[command(flatten)]
    reading: HistoryArgs,
    /// Column of the number of trees that entered the plot in the period (whole number ≥ 0).
    #[arg(long, value_name = "COL")]
    count: Option<String>,
    /// Column of the plot area (ha; acres with --units imperial). Terms read it as `area`,
    /// e.g. ln(area).
    #[arg(long, value_name = "COL")]
    area: Option<String>,
    /// Column of the period length L in years. Terms read it as `years`, e.g. ln(years).
    #[arg(long, value_name = "COL")]
    years: Option<String>,
    /// Comma-separated predictor terms of both parts (names, ln(x), ln(x+c), sqrt(x), x^k,
    /// name=level, a:b); `area` and `years` are the --area and --years columns.
    #[arg(long, short = 'p')]
    predictors: String,
    /// Predictor terms of the count part, when they differ from --predictors.
    #[arg(long, value_name = "TERMS")]
    count_predictors: Option<String>,
    /// Distribution of the count given any ingrowth.
    #[arg(long, value_enum, default_value = "negative-binomial")]
    counts: CountsArg,
    /// Treat a numeric column as categorical. Repeatable.
    #[arg(long, value_name = "COL")]
    categorical: Vec<String>,
    /// Reference level of a categorical column. Repeatable.
    #[arg(long, value_name = "COL=LEVEL")]
    reference: Vec<String>,
    /// Fit both parts without an intercept.
    #[arg(long)]
    no_intercept: bool,
    /// Units of the area and the covariates.
    #[arg(long, value_enum, default_value = "metric")]
    units: UnitsArg,
    /// CSV of the new trees (one row per ingrowth tree) for their species shares and
    /// diameter quantiles, stored with the model.
    #[arg(long, value_name = "FILE")]
    trees: Option<PathBuf>,
    /// Diameter column of the --trees records.
    #[arg(long, value_name = "COL", default_value = "dbh", requires = "trees")]
    tree_dbh: String,
    /// Species column of the --trees records (or of the history).
    #[arg(long, value_name = "COL")]
    species_col: Option<String>,
    /// Attribute column of the --trees records whose levels get shares and quantiles of their
    /// own.
    #[arg(long, value_name = "COL")]
    by: Option<String>,
    /// Number of diameter quantiles stored, at probabilities (k − ½)/M.
    #[arg(long, value_name = "M", default_value_t = 10)]
    dbh_quantiles: usize,
    /// Write the model file (TOML) here.
    #[arg(long, value_name = "MODEL.toml")]
    out: Option<PathBuf>,
    /// Summary format on standard output.
    #[arg(long, value_enum, default_value = "text")]
    format: Format,
}

fn spec(a: &IngrowthArgs) -> Result<IngrowthSpec, Error> {
    history_options(&a.reading, a.history)?;
    if a.history {
        return Ok(IngrowthSpec {
            count: COUNT_COLUMN.into(),
            area: AREA_COLUMN.into(),
            years: YEARS_COLUMN.into(),
            ..table_spec(a, String::new(), String::new(), String::new())?
        });
    }
    if a.trees.is_none() && (a.species_col.is_some() || a.by.is_some()) {
        return Err(Error::Usage(
            "--species-col and --by describe the new trees: give --trees FILE (or --history)"
                .into(),
        ));
    }
    let missing: Vec<&str> = [
        ("--count", &a.count),
        ("--area", &a.area),
        ("--years", &a.years),
    ]
    .iter()
    .filter(|(_, v)| v.is_none())
    .map(|(flag, _)| *flag)
    .collect();
    let (Some(count), Some(area), Some(years)) = (&a.count, &a.area, &a.years) else {
        return Err(Error::Usage(format!(
            "a plot-period table needs the columns of the count, plot area and period length: give {}",
            missing.join(", ")
        )));
    };
    table_spec(a, count.clone(), area.clone(), years.clone())
}

fn table_spec(
    a: &IngrowthArgs,
    count: String,
    area: String,
    years: String,
) -> Result<IngrowthSpec, Error> {
    if !(1..=MAX_QUANTILES).contains(&a.dbh_quantiles) {
        return Err(Error::Usage(format!(
            "--dbh-quantiles {}: give 1 to {MAX_QUANTILES}",
            a.dbh_quantiles
        )));
    }
    Ok(IngrowthSpec {
        path: a.data.clone(),
        count,
        area,
        years,
        predictors: a.predictors.clone(),
        count_predictors: a.count_predictors.clone(),
        family: match a.counts {
            CountsArg::NegativeBinomial => CountFamily::NegativeBinomial,
            CountsArg::Poisson => CountFamily::Poisson,
        },
        categorical: a.categorical.clone(),
        references: parse_references(&a.reference)?,
        intercept: !a.no_intercept,
        units: match a.units {
            UnitsArg::Metric => Units::Metric,
            UnitsArg::Imperial => Units::Imperial,
        },
        trees: a.trees.as_ref().map(|path| TreeRecordsSpec {
            path: path.clone(),
            dbh: a.tree_dbh.clone(),
            species: a.species_col.clone(),
            by: a.by.clone(),
            quantiles: a.dbh_quantiles,
        }),
    })
}

/// Run `fit ingrowth`.
pub fn run(a: &IngrowthArgs) -> Result<(), Error> {
    let spec = spec(a)?;
    let fit = if a.history {
        from_history(a, &spec)?
    } else {
        fit_ingrowth(&spec)?
    };
    if let Some(p) = &a.out {
        super::out::distinct(p, &[&a.data])?;
        stemcast::atomic::write_atomic(p, fit.model.to_toml()?.as_bytes())?;
    }
    match a.format {
        Format::Text => out!("{}", ingrowth_text(&fit, &a.data.display().to_string())),
        Format::Json => outln!("{:#}", ingrowth_json(&fit)),
    }
    Ok(())
}
