//! `stemcast compare A.toml B.toml [...]`: arguments and terminal glue around
//! [`stemcast::project::compare_scenarios`] and [`stemcast::report::write_comparison`].

use std::io::IsTerminal;
use std::path::PathBuf;

use indicatif::{ProgressBar, ProgressStyle};
use stemcast::project::{compare_scenarios, validate_comparison, CompareOptions};
use stemcast::scenario::Scenario;
use stemcast::Error;

/// Project several scenarios with common random numbers and compare them with the first.
#[derive(Debug, Clone, clap::Args)]
pub struct Args {
    /// Scenario files (TOML, `docs/scenario.md`); the first is the baseline.
    #[arg(required = true, value_name = "SCENARIO.toml")]
    pub scenarios: Vec<PathBuf>,
    /// Output folder (default: `comparison` in the current folder).
    #[arg(long, value_name = "DIR")]
    pub out: Option<PathBuf>,
    /// Seed for every scenario (default: the first scenario's).
    #[arg(long, value_name = "S")]
    pub seed: Option<u64>,
    /// Monte Carlo replicates for every scenario (default: the first scenario's).
    #[arg(long, value_name = "N", value_parser = clap::value_parser!(u64).range(1..))]
    pub replicates: Option<u64>,
    /// Worker threads (default: all cores); results do not depend on it.
    #[arg(long, value_name = "N", value_parser = clap::value_parser!(u64).range(1..))]
    pub threads: Option<u64>,
}

/// Run `stemcast compare`.
///
/// # Errors
/// Fewer than two scenarios, differing horizons or steps, duplicate names, scenario and model
/// errors (exit 2); write failures (exit 1).
pub fn run(args: &Args) -> Result<(), Error> {
    if args.scenarios.len() < 2 {
        return Err(Error::Usage(format!(
            "compare needs at least two scenario files (the first is the baseline), got {}",
            args.scenarios.len()
        )));
    }
    let scenarios = args
        .scenarios
        .iter()
        .map(|p| Scenario::read(p))
        .collect::<Result<Vec<_>, _>>()?;
    validate_comparison(&scenarios)?;
    let options = CompareOptions {
        seed: args.seed,
        replicates: args.replicates.map(|n| n as usize),
        threads: args.threads.map(|n| n as usize),
    };
    let per = options.replicates.unwrap_or(scenarios[0].replicates);
    let bar = std::io::stderr().is_terminal().then(|| {
        let b = ProgressBar::new((per * scenarios.len()) as u64);
        if let Ok(style) =
            ProgressStyle::with_template("{bar:40} {pos}/{len} replicates ({msg}), {eta} left")
        {
            b.set_style(style);
        }
        b
    });
    let result = compare_scenarios(&scenarios, &options, &|scenario, done| {
        if let Some(b) = &bar {
            b.set_position((scenario * per + done) as u64);
            b.set_message(scenarios[scenario].name.clone());
        }
    });
    if let Some(b) = &bar {
        b.finish_and_clear();
    }
    let comparison = result?;
    let out = args
        .out
        .clone()
        .unwrap_or_else(|| PathBuf::from("comparison"));
    let written = stemcast::report::write_comparison(&out, &comparison, &scenarios)?;
    for w in &comparison.warnings {
        eprintln!("warning: {w}");
    }
    for r in &comparison.results {
        for w in &r.warnings {
            eprintln!("warning: {}: {w}", r.scenario);
        }
    }
    outln!(
        "compared {} scenarios against \"{}\" ({} paired replicates, seed {}): wrote {} files to {}",
        comparison.results.len(),
        comparison.results[0].scenario,
        comparison.replicates,
        comparison.seed,
        written.len(),
        out.display()
    );
    Ok(())
}
