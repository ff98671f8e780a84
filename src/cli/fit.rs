//! `stemcast fit survival` and `stemcast fit growth`.

use std::path::PathBuf;

use clap::{Args, Subcommand, ValueEnum};
use stemcast::data::{ColumnNames, Outcome, Units};
use stemcast::fit::growth::{fit_growth, GrowthSpec, GrowthTarget};
use stemcast::fit::summary;
use stemcast::fit::survival::{fit_survival, SurvivalResponse, SurvivalSpec};
use stemcast::fit::{parse_references, DataOptions, Years};
use stemcast::model::file::{GrowthResponse, IntervalKind, ModelFile};
use stemcast::model::link::Link;
use stemcast::Error;

/// Which model to fit.
#[derive(Debug, Subcommand)]
pub enum FitCommand {
    /// Fit a periodic survival model: binomial GLM of the tree status at the second
    /// measurement (or grouped successes/trials) on predictor terms.
    Survival(SurvivalArgs),
    /// Fit a diameter-growth model: least squares on ln(basal-area increment), the annual
    /// diameter increment, or a given column.
    Growth(GrowthArgs),
}

/// Output format of the summary.
#[derive(Debug, Clone, Copy, PartialEq, Eq, ValueEnum)]
pub enum Format {
    /// A readable table.
    Text,
    /// One JSON object (design §2).
    Json,
}

#[derive(Debug, Clone, Copy, PartialEq, Eq, ValueEnum)]
enum LinkArg {
    Logit,
    Probit,
    Cloglog,
}

#[derive(Debug, Clone, Copy, PartialEq, Eq, ValueEnum)]
enum OutcomeArg {
    Alive,
    Dead,
}

#[derive(Debug, Clone, Copy, PartialEq, Eq, ValueEnum)]
enum IntervalArg {
    Fixed,
    Annualized,
    Exposure,
}

#[derive(Debug, Clone, Copy, PartialEq, Eq, ValueEnum)]
enum UnitsArg {
    Metric,
    Imperial,
}

#[derive(Debug, Clone, Copy, PartialEq, Eq, ValueEnum)]
enum ResponseArg {
    LnBai,
    AnnualIncrement,
}

/// Options shared by both fits.
#[derive(Debug, Args)]
pub struct CommonArgs {
    /// Remeasurement CSV: one row per tree.
    data: PathBuf,
    /// Comma-separated predictor terms: names, ln(x), ln(x+c), sqrt(x), x^k, name=level, a:b.
    /// A bare categorical name expands to one indicator per non-reference level.
    #[arg(long, short = 'p')]
    predictors: String,
    /// Stand (plot) column, for the derived covariates ba, bal, qmd, rel_dbh, stems.
    #[arg(long, default_value = "stand")]
    stand: String,
    /// Expansion-factor column (stems per hectare, or per acre with --units imperial).
    #[arg(long, default_value = "expansion")]
    expansion: String,
    /// Column of the diameter at the first measurement.
    #[arg(long, default_value = "dbh")]
    dbh: String,
    /// Every record has this remeasurement interval in years.
    #[arg(long, conflicts_with = "years_col")]
    years: Option<f64>,
    /// Column with each record's remeasurement interval in years (default: `years` if present).
    #[arg(long)]
    years_col: Option<String>,
    /// Use the file's column for a derived covariate (ba, bal, qmd, rel_dbh, stems) instead of
    /// computing it. Repeatable.
    #[arg(long = "use-column", value_name = "NAME")]
    use_column: Vec<String>,
    /// Treat a numeric column as categorical. Repeatable.
    #[arg(long, value_name = "COL")]
    categorical: Vec<String>,
    /// Reference level of a categorical column. Repeatable.
    #[arg(long, value_name = "COL=LEVEL")]
    reference: Vec<String>,
    /// Fit without an intercept.
    #[arg(long)]
    no_intercept: bool,
    /// Units of diameters and per-area values.
    #[arg(long, value_enum, default_value = "metric")]
    units: UnitsArg,
    /// Write the model file (TOML) here.
    #[arg(long, value_name = "MODEL.toml")]
    out: Option<PathBuf>,
    /// Summary format on standard output.
    #[arg(long, value_enum, default_value = "text")]
    format: Format,
}

/// `fit survival` options.
#[derive(Debug, Args)]
pub struct SurvivalArgs {
    #[command(flatten)]
    common: CommonArgs,
    /// Status column: 1/0, true/false, yes/no, alive/dead; cut/harvested/removed are censored.
    #[arg(long, default_value = "alive")]
    status: String,
    /// What a status of 1 means, i.e. what the modelled probability is about.
    #[arg(long, value_enum, default_value = "alive")]
    outcome: OutcomeArg,
    /// Column of successes for grouped binomial data (with --trials).
    #[arg(long, requires = "trials", conflicts_with = "outcome")]
    successes: Option<String>,
    /// Column of trials for grouped binomial data (with --successes).
    #[arg(long, requires = "successes")]
    trials: Option<String>,
    /// Column of prior (frequency) weights.
    #[arg(long)]
    weights: Option<String>,
    /// Column added to the linear predictor.
    #[arg(long)]
    offset: Option<String>,
    /// Link function.
    #[arg(long, value_enum, default_value = "logit")]
    link: LinkArg,
    /// How the remeasurement interval enters: fixed (all equal), annualized (P = p^L) or
    /// exposure (cloglog, outcome dead, offset ln L).
    #[arg(long, value_enum, default_value = "fixed")]
    interval: IntervalArg,
}

/// `fit growth` options.
#[derive(Debug, Args)]
pub struct GrowthArgs {
    #[command(flatten)]
    common: CommonArgs,
    /// Column of the diameter at the second measurement.
    #[arg(long, default_value = "dbh2")]
    dbh2: String,
    /// Response computed from the two diameters.
    #[arg(
        long,
        value_enum,
        default_value = "ln-bai",
        conflicts_with = "response_col"
    )]
    response: ResponseArg,
    /// Regress this column as it is (the model cannot be projected).
    #[arg(long, value_name = "COL")]
    response_col: Option<String>,
}

fn data_options(
    c: &CommonArgs,
    status: Option<&str>,
    dbh2: Option<&str>,
) -> Result<DataOptions, Error> {
    let mut names = ColumnNames {
        stand: c.stand.clone(),
        expansion: c.expansion.clone(),
        dbh: c.dbh.clone(),
        ..ColumnNames::default()
    };
    if let Some(s) = status {
        names.status = s.to_string();
    }
    if let Some(d) = dbh2 {
        names.dbh2 = d.to_string();
    }
    Ok(DataOptions {
        path: c.data.clone(),
        names,
        use_columns: c.use_column.clone(),
        categorical: c.categorical.clone(),
        references: parse_references(&c.reference)?,
        intercept: !c.no_intercept,
        units: match c.units {
            UnitsArg::Metric => Units::Metric,
            UnitsArg::Imperial => Units::Imperial,
        },
    })
}

fn years(c: &CommonArgs) -> Years {
    match (&c.years, &c.years_col) {
        (Some(n), _) => Years::Fixed(*n),
        (None, Some(col)) => Years::Column(col.clone()),
        (None, None) => Years::Default,
    }
}

fn write_model(path: &Option<PathBuf>, model: &ModelFile) -> Result<(), Error> {
    if let Some(p) = path {
        stemcast::atomic::write_atomic(p, model.to_toml()?.as_bytes())?;
    }
    Ok(())
}

fn print(format: Format, text: String, json: serde_json::Value) {
    match format {
        Format::Text => print!("{text}"),
        Format::Json => println!("{json:#}"),
    }
}

/// Run `fit survival` or `fit growth`.
pub fn run(cmd: FitCommand) -> Result<(), Error> {
    match cmd {
        FitCommand::Survival(a) => {
            let response = match (&a.successes, &a.trials) {
                (Some(s), Some(t)) => SurvivalResponse::Counts {
                    successes: s.clone(),
                    trials: t.clone(),
                },
                _ => SurvivalResponse::Status {
                    outcome: match a.outcome {
                        OutcomeArg::Alive => Outcome::Alive,
                        OutcomeArg::Dead => Outcome::Dead,
                    },
                },
            };
            let spec = SurvivalSpec {
                data: data_options(&a.common, Some(&a.status), None)?,
                predictors: a.common.predictors.clone(),
                response,
                weights: a.weights.clone(),
                offset: a.offset.clone(),
                years: years(&a.common),
                interval: match a.interval {
                    IntervalArg::Fixed => IntervalKind::Fixed,
                    IntervalArg::Annualized => IntervalKind::Annualized,
                    IntervalArg::Exposure => IntervalKind::Exposure,
                },
                link: match a.link {
                    LinkArg::Logit => Link::Logit,
                    LinkArg::Probit => Link::Probit,
                    LinkArg::Cloglog => Link::Cloglog,
                },
            };
            let fit = fit_survival(&spec)?;
            write_model(&a.common.out, &fit.model)?;
            let source = a.common.data.display().to_string();
            print(
                a.common.format,
                summary::survival_text(&fit, &source),
                summary::survival_json(&fit),
            );
        }
        FitCommand::Growth(a) => {
            let target = match &a.response_col {
                Some(c) => GrowthTarget::Column(c.clone()),
                None => GrowthTarget::Increment(match a.response {
                    ResponseArg::LnBai => GrowthResponse::LnBai,
                    ResponseArg::AnnualIncrement => GrowthResponse::AnnualIncrement,
                }),
            };
            let spec = GrowthSpec {
                data: data_options(&a.common, None, Some(&a.dbh2))?,
                predictors: a.common.predictors.clone(),
                target,
                years: years(&a.common),
            };
            let fit = fit_growth(&spec)?;
            write_model(&a.common.out, &fit.model)?;
            let source = a.common.data.display().to_string();
            print(
                a.common.format,
                summary::growth_text(&fit, &source),
                summary::growth_json(&fit),
            );
        }
    }
    Ok(())
}
