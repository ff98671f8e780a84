//! `stemcast check SCENARIO.toml`: validate a scenario and its models against the trees, print
//! the plan and any extrapolation warnings.

use std::path::PathBuf;

use stemcast::project::check;
use stemcast::scenario::Scenario;

/// Validate a scenario and print its projection plan.
#[derive(Debug, Clone, clap::Args)]
pub struct Args {
    /// Scenario file (TOML, `docs/scenario.md`).
    pub scenario: PathBuf,
}

/// Run `stemcast check`.
///
/// # Errors
/// The first problem found in the scenario, its models or its trees (exit 2).
pub fn run(args: &Args) -> Result<(), stemcast::Error> {
    let scenario = Scenario::read(&args.scenario)?;
    let report = check(&scenario)?;
    for line in &report.plan {
        outln!("{line}");
    }
    for w in &report.warnings {
        outln!("warning: {w}");
    }
    outln!(
        "{}: ok{}",
        args.scenario.display(),
        if report.warnings.is_empty() {
            String::new()
        } else {
            let n = report.warnings.len();
            format!(" ({n} warning{})", if n == 1 { "" } else { "s" })
        }
    );
    Ok(())
}
