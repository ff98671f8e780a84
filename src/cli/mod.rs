//! Command-line interface: argument structs (clap derive) and the glue that turns them into
//! library calls. Only this layer and `main` print.

#[macro_use]
pub(crate) mod out;
mod batch;
mod check;
mod compare;
mod demo;
mod fit;
mod fit_args;
mod fit_height;
mod fit_ingrowth;
mod input_args;
mod intervals;
mod merge;
mod project;
mod rank;
mod run_args;
mod validate;

use clap::{Parser, Subcommand};
use stemcast::Error;

/// Fit tree survival and diameter-growth models from remeasured plots, and project stands
/// forward with uncertainty.
#[derive(Debug, Parser)]
#[command(name = "stemcast", version, about, long_about = None, propagate_version = true)]
pub struct Cli {
    #[command(subcommand)]
    command: Command,
}

#[derive(Debug, Subcommand)]
enum Command {
    /// Run the whole chain on the bundled, invented planting trial.
    Demo(demo::DemoArgs),
    /// Validate a scenario and its models and print the projection plan.
    Check(check::Args),
    /// Project one scenario: Monte Carlo replicates (or the expected-value trajectory).
    Project(project::Args),
    /// Project one scenario for every stand of a tree list into one long CSV.
    Batch(batch::Args),
    /// Put the outputs of the shards of one batch run together, in the tree list's order.
    Merge(merge::Args),
    /// Project several scenarios with common random numbers and compare them with the first.
    Compare(compare::Args),
    /// Fit a survival or growth model from a remeasurement CSV, or a height-diameter curve or
    /// volume equation from measured trees.
    #[command(subcommand)]
    Fit(Box<fit::FitCommand>),
    /// Compare candidate predictor sets of a survival model: AIC, weights, BIC, AUC, CV log-loss.
    Rank(Box<rank::RankArgs>),
    /// Pair a measurement history into the interval table (fates, derived covariates).
    Intervals(Box<intervals::Args>),
    /// Project every plot-interval of a measurement history and compare with the remeasurement.
    Validate(Box<validate::Args>),
}

/// Run the parsed command.
pub fn run(cli: Cli) -> Result<(), Error> {
    match cli.command {
        Command::Demo(a) => demo::run(&a),
        Command::Check(a) => check::run(&a),
        Command::Project(a) => project::run(&a),
        Command::Compare(a) => compare::run(&a),
        Command::Batch(a) => batch::run(&a),
        Command::Merge(a) => merge::run(&a),
        Command::Fit(c) => fit::run(*c),
        Command::Rank(a) => rank::run(*a),
        Command::Intervals(a) => intervals::run(&a),
        Command::Validate(a) => validate::run(&a),
    }
}
