//! `stemcast validate SCENARIO HISTORY.csv`: project every plot-interval of a measurement
//! history with the scenario's models and compare with the remeasurement (docs/validation.md).

use std::path::PathBuf;

use clap::{Args as ClapArgs, ValueEnum};
use stemcast::data::{read_history, read_plot_list, ColumnNames, HistorySpec};
use stemcast::project::{
    build_cases, run_validation, summarise_validation, survival_calibration, Grouping, RunOptions,
    Span, ValidateOptions,
};
use stemcast::report::{
    validation_csv, validation_plots_csv, validation_report, validation_survival_csv,
    write_files_atomically, VALIDATION_NOTE,
};
use stemcast::scenario::Scenario;
use stemcast::Error;

use super::fit_args::UnitsArg;
use super::input_args::{history_options, status_codes, HistoryArgs};

#[derive(Debug, Clone, Copy, PartialEq, Eq, ValueEnum)]
pub(crate) enum SpanArg {
    Consecutive,
    FirstLast,
}

/// `validate` options.
#[derive(Debug, ClapArgs)]
pub struct Args {
    /// Scenario file (TOML): its models, uncertainty, replicates and seed are used; its
    /// cohort, horizon and actions are not.
    scenario: PathBuf,
    /// History CSV: one row per tree per measurement (docs/histories.md).
    history: PathBuf,
    /// Output folder.
    #[arg(long, value_name = "DIR", default_value = "validation")]
    out: PathBuf,
    /// Plot column.
    #[arg(long, value_name = "COL", default_value = "stand")]
    stand: String,
    /// Diameter column.
    #[arg(long, value_name = "COL", default_value = "dbh")]
    dbh: String,
    /// Status column.
    #[arg(long, value_name = "COL", default_value = "status")]
    status: String,
    /// Expansion-factor column (stems per hectare, or per acre with --units imperial).
    #[arg(long, value_name = "COL", default_value = "expansion")]
    expansion: String,
    /// Treat a numeric column as categorical. Repeatable.
    #[arg(long, value_name = "COL")]
    categorical: Vec<String>,
    /// Units of diameters and per-area values in the history.
    #[arg(long, value_enum, default_value = "metric")]
    units: UnitsArg,
    #[command(flatten)]
    reading: HistoryArgs,
    /// Which measurement pairs: every consecutive pair, or each plot's first and last.
    #[arg(long, value_enum, default_value = "consecutive")]
    span: SpanArg,
    /// Validate only the plots listed in this file (one id per line).
    #[arg(long, value_name = "FILE")]
    plots: Option<PathBuf>,
    /// Also summarise by the levels of this attribute at t1. Repeatable.
    #[arg(long, value_name = "COL")]
    by: Vec<String>,
    /// Width of the QMD classes (cm) of the summary by size.
    #[arg(long, value_name = "CM", default_value_t = 10.0)]
    qmd_class_width: f64,
    /// DBH class lower bounds (cm) of the survival calibration; the last class is open.
    #[arg(long, value_name = "CM,...", value_delimiter = ',',
          default_values_t = vec![0.0, 5.0, 10.0, 15.0, 20.0, 25.0, 30.0, 40.0, 50.0, 60.0])]
    dbh_classes: Vec<f64>,
    /// Bootstrap resamples (over plots) of the coverage interval.
    #[arg(long, value_name = "N", default_value_t = 2000,
          value_parser = clap::value_parser!(u64).range(1..=1_000_000))]
    bootstrap: u64,
    /// Monte Carlo replicates (overrides the scenario).
    #[arg(long, value_name = "N", value_parser = clap::value_parser!(u64).range(1..))]
    replicates: Option<u64>,
    /// Seed of the random draws and the bootstrap (overrides the scenario).
    #[arg(long, value_name = "S")]
    seed: Option<u64>,
    /// Worker threads (default: all cores); results do not depend on it.
    #[arg(long, value_name = "N", value_parser = clap::value_parser!(u64).range(1..))]
    threads: Option<u64>,
    /// Compare only the expected-value trajectory (no bands, no coverage).
    #[arg(long)]
    expected: bool,
}

/// Run `validate`.
///
/// # Errors
/// Usage, scenario and history errors (exit 2), projection and write failures (exit 1).
pub fn run(a: &Args) -> Result<(), Error> {
    if !(a.qmd_class_width.is_finite() && a.qmd_class_width > 0.0) {
        return Err(Error::Usage(format!(
            "--qmd-class-width {}: must be a positive width in cm",
            a.qmd_class_width
        )));
    }
    if a.dbh_classes.is_empty()
        || a.dbh_classes.iter().any(|b| !b.is_finite())
        || a.dbh_classes.windows(2).any(|w| w[0] >= w[1])
    {
        return Err(Error::Usage(
            "--dbh-classes: give increasing finite lower bounds, e.g. 0,10,20".into(),
        ));
    }
    let scenario = Scenario::read(&a.scenario)?;
    let options = history_options(&a.reading, true)?.unwrap_or_default();
    let mut categorical = a.categorical.clone();
    for c in [
        &scenario.survival.model.common,
        &scenario.growth.model.common,
    ] {
        categorical.extend(c.categorical.keys().cloned());
    }
    categorical.sort();
    categorical.dedup();
    let spec = HistorySpec {
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
        categorical,
        units: a.units.into(),
    };
    let history = read_history(&a.history, &spec)?;
    for by in &a.by {
        if history.frame.column(by).is_none() {
            return Err(Error::Usage(format!(
                "--by {by}: {} has no such column",
                a.history.display()
            )));
        }
    }
    let plots = a.plots.as_deref().map(read_plot_list).transpose()?;
    if let Some(p) = &plots {
        let known: std::collections::HashSet<&str> =
            history.plots.iter().map(String::as_str).collect();
        if let Some(missing) = p.iter().find(|id| !known.contains(id.as_str())) {
            return Err(Error::Usage(format!(
                "--plots: plot \"{missing}\" is not in {}",
                a.history.display()
            )));
        }
    }
    let pairing = history.pair()?;
    let span = match a.span {
        SpanArg::Consecutive => Span::Consecutive,
        SpanArg::FirstLast => Span::FirstLast,
    };
    let cases = build_cases(&history, &pairing, span).map_err(Error::Usage)?;
    let run = RunOptions {
        expected: a.expected,
        replicates: a.replicates.map(|n| n as usize),
        seed: a.seed,
        threads: a.threads.map(|n| n as usize),
    };
    let o = ValidateOptions {
        run,
        plots: plots.map(|p| p.into_iter().collect()),
    };
    let results = run_validation(&scenario, &cases, &o)?;
    let grouping = Grouping {
        qmd_class_width_cm: a.qmd_class_width,
        by: a.by.clone(),
        bootstrap: a.bootstrap as usize,
        seed: a.seed.unwrap_or(scenario.seed),
    };
    let summary = summarise_validation(&results, &grouping);
    let calibration = survival_calibration(&results, &a.dbh_classes);
    let subtitle = format!(
        "stemcast {}; scenario {}; history {}; seed {}",
        env!("CARGO_PKG_VERSION"),
        a.scenario.display(),
        a.history.display(),
        grouping.seed
    );
    let page = validation_report(&results, &summary, &subtitle)?;
    let files = vec![
        ("validation.html".to_string(), page),
        ("validation.csv".to_string(), validation_csv(&summary)),
        (
            "validation_plots.csv".to_string(),
            validation_plots_csv(&results),
        ),
        (
            "validation_survival.csv".to_string(),
            validation_survival_csv(&calibration),
        ),
    ];
    write_files_atomically(&a.out, &files)?;
    outln!(
        "{}: {} plot-intervals of {} plots projected with {}",
        a.history.display(),
        results.len(),
        summary.first().map_or(0, |r| r.plots),
        a.scenario.display()
    );
    for r in summary.iter().filter(|r| r.group == "all") {
        let cov = match (r.coverage, r.coverage_interval) {
            (Some(c), Some([lo, hi])) => format!(", 90 % band coverage {c:.3} [{lo:.3}, {hi:.3}]"),
            _ => String::new(),
        };
        outln!(
            "  {}: bias {:.4} (SE {:.4}), RMSE {:.4}{cov}",
            r.metric,
            r.bias,
            r.se_bias,
            r.rmse
        );
    }
    outln!("  note: {VALIDATION_NOTE}");
    outln!("  wrote {} files to {}", files.len(), a.out.display());
    Ok(())
}
