//! Argument structs shared by `fit survival`, `fit growth` and `rank`, and their translation
//! into the library's specifications.

use std::path::PathBuf;

use clap::{Args, ValueEnum};
use stemcast::data::{ColumnNames, Outcome, Units};
use stemcast::fit::survival::{SurvivalResponse, SurvivalSpec};
use stemcast::fit::{parse_references, DataOptions, Years};
use stemcast::model::file::IntervalKind;
use stemcast::model::glm::FitControl;
use stemcast::model::link::Link;
use stemcast::Error;

use super::input_args::{input_options, FitInputArgs};

/// Output format of the summary.
#[derive(Debug, Clone, Copy, PartialEq, Eq, ValueEnum)]
pub enum Format {
    /// A readable table.
    Text,
    /// One JSON object (`docs/commands.md#survival-json`, `docs/commands.md#growth-json`).
    Json,
}

#[derive(Debug, Clone, Copy, PartialEq, Eq, ValueEnum)]
pub(crate) enum LinkArg {
    Logit,
    Probit,
    Cloglog,
}

#[derive(Debug, Clone, Copy, PartialEq, Eq, ValueEnum)]
pub(crate) enum OutcomeArg {
    Alive,
    Dead,
}

#[derive(Debug, Clone, Copy, PartialEq, Eq, ValueEnum)]
pub(crate) enum IntervalArg {
    Fixed,
    Annualized,
    Exposure,
}

#[derive(Debug, Clone, Copy, PartialEq, Eq, ValueEnum)]
pub(crate) enum UnitsArg {
    Metric,
    Imperial,
}

impl From<UnitsArg> for Units {
    fn from(u: UnitsArg) -> Self {
        match u {
            UnitsArg::Metric => Units::Metric,
            UnitsArg::Imperial => Units::Imperial,
        }
    }
}

#[derive(Debug, Clone, Copy, PartialEq, Eq, ValueEnum)]
pub(crate) enum ResponseArg {
    #[value(alias = "ln_bai")]
    LnBai,
    #[value(alias = "annual_increment")]
    AnnualIncrement,
}

/// Where the data is and how to read it: shared by `fit survival`, `fit growth` and `rank`.
#[derive(Debug, Args)]
pub struct DataArgs {
    /// Remeasurement CSV: one row per tree and period, or with --history one row per tree per
    /// measurement.
    pub(crate) data: PathBuf,
    /// Stand (plot) column, for the derived covariates ba, bal, qmd, rel_dbh, stems. In a
    /// history, the plot: covariates are computed per plot and measurement.
    #[arg(long, default_value = "stand")]
    pub(crate) stand: String,
    /// Expansion-factor column (stems per hectare, or per acre with --units imperial).
    #[arg(long, default_value = "expansion")]
    pub(crate) expansion: String,
    /// Column of the diameter at the first measurement.
    #[arg(long, default_value = "dbh")]
    pub(crate) dbh: String,
    /// Every record has this remeasurement interval in years.
    #[arg(long, conflicts_with = "years_col")]
    pub(crate) years: Option<f64>,
    /// Column with each record's remeasurement interval in years (default: `years` if present).
    #[arg(long)]
    pub(crate) years_col: Option<String>,
    /// Use the file's column for a derived covariate (ba, bal, qmd, rel_dbh, stems) instead of
    /// computing it. Repeatable.
    #[arg(long = "use-column", value_name = "NAME")]
    pub(crate) use_column: Vec<String>,
    /// Treat a numeric column as categorical. Repeatable.
    #[arg(long, value_name = "COL")]
    pub(crate) categorical: Vec<String>,
    /// Reference level of a categorical column. Repeatable.
    #[arg(long, value_name = "COL=LEVEL")]
    pub(crate) reference: Vec<String>,
    /// Fit without an intercept.
    #[arg(long)]
    pub(crate) no_intercept: bool,
    /// Units of diameters and per-area values.
    #[arg(long, value_enum, default_value = "metric")]
    pub(crate) units: UnitsArg,
    #[command(flatten)]
    pub(crate) input: FitInputArgs,
}

/// Options shared by both fits.
#[derive(Debug, Args)]
pub struct CommonArgs {
    #[command(flatten)]
    pub(crate) data: DataArgs,
    /// Comma-separated predictor terms: names, ln(x), ln(x+c), sqrt(x), x^k, name=level, a:b.
    /// A bare categorical name expands to one indicator per non-reference level.
    #[arg(long, short = 'p')]
    pub(crate) predictors: String,
    /// Write the model file (TOML) here.
    #[arg(long, value_name = "MODEL.toml")]
    pub(crate) out: Option<PathBuf>,
    /// Summary format on standard output.
    #[arg(long, value_enum, default_value = "text")]
    pub(crate) format: Format,
}

/// The survival model: response, weights, offset, link and interval. Shared by `fit survival`
/// and `rank`.
#[derive(Debug, Args)]
pub struct SurvivalModelArgs {
    /// Status column: 1/0, true/false, yes/no, alive/dead; cut/harvested/removed are censored;
    /// other codes with --status-codes. Default `alive` (`status` with --history).
    #[arg(long, value_name = "COL")]
    pub(crate) status: Option<String>,
    /// What a status of 1 means, i.e. what the modelled probability is about.
    #[arg(long, value_enum, default_value = "alive")]
    pub(crate) outcome: OutcomeArg,
    /// Column of successes for grouped binomial data (with --trials).
    #[arg(long, requires = "trials", conflicts_with = "outcome")]
    pub(crate) successes: Option<String>,
    /// Column of trials for grouped binomial data (with --successes).
    #[arg(long, requires = "successes")]
    pub(crate) trials: Option<String>,
    /// Column of prior (frequency) weights.
    #[arg(long)]
    pub(crate) weights: Option<String>,
    /// Column added to the linear predictor.
    #[arg(long)]
    pub(crate) offset: Option<String>,
    /// Link function.
    #[arg(long, value_enum, default_value = "logit")]
    pub(crate) link: LinkArg,
    /// How the remeasurement interval enters: fixed (all equal), annualized (P = p^L, logit,
    /// outcome alive, needs --years-col) or exposure (cloglog, outcome dead, offset ln L, needs
    /// --years-col).
    #[arg(long, value_enum, default_value = "fixed")]
    pub(crate) interval: IntervalArg,
    /// Give up (exit code 1) after this many iterations (IRLS solves or Newton steps), like R's
    /// glm.control(maxit). Default 50; a --plot-effect fit allows 4 times as many quasi-Newton
    /// steps.
    #[arg(long, value_name = "N", value_parser = clap::value_parser!(u32).range(1..))]
    pub(crate) max_iterations: Option<u32>,
}

/// The iteration limit of the model options.
pub(crate) fn control(m: &SurvivalModelArgs) -> FitControl {
    match m.max_iterations {
        Some(n) => FitControl::default().max_iterations(n as usize),
        None => FitControl::default(),
    }
}

/// `fit survival` options.
#[derive(Debug, Args)]
#[command(after_long_help = SURVIVAL_HELP)]
pub struct SurvivalArgs {
    #[command(flatten)]
    pub(crate) common: CommonArgs,
    #[command(flatten)]
    pub(crate) model: SurvivalModelArgs,
    /// Cluster-robust (CR1 sandwich) covariance by this column, e.g. the plot: trees in one
    /// plot are not independent. The summary, JSON and model file then carry it. Every
    /// interval kind; not with --firth or --plot-effect.
    #[arg(long, value_name = "COL")]
    pub(crate) cluster: Option<String>,
    /// Firth's penalised likelihood (logit link only): finite estimates under separation.
    /// Standard errors from the penalised information (Wald); p-values from
    /// penalised-likelihood-ratio tests (as logistf).
    #[arg(long)]
    pub(crate) firth: bool,
    /// Lower bounds of the diameter classes of the calibration table; classes are
    /// [lower, next lower), the last one open. Default: 0,5,10,15,20,25,30,40,50,60 cm
    /// (0,2,4,6,8,10,12,16,20,24 in), bounds above the largest diameter dropped.
    #[arg(long, value_name = "B0,B1,...", value_delimiter = ',')]
    pub(crate) dbh_classes: Option<Vec<f64>>,
    /// Draw observed against predicted survival by diameter class and the fitted survival
    /// curve against diameter (one curve per level of a categorical predictor; other
    /// covariates at their mean or reference level) to this SVG file.
    #[arg(long, value_name = "FILE")]
    pub(crate) calibration_svg: Option<PathBuf>,
    #[command(flatten)]
    pub(crate) plot_effect: PlotEffectArgs,
    /// Quadrature nodes per plot for --plot-effect: adaptive Gauss–Hermite quadrature centred
    /// at each plot's conditional mode; 1 is the Laplace approximation.
    #[arg(long, value_name = "K", default_value_t = 15,
          value_parser = clap::value_parser!(u32).range(1..=100))]
    pub(crate) quadrature: u32,
}

/// The random plot intercept (docs/mixed-models.md): shared by both fits.
#[derive(Debug, Args)]
pub struct PlotEffectArgs {
    /// Fit a random intercept per plot (a mixed model): binomial GLMM for survival, linear
    /// mixed model for growth. The summary gains σ_u, its likelihood-ratio test, the
    /// intraclass correlation and each plot's conditional mode and SD.
    #[arg(long)]
    pub(crate) plot_effect: bool,
}

impl PlotEffectArgs {
    /// The plot column when a plot effect is asked for: `--plot`, else the stand column.
    pub(crate) fn column(&self, data: &DataArgs) -> Option<String> {
        self.plot_effect.then(|| {
            data.input
                .plot
                .clone()
                .unwrap_or_else(|| data.stand.clone())
        })
    }
}

/// How the growth LMM is estimated.
#[derive(Debug, Clone, Copy, PartialEq, Eq, ValueEnum)]
pub(crate) enum LmmMethodArg {
    Reml,
    Ml,
}

/// The diagnostics section of `fit survival --help`.
const SURVIVAL_HELP: &str = "Diagnostics in every summary (and the JSON keys auc, hosmer_lemeshow, lr_test_vs_null, calibration):
  ROC AUC of the modelled outcome (Mann-Whitney, ties count 1/2).
  Hosmer-Lemeshow: 10 groups cut at the type-7 deciles of the fitted probabilities, repeated
    cut points dropped, groups right-closed so that ties stay together; the statistic sums
    (O - E)^2/E over both outcome columns and is referred to chi-square on 8 df (as R
    ResourceSelection::hoslem.test with g = 10).
  Likelihood-ratio test against the intercept-only model (with the same offset).
  Calibration: records, observed and mean predicted survival per diameter class.
AUC, Hosmer-Lemeshow and the calibration table need one 0/1 outcome per record with unit
weight; for weighted or successes/trials data they are null and `unavailable` says why.";

/// `fit growth` options.
#[derive(Debug, Args)]
pub struct GrowthArgs {
    #[command(flatten)]
    pub(crate) common: CommonArgs,
    /// Column of the diameter at the second measurement (default `dbh2`; not with --history).
    #[arg(long, value_name = "COL")]
    pub(crate) dbh2: Option<String>,
    /// Status column, used when present to count dead and cut trees separately. Default
    /// `alive` (`status` with --history).
    #[arg(long, value_name = "COL")]
    pub(crate) status: Option<String>,
    /// Response computed from the two diameters.
    #[arg(
        long,
        value_enum,
        default_value = "ln-bai",
        conflicts_with = "response_col"
    )]
    pub(crate) response: ResponseArg,
    /// Regress this column as it is (the model cannot be projected).
    #[arg(long, value_name = "COL")]
    pub(crate) response_col: Option<String>,
    /// Cluster-robust (CR1 sandwich) covariance by this column, e.g. the plot.
    #[arg(long, value_name = "COL", conflicts_with = "plot_effect")]
    pub(crate) cluster: Option<String>,
    #[command(flatten)]
    pub(crate) plot_effect: PlotEffectArgs,
    /// Estimation of --plot-effect: REML (default) or ML (to compare fixed effects by AIC).
    #[arg(long, value_enum, default_value = "reml", requires = "plot_effect")]
    pub(crate) method: LmmMethodArg,
}

pub(crate) fn data_options(
    c: &DataArgs,
    status: Option<&str>,
    dbh2: Option<&str>,
) -> Result<DataOptions, Error> {
    let input = input_options(&c.input)?;
    let history = input.history.is_some();
    if history && (c.years.is_some() || c.years_col.is_some()) {
        return Err(Error::Usage(
            "--history computes each interval from the measurement times: drop --years and --years-col".into(),
        ));
    }
    if history && dbh2.is_some() {
        return Err(Error::Usage(
            "--dbh2 names the second diameter of a pair file; a history has one diameter column (--dbh)".into(),
        ));
    }
    let default_status = if history { "status" } else { "alive" };
    let names = ColumnNames {
        stand: c.stand.clone(),
        tree: c.input.reading.tree.clone(),
        expansion: c.expansion.clone(),
        dbh: c.dbh.clone(),
        dbh2: dbh2.unwrap_or("dbh2").to_string(),
        status: status.unwrap_or(default_status).to_string(),
        ..ColumnNames::default()
    };
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
        input,
    })
}

pub(crate) fn years(c: &DataArgs) -> Years {
    match (&c.years, &c.years_col) {
        (Some(n), _) => Years::Fixed(*n),
        (None, Some(col)) => Years::Column(col.clone()),
        (None, None) => Years::Default,
    }
}

/// The survival specification of the data and model options, fitting `predictors`.
pub(crate) fn survival_spec(
    data: &DataArgs,
    m: &SurvivalModelArgs,
    predictors: String,
) -> Result<SurvivalSpec, Error> {
    let response = match (&m.successes, &m.trials) {
        (Some(s), Some(t)) => SurvivalResponse::Counts {
            successes: s.clone(),
            trials: t.clone(),
        },
        _ => SurvivalResponse::Status {
            outcome: match m.outcome {
                OutcomeArg::Alive => Outcome::Alive,
                OutcomeArg::Dead => Outcome::Dead,
            },
        },
    };
    Ok(SurvivalSpec {
        data: data_options(data, m.status.as_deref(), None)?,
        predictors,
        response,
        weights: m.weights.clone(),
        offset: m.offset.clone(),
        years: years(data),
        interval: match m.interval {
            IntervalArg::Fixed => IntervalKind::Fixed,
            IntervalArg::Annualized => IntervalKind::Annualized,
            IntervalArg::Exposure => IntervalKind::Exposure,
        },
        link: match m.link {
            LinkArg::Logit => Link::Logit,
            LinkArg::Probit => Link::Probit,
            LinkArg::Cloglog => Link::Cloglog,
        },
    })
}
