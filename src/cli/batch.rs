//! `stemcast batch SCENARIO.toml --trees TREES.csv`: arguments and terminal glue around
//! [`stemcast::project::run_batch`] and [`stemcast::report::BatchOutput`].

use std::io::IsTerminal;
use std::path::PathBuf;

use indicatif::{ProgressBar, ProgressStyle};
use stemcast::data::{ColumnNames, TreeListSpec, TreeListStream};
use stemcast::project::{run_batch, BatchOptions, RunOptions, Shard};
use stemcast::report::{rows_per_stand, BatchOutput};
use stemcast::scenario::Scenario;

/// Project one scenario for every stand of a tree list, one long CSV for all stands.
#[derive(Debug, Clone, clap::Args)]
pub struct Args {
    /// Scenario file (TOML, `docs/scenario.md`); each stand replaces its `[cohort]` trees.
    pub scenario: PathBuf,
    /// Tree list with several stands (columns stand, tree, dbh, expansion, attributes); the
    /// rows of each stand must be together.
    #[arg(long, value_name = "TREES.csv")]
    pub trees: PathBuf,
    /// Name of the stand column.
    #[arg(long, value_name = "COL", default_value = "stand")]
    pub stand: String,
    /// Output CSV.
    #[arg(long, value_name = "FILE", default_value = "batch.csv")]
    pub out: PathBuf,
    /// Project only part K of N (stands whose id hash modulo N is K − 1).
    #[arg(long, value_name = "K/N")]
    pub shard: Option<String>,
    /// Worker threads (default: all cores); results do not depend on it.
    #[arg(long, value_name = "N", value_parser = clap::value_parser!(u64).range(1..))]
    pub threads: Option<u64>,
    /// Keep the stands already in the output file and append the others.
    #[arg(long)]
    pub resume: bool,
    /// Monte Carlo replicates (overrides the scenario).
    #[arg(long, value_name = "N", value_parser = clap::value_parser!(u64).range(1..))]
    pub replicates: Option<u64>,
    /// Seed of the random draws (overrides the scenario).
    #[arg(long, value_name = "S")]
    pub seed: Option<u64>,
    /// Run the deterministic expected-value driver instead of Monte Carlo.
    #[arg(long)]
    pub expected: bool,
}

/// Run `stemcast batch`.
///
/// # Errors
/// Usage, scenario and tree-list errors (exit 2), write failures (exit 1).
pub fn run(args: &Args) -> Result<(), stemcast::Error> {
    let shard = args.shard.as_deref().map(Shard::parse).transpose()?;
    let scenario = Scenario::read(&args.scenario)?;
    let categorical = [
        &scenario.survival.model.common,
        &scenario.growth.model.common,
    ]
    .iter()
    .flat_map(|c| c.categorical.keys().cloned())
    .collect();
    let spec = TreeListSpec {
        names: ColumnNames {
            stand: args.stand.clone(),
            ..ColumnNames::default()
        },
        categorical,
    };
    let stands = TreeListStream::open(&args.trees, &spec)?;
    let (mut out, done) = if args.resume {
        BatchOutput::resume(&args.out, rows_per_stand(&scenario))?
    } else {
        (BatchOutput::create(&args.out)?, Default::default())
    };
    let options = BatchOptions {
        run: RunOptions {
            expected: args.expected,
            replicates: args.replicates.map(|n| n as usize),
            seed: args.seed,
            threads: args.threads.map(|n| n as usize),
        },
        shard,
        done,
    };
    let bar = std::io::stderr().is_terminal().then(|| {
        let b = ProgressBar::new_spinner();
        if let Ok(style) =
            ProgressStyle::with_template("{spinner} {pos} stands projected, {elapsed}")
        {
            b.set_style(style);
        }
        b
    });
    let counts = run_batch(&scenario, stands, &options, &mut |result| {
        out.append(result)?;
        if let Some(b) = &bar {
            b.suspend(|| print_warnings(&result.stand, &result.warnings));
            b.inc(1);
        } else {
            print_warnings(&result.stand, &result.warnings);
        }
        Ok(())
    });
    if let Some(b) = &bar {
        b.finish_and_clear();
    }
    let counts = counts?;
    let path = out.finish()?;
    let mut skipped = Vec::new();
    if counts.other_shard > 0 {
        skipped.push(format!("{} in other shards", counts.other_shard));
    }
    if counts.already_done > 0 {
        skipped.push(format!("{} already in the output", counts.already_done));
    }
    let skipped = if skipped.is_empty() {
        String::new()
    } else {
        format!(" (skipped {})", skipped.join(", "))
    };
    println!(
        "{}: projected {} stand{}{skipped}; wrote {}",
        scenario.name,
        counts.projected,
        if counts.projected == 1 { "" } else { "s" },
        path.display()
    );
    Ok(())
}

fn print_warnings(stand: &str, warnings: &[String]) {
    for w in warnings {
        eprintln!("warning: stand \"{stand}\": {w}");
    }
}
