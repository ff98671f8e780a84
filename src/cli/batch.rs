//! `stemcast batch SCENARIO.toml --trees TREES.csv`: arguments and terminal glue around
//! [`stemcast::project::run_batch`] and [`stemcast::report::BatchOutput`].

use std::io::IsTerminal;
use std::path::PathBuf;

use indicatif::{ProgressBar, ProgressStyle};
use stemcast::data::{ColumnNames, TreeListSpec, TreeListStream};
use stemcast::project::{run_batch, shard_text_from, BatchOptions, RunRecord, Shard, StandOutcome};
use stemcast::report::{rows_per_stand, BatchLog, BatchOutput};
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
    /// Project only part K of N (stands whose id hash modulo N is K − 1); `from-env` takes
    /// K and N from a Slurm job array (`SLURM_ARRAY_TASK_ID`, `_MIN`, `_COUNT`).
    #[arg(long, value_name = "K/N|from-env")]
    pub shard: Option<String>,
    /// Take the part `K/N` from this environment variable (for other schedulers).
    #[arg(long, value_name = "VAR", conflicts_with = "shard")]
    pub shard_env: Option<String>,
    /// Replicates, seed, driver and threads.
    #[command(flatten)]
    pub run: super::run_args::RunArgs,
    /// Keep the stands already in the output file and append the others.
    #[arg(long)]
    pub resume: bool,
    /// Tree-list column with each stand's age at year 0 (one value per stand).
    #[arg(long, value_name = "COL")]
    pub age: Option<String>,
    /// Tree-list column (one value per stand) to carry into the output rows; repeatable.
    #[arg(long, value_name = "COL")]
    pub carry: Vec<String>,
}

/// Run `stemcast batch`.
///
/// # Errors
/// Usage, scenario and tree-list errors (exit 2), write failures (exit 1); failed stands
/// (after all others were projected): exit 2 when one had bad input, else 1.
pub fn run(args: &Args) -> Result<(), stemcast::Error> {
    let shard_text = shard_text_from(args.shard.as_deref(), args.shard_env.as_deref(), &|v| {
        std::env::var(v).ok()
    })?;
    let shard = shard_text.as_deref().map(Shard::parse).transpose()?;
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
    let run_options = args.run.options();
    let mut row_options = vec![format!("stand={}", args.stand)];
    row_options.extend(args.age.iter().map(|a| format!("age={a}")));
    row_options.extend(args.carry.iter().map(|c| format!("carry={c}")));
    let record = RunRecord::new(
        &scenario,
        &args.trees,
        &run_options,
        row_options,
        shard_text,
    )?;
    let (mut out, done) = BatchOutput::open(
        &args.out,
        &record,
        args.resume,
        &args.carry,
        rows_per_stand(&scenario),
    )?;
    let mut log = match BatchLog::open(&args.out, &done) {
        Ok(l) => l,
        Err(e) => {
            out.discard();
            return Err(e);
        }
    };
    let options = BatchOptions {
        run: run_options,
        shard,
        done,
        age: args.age.clone(),
        carry: args.carry.clone(),
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
    let counts = run_batch(&scenario, stands, &options, &mut |outcome| {
        match outcome {
            StandOutcome::Done(result, carried) => {
                // Warnings first: a stand whose rows are in the output has its warnings listed.
                log.warn(&result.stand, &result.warnings)?;
                out.append(result, carried)?;
            }
            StandOutcome::Failed { stand, error } => log.fail(stand, error)?,
        }
        if let Some(b) = &bar {
            b.inc(1);
        }
        Ok(())
    });
    if let Some(b) = &bar {
        b.finish_and_clear();
    }
    let counts = match counts {
        Ok(c) => c,
        Err(e) => {
            if e.exit_code() == 2 && out.is_fresh() {
                out.discard();
                log.discard();
            }
            return Err(e);
        }
    };
    let path = out.finish()?;
    for line in log.summary() {
        eprintln!("warning: {line}");
    }
    if !log.summary().is_empty() {
        eprintln!(
            "warning: every warning of every stand is in {}",
            log.warnings_file().display()
        );
    }
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
    outln!(
        "{}: projected {} stand{}{skipped}; wrote {}",
        scenario.name,
        counts.projected,
        if counts.projected == 1 { "" } else { "s" },
        path.display()
    );
    match log.failed_file() {
        Some(failed) => {
            let message = format!(
                "{} stand{} failed and {} not in the output; see {}",
                counts.failed,
                if counts.failed == 1 { "" } else { "s" },
                if counts.failed == 1 { "is" } else { "are" },
                failed.display()
            );
            Err(if counts.failed_input > 0 {
                stemcast::Error::Usage(message)
            } else {
                stemcast::Error::Io {
                    path: failed.to_path_buf(),
                    source: std::io::Error::other(message),
                }
            })
        }
        None => Ok(()),
    }
}
