//! `stemcast project SCENARIO.toml`: arguments and terminal glue around
//! [`stemcast::project::run_scenario_with_progress`] and [`stemcast::report::write_projection`].

use std::io::IsTerminal;
use std::path::PathBuf;

use indicatif::{ProgressBar, ProgressStyle};
use stemcast::project::run_scenario_with_progress;
use stemcast::scenario::Scenario;

/// Project one stand forward by Monte Carlo (or its expected trajectory with `--expected`).
#[derive(Debug, Clone, clap::Args)]
pub struct Args {
    /// Scenario file (TOML, `docs/scenario.md`).
    pub scenario: PathBuf,
    /// Output folder (default: `<scenario file stem>-projection` in the current folder).
    #[arg(long, value_name = "DIR")]
    pub out: Option<PathBuf>,
    /// Replicates, seed, driver and threads.
    #[command(flatten)]
    pub run: super::run_args::RunArgs,
}

/// Run `stemcast project`.
///
/// # Errors
/// Scenario, model and tree-list errors (exit 2), write failures (exit 1).
pub fn run(args: &Args) -> Result<(), stemcast::Error> {
    let scenario = Scenario::read(&args.scenario)?;
    let options = args.run.options();
    let total = if args.run.expected {
        1
    } else {
        options.replicates.unwrap_or(scenario.replicates)
    };
    let bar = (std::io::stderr().is_terminal() && !args.run.expected).then(|| {
        let b = ProgressBar::new(total as u64);
        if let Ok(style) =
            ProgressStyle::with_template("{bar:40} {pos}/{len} replicates, {eta} left")
        {
            b.set_style(style);
        }
        b
    });
    let result = run_scenario_with_progress(&scenario, &options, &|done| {
        if let Some(b) = &bar {
            b.set_position(done as u64);
        }
    });
    if let Some(b) = &bar {
        b.finish_and_clear();
    }
    let result = result?;
    let out = args.out.clone().unwrap_or_else(|| {
        let stem = args
            .scenario
            .file_stem()
            .map_or("scenario".into(), |s| s.to_string_lossy().into_owned());
        PathBuf::from(format!("{stem}-projection"))
    });
    let written = stemcast::report::write_projection(&out, &result)?;
    for w in &result.warnings {
        eprintln!("warning: {w}");
    }
    outln!(
        "{} ({}, {} replicate{}, seed {}): wrote {} files to {}",
        result.scenario,
        result.driver.name(),
        result.settings.replicates,
        if result.settings.replicates == 1 {
            ""
        } else {
            "s"
        },
        result.seed,
        written.len(),
        out.display()
    );
    Ok(())
}
