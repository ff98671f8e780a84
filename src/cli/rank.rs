//! `stemcast rank`: compare candidate predictor sets of a survival model on the same records.

use clap::{Args, ValueEnum};
use stemcast::fit::rank::{rank, RankSpec};
use stemcast::fit::rank_render::{rank_csv, rank_json, rank_text};
use stemcast::Error;

use stemcast::fit::mixed::SurvivalPlotEffect;

use super::fit_args::{control, survival_spec, DataArgs, PlotEffectArgs, SurvivalModelArgs};

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
    /// Number of cross-validation folds; all trees of a stand fall in one fold.
    #[arg(long, default_value_t = 10)]
    folds: usize,
    /// Seed of the shuffle of stands into folds (the same folds for every candidate).
    #[arg(long, default_value_t = 1)]
    seed: u64,
    #[command(flatten)]
    model: SurvivalModelArgs,
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
(null for weighted or successes/trials data) and the cross-validated log-loss: stands are
shuffled with --seed and dealt to --folds folds; each fold is predicted from a fit on the
others. Candidates whose columns are a subset of another's get a likelihood-ratio test.
With --plot-effect every candidate is also fitted with a random plot intercept (\"<predictors>
+ plot effect\", k counts its SD) on the same records; its held-out stands are predicted as new
plots (marginal probabilities), and its test against the same predictors without the plot
effect has the boundary-corrected p-value (0.5 chi2(0) + 0.5 chi2(1)).
Write the CSV or JSON to a file with shell redirection (stemcast rank ... --format csv > r.csv).";

/// Run `rank`.
pub fn run(a: RankArgs) -> Result<(), Error> {
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
    match a.format {
        RankFormat::Text => print!("{}", rank_text(&ranking)),
        RankFormat::Csv => print!("{}", rank_csv(&ranking)),
        RankFormat::Json => println!("{:#}", rank_json(&ranking)),
    }
    Ok(())
}
