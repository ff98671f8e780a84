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
use stemcast::Error;

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
    };
    println!("stemcast demo — an invented planting trial (12 plots, remeasured after 5 years)");
    println!("data: {}\n", data_path.display());

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
    print!(
        "{}",
        strip_caution(&summary::survival_text(&survival, &source))
    );
    println!("  model file: {}\n", survival_path.display());

    let growth = fit_growth(&GrowthSpec {
        data,
        predictors: "ln(dbh), bal, treatment".into(),
        target: GrowthTarget::Increment(GrowthResponse::LnBai),
        years: Years::Default,
    })?;
    let growth_path = out.join("models").join("growth.toml");
    write_atomic(&growth_path, growth.model.to_toml()?.as_bytes())?;
    print!("{}", strip_caution(&summary::growth_text(&growth, &source)));
    println!("  model file: {}\n", growth_path.display());
    println!("{}", summary::CAUTION);
    Ok(())
}

/// The summaries end with the caution; the demo prints it once at the end.
fn strip_caution(text: &str) -> String {
    text.replace(&format!("\n{}\n", summary::CAUTION), "")
}
