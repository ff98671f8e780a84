//! `stemcast demo`: the whole chain on the bundled, invented planting trial.

use std::collections::BTreeMap;
use std::path::{Path, PathBuf};

use clap::Args;
use stemcast::atomic::write_atomic;
use stemcast::data::{ColumnNames, Outcome, Units};
use stemcast::demo::TRIAL_CSV;
use stemcast::fit::growth::{fit_growth, GrowthSpec, GrowthTarget};
use stemcast::fit::summary;
use stemcast::fit::survival::{fit_survival, SurvivalResponse, SurvivalSpec};
use stemcast::fit::{DataOptions, Years};
use stemcast::model::file::{GrowthResponse, IntervalKind};
use stemcast::model::link::Link;
use stemcast::project::{compare_scenarios, validate_comparison, CompareOptions, Metric};
use stemcast::project::{Comparison, ProjectionResult};
use stemcast::scenario::Scenario;
use stemcast::Error;

/// The bundled demo scenarios (file name, text), the first being the baseline of the
/// comparison; their model paths point to `../models/`.
const SCENARIOS: [(&str, &str); 5] = [
    (
        "released.toml",
        include_str!("../../scenarios/released.toml"),
    ),
    (
        "unreleased.toml",
        include_str!("../../scenarios/unreleased.toml"),
    ),
    ("thinned.toml", include_str!("../../scenarios/thinned.toml")),
    (
        "control_ends.toml",
        include_str!("../../scenarios/control_ends.toml"),
    ),
    (
        "density_limit.toml",
        include_str!("../../scenarios/density_limit.toml"),
    ),
];

/// `demo` options.
#[derive(Debug, Args)]
pub struct DemoArgs {
    /// Folder for the demo's data, models and results (created if needed).
    #[arg(long, default_value = "stemcast-demo")]
    out: PathBuf,
}

fn mkdir(p: &Path) -> Result<(), Error> {
    std::fs::create_dir_all(p).map_err(|e| Error::io(p, e))
}

/// Run the demo.
pub fn run(args: &DemoArgs) -> Result<(), Error> {
    let out = &args.out;
    mkdir(&out.join("models"))?;
    let data_path = out.join("trial.csv");
    write_atomic(&data_path, TRIAL_CSV.as_bytes())?;
    let mut references = BTreeMap::new();
    references.insert("treatment".to_string(), "unreleased".to_string());
    let data = DataOptions {
        path: data_path.clone(),
        names: ColumnNames::default(),
        use_columns: Vec::new(),
        categorical: Vec::new(),
        references,
        intercept: true,
        units: Units::Metric,
        input: Default::default(),
    };
    outln!("stemcast demo — an invented planting trial (12 plots, remeasured after 5 years)");
    outln!("data: {}\n", data_path.display());

    let survival = fit_survival(&SurvivalSpec {
        data: data.clone(),
        predictors: "dbh, bal, treatment".into(),
        response: SurvivalResponse::Status {
            outcome: Outcome::Alive,
        },
        weights: None,
        offset: None,
        years: Years::Default,
        interval: IntervalKind::Fixed,
        link: Link::Logit,
    })?;
    let survival_path = out.join("models").join("survival.toml");
    write_atomic(&survival_path, survival.model.to_toml()?.as_bytes())?;
    let source = data_path.display().to_string();
    out!(
        "{}",
        strip_caution(&summary::survival_text(&survival, &source))
    );
    outln!("  model file: {}\n", survival_path.display());

    let growth = fit_growth(&GrowthSpec {
        data,
        predictors: "ln(dbh), bal, treatment".into(),
        target: GrowthTarget::Increment(GrowthResponse::LnBai),
        years: Years::Default,
    })?;
    let growth_path = out.join("models").join("growth.toml");
    write_atomic(&growth_path, growth.model.to_toml()?.as_bytes())?;
    out!("{}", strip_caution(&summary::growth_text(&growth, &source)));
    outln!("  model file: {}\n", growth_path.display());

    let scenario_dir = out.join("scenarios");
    mkdir(&scenario_dir)?;
    let mut scenarios = Vec::with_capacity(SCENARIOS.len());
    for (file, text) in SCENARIOS {
        let path = scenario_dir.join(file);
        write_atomic(&path, text.as_bytes())?;
        scenarios.push(Scenario::read(&path)?);
    }
    validate_comparison(&scenarios)?;
    let comparison = compare_scenarios(&scenarios, &CompareOptions::default(), &|_, _| {})?;
    let dir = out.join("comparison");
    stemcast::report::write_comparison(&dir, &comparison, &scenarios)?;
    for r in &comparison.results {
        out!("{}", projection_table(r));
    }
    out!("{}", difference_table(&comparison));
    let warnings: usize = comparison.results.iter().map(|r| r.warnings.len()).sum();
    if warnings > 0 {
        outln!(
            "{warnings} warnings, extrapolation beyond the fitting data among them: see the report"
        );
    }
    outln!(
        "\nreport: {}\nfiles:  {} (summary.csv, differences.csv, harvest.csv, classes.csv, charts)\n",
        dir.join("report.html").display(),
        dir.display()
    );
    outln!("{}", summary::CAUTION);
    Ok(())
}

/// Stems/ha at the horizon: each scenario's mean difference from the baseline with its 90 %
/// band from paired replicates.
fn difference_table(c: &Comparison) -> String {
    let Some(horizon) = c.differences.iter().map(|d| d.year).reduce(f64::max) else {
        return String::new();
    };
    let mut out = format!(
        "difference from \"{}\" in stems/ha at year {horizon} (paired replicates, 90 % band)\n",
        c.results[0].scenario
    );
    for d in c
        .differences
        .iter()
        .filter(|d| d.year == horizon && d.metric == Metric::StemsPerHa)
    {
        let f = |v: Option<f64>| v.map_or("–".to_string(), |x| format!("{x:+.0}"));
        out.push_str(&format!(
            "  {:<36} {:>6} [{} to {}]\n",
            d.scenario,
            f(d.mean),
            f(d.p05),
            f(d.p95)
        ));
    }
    out
}

/// A short table of one projection: every 10 years, mean and 90 % band of stems/ha, and the
/// means of cumulative survival, basal area and QMD.
fn projection_table(r: &ProjectionResult) -> String {
    let mut out = format!(
        "projection \"{}\" — {} replicates, seed {}; no ingrowth is modelled\n  year   age   stems/ha [90 % band]   cum. survival   basal area m²/ha   QMD cm\n",
        r.scenario, r.settings.replicates, r.seed
    );
    let fmt = |v: Option<f64>, d: usize| v.map_or("–".to_string(), |x| format!("{x:.d$}"));
    for y in r.years.iter().filter(|y| (y.year % 10.0).abs() < 1e-9) {
        let stems = y.get(Metric::StemsPerHa);
        out.push_str(&format!(
            "  {:>4}  {:>4}   {:>5} [{:>4}–{:>4}]   {:>13}   {:>16}   {:>6}\n",
            y.year,
            y.age.map_or(String::new(), |a| format!("{a}")),
            fmt(stems.mean, 0),
            fmt(stems.p05, 0),
            fmt(stems.p95, 0),
            fmt(y.get(Metric::CumulativeSurvival).mean, 3),
            fmt(y.get(Metric::BasalArea).mean, 1),
            fmt(y.get(Metric::Qmd).mean, 1),
        ));
    }
    out
}

/// The summaries end with the caution; the demo prints it once at the end.
fn strip_caution(text: &str) -> String {
    text.replace(&format!("\n{}\n", summary::CAUTION), "")
}
