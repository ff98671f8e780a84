//! Batch runs: one scenario projected for every stand of a tree list, streamed stand by stand
//! so that memory does not grow with the number of stands (`docs/performance.md#targets`).
//!
//! Each stand replaces the scenario's own trees ([`Scenario::with_trees`]) and is projected as
//! `project` would project it alone: its random draws are keyed by its id, never by its
//! position, its shard or the thread count.

use std::collections::HashSet;

use super::{rng, run_scenario, ProjectionResult, RunOptions};
use crate::data::{DataError, TreeList, TreeRecords};
use crate::scenario::Scenario;
use crate::Error;

/// A 64-bit hash of a stand id: the stand component of its random draws and the basis of
/// [`Shard`] membership. It depends only on the id's bytes.
pub fn stand_hash(id: &str) -> u64 {
    rng::stand_key(id)
}

/// One of `count` parts of a tree list: the stands whose [`stand_hash`] modulo `count` is
/// `index`, so that `count` machines can split one file and concatenate their outputs.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub struct Shard {
    index: u64,
    count: u64,
}

impl Shard {
    /// Part `k` of `n`, 1-based as on the command line (`--shard k/n`).
    ///
    /// # Errors
    /// [`Error::Usage`] unless 1 ≤ k ≤ n.
    pub fn new(k: u64, n: u64) -> Result<Shard, Error> {
        if n == 0 || k == 0 || k > n {
            return Err(Error::Usage(format!(
                "--shard {k}/{n}: the part must be between 1 and the number of parts ({n})"
            )));
        }
        Ok(Shard {
            index: k - 1,
            count: n,
        })
    }

    /// Parse `K/N`.
    ///
    /// # Errors
    /// [`Error::Usage`] for text that is not two whole numbers `K/N` with 1 ≤ K ≤ N.
    pub fn parse(text: &str) -> Result<Shard, Error> {
        let bad = || Error::Usage(format!("--shard {text}: expected K/N with 1 ≤ K ≤ N"));
        let (k, n) = text.split_once('/').ok_or_else(bad)?;
        let k = k.trim().parse::<u64>().map_err(|_| bad())?;
        let n = n.trim().parse::<u64>().map_err(|_| bad())?;
        Shard::new(k, n)
    }

    /// True when stand `id` belongs to this part.
    pub fn takes(&self, id: &str) -> bool {
        stand_hash(id) % self.count == self.index
    }
}

/// Which stands a batch run projects.
#[derive(Debug, Clone, Default)]
pub struct BatchOptions {
    /// Driver, replicates, seed and threads, as for one stand.
    pub run: RunOptions,
    /// Only the stands of this part.
    pub shard: Option<Shard>,
    /// Stands to skip (already in a resumed output).
    pub done: HashSet<String>,
}

/// How many stands a batch run met, projected and skipped.
#[derive(Debug, Clone, Copy, Default, PartialEq, Eq)]
pub struct BatchCounts {
    /// Stands projected.
    pub projected: usize,
    /// Stands of other shards.
    pub other_shard: usize,
    /// Stands already done (resume).
    pub already_done: usize,
}

/// Project `scenario` for every stand of `stands`, in input order, handing each stand's result
/// to `each` before the next stand is read. Stands run one after another; each uses the thread
/// pool for its replicates, as `project` does.
///
/// # Errors
/// The first tree-list error (a stand's rows not contiguous, a duplicate tree id, a bad
/// value), a stand the models cannot be evaluated on (naming the stand), an error of the
/// projection, or an error returned by `each`.
pub fn run_batch<I>(
    scenario: &Scenario,
    stands: I,
    options: &BatchOptions,
    each: &mut dyn FnMut(&ProjectionResult) -> Result<(), Error>,
) -> Result<BatchCounts, Error>
where
    I: IntoIterator<Item = Result<TreeRecords, DataError>>,
{
    let mut counts = BatchCounts::default();
    for stand in stands {
        let trees = TreeList::try_from(stand?)?;
        if options.shard.is_some_and(|s| !s.takes(&trees.stand)) {
            counts.other_shard += 1;
            continue;
        }
        if options.done.contains(&trees.stand) {
            counts.already_done += 1;
            continue;
        }
        let s = scenario.with_trees(trees)?;
        let result = run_scenario(&s, &options.run)?;
        each(&result)?;
        counts.projected += 1;
    }
    Ok(counts)
}
