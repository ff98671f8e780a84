//! `stemcast rank`: compare candidate predictor sets of a survival model (or, with
//! `--growth`, of a growth model) on the same records.

use clap::{Args, ValueEnum};
use stemcast::fit::growth::{GrowthSpec, GrowthTarget};
use stemcast::fit::rank::{rank, RankSpec};
use stemcast::fit::rank_growth::{rank_growth, GrowthRankSpec};
use stemcast::fit::rank_growth_render::{rank_growth_csv, rank_growth_json, rank_growth_text};
use stemcast::fit::rank_render::{rank_csv, rank_json, rank_text};
use stemcast::model::file::GrowthResponse;
use stemcast::Error;

use stemcast::fit::mixed::SurvivalPlotEffect;

use super::fit_args::{
    control, data_options, survival_spec, years, DataArgs, PlotEffectArgs, ResponseArg,
    SurvivalModelArgs,
};

/// Output format of the ranking.
#[derive(Debug, Clone, Copy, PartialEq, Eq, ValueEnum)]
pub enum RankFormat {
    /// A readable table with the nested-pair tests.
    Text,
    /// One CSV row per candidate (full precision), for spreadsheets.
    Csv,
    /// One JSON object with the candidates and the nested-pair tests.
    Json,
}

/// `rank` options.
#[derive(Debug, Args)]
#[command(after_long_help = RANK_HELP)]
pub struct RankArgs {
    #[command(flatten)]
    data: DataArgs,
    /// Candidate predictor lists, one quoted argument each, e.g. --candidates "dbh" "dbh, bal".
    #[arg(long, num_args = 1.., required = true, value_name = "PREDICTORS")]
    candidates: Vec<String>,
    /// Number of cross-validation folds; all trees of a plot (--plot, else the stand) fall in
    /// one fold.
    #[arg(long, default_value_t = 10)]
    folds: usize,
    /// Seed of the shuffle of plots into folds (the same folds for every candidate).
    #[arg(long, default_value_t = 1)]
    seed: u64,
    #[command(flatten)]
    model: SurvivalModelArgs,
    /// Rank growth models instead of survival models: least squares on --response, with
    /// R², the cross-validated RMSE of the response and F-tests between nested candidates.
    #[arg(long, conflicts_with_all = ["outcome", "successes", "trials", "weights", "offset", "link", "interval", "max_iterations"])]
    growth: bool,
    /// With --growth: the response computed from the two diameters.
    #[arg(long, value_enum, requires = "growth", default_value = "ln-bai")]
    response: ResponseArg,
    /// With --growth: column of the diameter at the second measurement (default `dbh2`; not
    /// with --history).
    #[arg(long, value_name = "COL", requires = "growth")]
    dbh2: Option<String>,
    #[command(flatten)]
    plot_effect: PlotEffectArgs,
    /// Quadrature nodes per plot for --plot-effect (1 = Laplace).
    #[arg(long, value_name = "K", default_value_t = 15,
          value_parser = clap::value_parser!(u32).range(1..=100))]
    quadrature: u32,
    /// Output format on standard output.
    #[arg(long, value_enum, default_value = "text")]
    format: RankFormat,
}

const RANK_HELP: &str =
    "Every candidate is fitted by maximum likelihood on the same records (loaded once with the
columns all candidates need) and the table is sorted by AIC. Columns: k coefficients,
log-likelihood, AIC, ΔAIC, Akaike weight exp(-ΔAIC/2) normalised over the candidates, BIC, AUC
(null for weighted or successes/trials data) and the cross-validated log-loss: plots (--plot,
else the stand column) are shuffled with --seed and dealt to --folds folds; each fold is
predicted from a fit on the others. Candidates whose columns are a subset of another's get a
likelihood-ratio test. A --reference applies to the candidates that use its variable.
With --growth the candidates are growth models fitted by least squares on --response: the
columns are k, log-likelihood, AIC, ΔAIC, weight, BIC (AIC and BIC count σ), adjusted R²,
residual SD and the cross-validated RMSE of the response, and nested pairs get F-tests.
With --plot-effect every survival candidate is also fitted with a random plot intercept
(\"<predictors> + plot effect\", k counts its SD) on the same records; its held-out plots are
predicted as new plots (marginal probabilities), and its test against the same predictors
without the plot effect has the boundary-corrected p-value (0.5 chi2(0) + 0.5 chi2(1)).
Write the CSV or JSON to a file with shell redirection (stemcast rank ... --format csv > r.csv).";

/// Run `rank`.
pub fn run(a: RankArgs) -> Result<(), Error> {
    if a.growth {
        return run_growth(&a);
    }
    let spec = RankSpec {
        survival: survival_spec(&a.data, &a.model, String::new())?,
        candidates: a.candidates.clone(),
        folds: a.folds,
        seed: a.seed,
        control: control(&a.model),
        plot_effect: a
            .plot_effect
            .column(&a.data)
            .map(|plot| SurvivalPlotEffect {
                plot,
                nodes: a.quadrature as usize,
            }),
    };
    let ranking = rank(&spec)?;
    super::fit::write_screen(&a.data.input.screen, &ranking.screening)?;
    match a.format {
        RankFormat::Text => out!("{}", rank_text(&ranking)),
        RankFormat::Csv => out!("{}", rank_csv(&ranking)),
        RankFormat::Json => outln!("{:#}", rank_json(&ranking)),
    }
    Ok(())
}

fn run_growth(a: &RankArgs) -> Result<(), Error> {
    let spec = GrowthRankSpec {
        growth: GrowthSpec {
            data: data_options(&a.data, a.model.status.as_deref(), a.dbh2.as_deref())?,
            predictors: String::new(),
            target: GrowthTarget::Increment(match a.response {
                ResponseArg::LnBai => GrowthResponse::LnBai,
                ResponseArg::AnnualIncrement => GrowthResponse::AnnualIncrement,
            }),
            years: years(&a.data),
        },
        candidates: a.candidates.clone(),
        folds: a.folds,
        seed: a.seed,
    };
    let ranking = rank_growth(&spec)?;
    super::fit::write_screen(&a.data.input.screen, &ranking.screening)?;
    match a.format {
        RankFormat::Text => out!("{}", rank_growth_text(&ranking)),
        RankFormat::Csv => out!("{}", rank_growth_csv(&ranking)),
        RankFormat::Json => outln!("{:#}", rank_growth_json(&ranking)),
    }
    Ok(())
}
