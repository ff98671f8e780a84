//! Batch runs: one scenario projected for every stand of a tree list, streamed stand by stand
//! so that memory does not grow with the number of stands (`docs/performance.md#targets`).
//!
//! Each stand replaces the scenario's own trees ([`Scenario::with_trees`]) and is projected as
//! `project` would project it alone: its random draws are keyed by its id, never by its
//! position, its shard or the thread count.

use std::collections::HashSet;

use super::{rng, run_scenario, ProjectionResult, RunOptions};
use crate::data::{DataError, FrameColumn, TreeList, TreeRecords};
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

    /// The number of parts.
    pub fn count(&self) -> u64 {
        self.count
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
    /// A tree-list column holding each stand's age at year 0 (one value per stand).
    pub age: Option<String>,
    /// Tree-list columns whose one value per stand is carried into the output rows.
    pub carry: Vec<String>,
}

/// How many stands a batch run met, projected, skipped and failed.
#[derive(Debug, Clone, Copy, Default, PartialEq, Eq)]
pub struct BatchCounts {
    /// Stands projected.
    pub projected: usize,
    /// Stands of other shards.
    pub other_shard: usize,
    /// Stands already done (resume).
    pub already_done: usize,
    /// Stands that failed (see [`StandOutcome::Failed`]).
    pub failed: usize,
    /// Of those, stands whose input was bad (exit code 2 rather than 1).
    pub failed_input: usize,
}

/// What became of one stand.
#[derive(Debug)]
pub enum StandOutcome<'a> {
    /// Projected, with the values of the carried columns ([`BatchOptions::carry`]).
    Done(&'a ProjectionResult, &'a [String]),
    /// Its trees could not be bound to the models or its projection failed; the batch goes on.
    Failed {
        /// The stand id.
        stand: &'a str,
        /// Why.
        error: &'a Error,
    },
}

/// Project `scenario` for every stand of `stands`, in input order, handing each stand's
/// outcome to `each` before the next stand is read. Stands run one after another; each uses
/// the thread pool for its replicates, as `project` does. A stand whose attributes do not fit
/// the models (an unknown level, reported at its tree-list line and column) or whose
/// projection fails is handed over as [`StandOutcome::Failed`] and the batch goes on.
///
/// # Errors
/// The first error of the tree list itself (a stand's rows not contiguous, a duplicate tree
/// id, a bad value), which ends the batch, or an error returned by `each`.
pub fn run_batch<I>(
    scenario: &Scenario,
    stands: I,
    options: &BatchOptions,
    each: &mut dyn FnMut(StandOutcome<'_>) -> Result<(), Error>,
) -> Result<BatchCounts, Error>
where
    I: IntoIterator<Item = Result<TreeRecords, DataError>>,
{
    let mut counts = BatchCounts::default();
    for stand in stands {
        let records = stand?;
        let id = records.stand.clone().unwrap_or_else(|| "1".into());
        if options.shard.is_some_and(|s| !s.takes(&id)) {
            counts.other_shard += 1;
            continue;
        }
        if options.done.contains(&id) {
            counts.already_done += 1;
            continue;
        }
        match project_one(scenario, records, options) {
            Ok((result, carried)) => {
                each(StandOutcome::Done(&result, &carried))?;
                counts.projected += 1;
            }
            Err(error) => {
                counts.failed += 1;
                if error.exit_code() == 2 {
                    counts.failed_input += 1;
                }
                each(StandOutcome::Failed {
                    stand: &id,
                    error: &error,
                })?;
            }
        }
    }
    Ok(counts)
}

fn project_one(
    scenario: &Scenario,
    records: TreeRecords,
    options: &BatchOptions,
) -> Result<(ProjectionResult, Vec<String>), Error> {
    check_levels(scenario, &records)?;
    let age = match &options.age {
        Some(col) => Some(stand_value(&records, col)?),
        None => None,
    };
    let carried = options
        .carry
        .iter()
        .map(|col| stand_text(&records, col))
        .collect::<Result<Vec<_>, _>>()?;
    let trees = TreeList::try_from(records)?;
    let mut s = scenario.with_trees(trees)?;
    if age.is_some() {
        s.start_age_years = age;
    }
    Ok((run_scenario(&s, &options.run)?, carried))
}

/// Every level of a tree-list column that a model treats as categorical is one the model
/// knows; otherwise a [`DataError::Cell`] at the first tree with another level.
fn check_levels(scenario: &Scenario, records: &TreeRecords) -> Result<(), DataError> {
    let models = [
        (
            "survival",
            &scenario.survival.path,
            &scenario.survival.model.common,
        ),
        (
            "growth",
            &scenario.growth.path,
            &scenario.growth.model.common,
        ),
    ];
    for (kind, path, common) in models {
        for (name, known) in &common.categorical {
            let Some(FrameColumn::Text { levels, codes, .. }) = records.attributes.get(name) else {
                continue;
            };
            let bad = codes.iter().position(|&c| {
                levels
                    .get(c as usize)
                    .is_some_and(|l| !known.levels.contains(l))
            });
            if let Some(row) = bad {
                let value = levels.get(codes[row] as usize).cloned().unwrap_or_default();
                return Err(DataError::Cell {
                    file: records.source.clone(),
                    line: records.lines.get(row).copied().unwrap_or(0),
                    column: name.clone(),
                    message: format!(
                        "level \"{value}\" is not one the {kind} model {} was fitted with ({})",
                        path.display(),
                        known.levels.join(", ")
                    ),
                });
            }
        }
    }
    Ok(())
}

/// The one numeric value column `col` has in every tree of the stand.
fn stand_value(records: &TreeRecords, col: &str) -> Result<f64, DataError> {
    let cell = |row: usize, message: String| DataError::Cell {
        file: records.source.clone(),
        line: records.lines.get(row).copied().unwrap_or(0),
        column: col.to_string(),
        message,
    };
    match records.attributes.get(col) {
        Some(FrameColumn::Numeric(v)) => {
            let first = v.first().copied().unwrap_or(f64::NAN);
            if let Some(row) = v.iter().position(|x| !x.is_finite() || *x < 0.0) {
                return Err(cell(row, "the age must be a number ≥ 0".into()));
            }
            if let Some(row) = v.iter().position(|&x| x != first) {
                return Err(cell(
                    row,
                    format!(
                        "stand \"{}\" has ages {first} and {} (one age per stand)",
                        records.stand.as_deref().unwrap_or("1"),
                        v[row]
                    ),
                ));
            }
            Ok(first)
        }
        Some(FrameColumn::Text { first_text, .. }) => {
            let (line, value) = first_text.clone().unwrap_or_default();
            Err(DataError::Cell {
                file: records.source.clone(),
                line,
                column: col.to_string(),
                message: format!("the age must be a number, not \"{value}\""),
            })
        }
        None => Err(DataError::MissingColumn {
            file: records.source.clone(),
            column: col.to_string(),
            why: "named by --age".into(),
            available: records
                .attributes
                .keys()
                .cloned()
                .collect::<Vec<_>>()
                .join(", "),
        }),
    }
}

/// The one value column `col` has in every tree of the stand, as text (numbers as Rust's
/// shortest round-trip form).
fn stand_text(records: &TreeRecords, col: &str) -> Result<String, DataError> {
    let cell = |row: usize, a: &str, b: &str| DataError::Cell {
        file: records.source.clone(),
        line: records.lines.get(row).copied().unwrap_or(0),
        column: col.to_string(),
        message: format!(
            "stand \"{}\" has values \"{a}\" and \"{b}\" in a carried column (one value per stand)",
            records.stand.as_deref().unwrap_or("1")
        ),
    };
    let values: Vec<String> = match records.attributes.get(col) {
        Some(FrameColumn::Numeric(v)) => v
            .iter()
            .map(|x| {
                if x.is_nan() {
                    String::new()
                } else {
                    x.to_string()
                }
            })
            .collect(),
        Some(FrameColumn::Text { levels, codes, .. }) => codes
            .iter()
            .map(|&c| levels.get(c as usize).cloned().unwrap_or_default())
            .collect(),
        None => {
            return Err(DataError::MissingColumn {
                file: records.source.clone(),
                column: col.to_string(),
                why: "named by --carry".into(),
                available: records
                    .attributes
                    .keys()
                    .cloned()
                    .collect::<Vec<_>>()
                    .join(", "),
            })
        }
    };
    let first = values.first().cloned().unwrap_or_default();
    match values.iter().position(|v| *v != first) {
        Some(row) => Err(cell(row, &first, &values[row])),
        None => Ok(first),
    }
}
