//! The run options shared by `project` and `batch`: replicates, seed, driver and threads.

use stemcast::project::RunOptions;

/// How to run a projection (overrides of the scenario file).
#[derive(Debug, Clone, clap::Args)]
pub struct RunArgs {
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

impl RunArgs {
    /// The library's run options.
    pub fn options(&self) -> RunOptions {
        RunOptions {
            expected: self.expected,
            replicates: self.replicates.map(|n| n as usize),
            seed: self.seed,
            threads: self.threads.map(|n| n as usize),
        }
    }
}
