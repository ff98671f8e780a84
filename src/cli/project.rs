//! `stemcast project SCENARIO.toml`: arguments and terminal glue around
//! [`stemcast::project::run_scenario_with_progress`] and [`stemcast::report::write_projection`].

use std::io::IsTerminal;
use std::path::PathBuf;

use indicatif::{ProgressBar, ProgressStyle};
use stemcast::project::{run_scenario_with_progress, RunOptions};
use stemcast::scenario::Scenario;

/// Project one stand forward by Monte Carlo (or its expected trajectory with `--expected`).
#[derive(Debug, Clone, clap::Args)]
pub struct Args {
    /// Scenario file (TOML, `docs/scenario.md`).
    pub scenario: PathBuf,
    /// Output folder (default: `<scenario file stem>-projection` in the current folder).
    #[arg(long, value_name = "DIR")]
    pub out: Option<PathBuf>,
    /// Monte Carlo replicates (overrides the scenario).
    #[arg(long, value_name = "N", value_parser = clap::value_parser!(u64).range(1..))]
    pub replicates: Option<u64>,
    /// Seed of the random draws (overrides the scenario).
    #[arg(long, value_name = "S")]
    pub seed: Option<u64>,
    /// Run the deterministic expected-value driver instead of Monte Carlo.
    #[arg(long)]
    pub expected: bool,
    /// Worker threads (default: all cores); results do not depend on it.
    #[arg(long, value_name = "N", value_parser = clap::value_parser!(u64).range(1..))]
    pub threads: Option<u64>,
}

/// Run `stemcast project`.
///
/// # Errors
/// Scenario, model and tree-list errors (exit 2), write failures (exit 1).
pub fn run(args: &Args) -> Result<(), stemcast::Error> {
    let scenario = Scenario::read(&args.scenario)?;
    let options = RunOptions {
        expected: args.expected,
        replicates: args.replicates.map(|n| n as usize),
        seed: args.seed,
        threads: args.threads.map(|n| n as usize),
    };
    let total = if args.expected {
        1
    } else {
        options.replicates.unwrap_or(scenario.replicates)
    };
    let bar = (std::io::stderr().is_terminal() && !args.expected).then(|| {
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
