//! Comparing scenarios with common random numbers: every scenario runs with one seed and one
//! replicate count, so replicate r of every scenario sees the same draws for the same tree
//! (record index in the tree list), sub-step and purpose. Differences are then taken replicate
//! by replicate against the first scenario (the baseline).
//!
//! Why this pairs: a draw's key is (seed, purpose, stand, replicate, record, sub-step) and nothing
//! else (`docs/maths.md#random-numbers`), so attributes set by actions, thinnings that remove other
//! records or a different survival probability do not move any record's uniform or normal deviate.
//! Two scenarios identical up to year t therefore have identical trajectories up to year t in every
//! replicate, and their paired difference there is exactly zero.

use super::result::{Metric, ProjectionResult};
use super::summary::summarise;
use super::{run_traced, ProjectError, RunOptions};
use crate::scenario::Scenario;

/// Run-time choices of a comparison.
#[derive(Debug, Clone, Default, PartialEq)]
pub struct CompareOptions {
    /// Seed for every scenario (default: the first scenario's).
    pub seed: Option<u64>,
    /// Replicates for every scenario (default: the first scenario's).
    pub replicates: Option<usize>,
    /// Worker threads (default: all cores). Results do not depend on it.
    pub threads: Option<usize>,
}

/// One row of `differences.csv`: scenario − baseline for one metric in one year, over paired
/// replicates.
#[derive(Debug, Clone, PartialEq)]
pub struct DifferenceRow {
    /// Years since the start.
    pub year: f64,
    /// The metric.
    pub metric: Metric,
    /// The scenario compared.
    pub scenario: String,
    /// The baseline (first) scenario.
    pub baseline: String,
    /// Mean of the paired differences (None when no pair has both values, e.g. QMD without
    /// stems in one of them).
    pub mean: Option<f64>,
    /// 5th percentile of the paired differences (type 7).
    pub p05: Option<f64>,
    /// 95th percentile of the paired differences (type 7).
    pub p95: Option<f64>,
}

/// A finished comparison.
#[derive(Debug, Clone, PartialEq)]
pub struct Comparison {
    /// The seed every scenario used.
    pub seed: u64,
    /// The replicates every scenario used.
    pub replicates: usize,
    /// One Monte Carlo result per scenario, baseline first.
    pub results: Vec<ProjectionResult>,
    /// Differences from the baseline: per scenario after the first, per year, per metric in
    /// [`Metric::ALL`] order.
    pub differences: Vec<DifferenceRow>,
    /// Notes about the comparison itself (settings overridden for pairing).
    pub warnings: Vec<String>,
}

/// Check that `scenarios` can be compared: at least two, distinct names, one horizon and one
/// output step.
///
/// # Errors
/// [`ProjectError::Invalid`] (exit code 2) naming the scenarios involved.
pub fn validate_comparison(scenarios: &[Scenario]) -> Result<(), crate::Error> {
    let invalid = |m: String| -> crate::Error { ProjectError::Invalid(m).into() };
    let Some(base) = scenarios.first() else {
        return Err(invalid(
            "compare needs at least two scenarios, got none".into(),
        ));
    };
    if scenarios.len() < 2 {
        return Err(invalid(format!(
            "compare needs at least two scenarios, got one ({})",
            base.file
        )));
    }
    for (i, s) in scenarios.iter().enumerate() {
        if let Some(first) = scenarios[..i].iter().find(|o| o.name == s.name) {
            return Err(invalid(format!(
                "two scenarios are named \"{}\" ({} and {}): give each a distinct `name`, which labels its rows in the outputs",
                s.name, first.file, s.file
            )));
        }
        for (key, mine, theirs) in [
            ("horizon_years", s.horizon_years, base.horizon_years),
            ("step_years", s.step_years, base.step_years),
        ] {
            if mine != theirs {
                return Err(invalid(format!(
                    "{}: {key} = {mine}, but the baseline {} has {key} = {theirs}; scenarios in one comparison must share horizon_years and step_years so that their years pair",
                    s.file, base.file
                )));
            }
        }
    }
    Ok(())
}

/// Project every scenario with one seed and replicate count (common random numbers) and
/// summarise the paired differences from the first. Scenarios run one after another, each
/// using the whole thread pool; `progress(scenario, done)` is called after each replicate.
///
/// Memory beyond the single projections: the baseline's and one other scenario's
/// per-replicate metric values, O(replicates × years × metrics).
///
/// # Errors
/// [`validate_comparison`]'s errors before anything runs; then whatever a projection returns.
pub fn compare_scenarios(
    scenarios: &[Scenario],
    o: &CompareOptions,
    progress: &(dyn Fn(usize, usize) + Sync),
) -> Result<Comparison, crate::Error> {
    validate_comparison(scenarios)?;
    let base = &scenarios[0];
    let seed = o.seed.unwrap_or(base.seed);
    let replicates = o.replicates.unwrap_or(base.replicates);
    let mut warnings = Vec::new();
    for s in &scenarios[1..] {
        if o.seed.is_none() && s.seed != seed {
            warnings.push(format!(
                "scenario \"{}\" asks for seed {}; the comparison uses the baseline's seed {seed} for every scenario (common random numbers)",
                s.name, s.seed
            ));
        }
        if o.replicates.is_none() && s.replicates != replicates {
            warnings.push(format!(
                "scenario \"{}\" asks for {} replicates; the comparison uses the baseline's {replicates} for every scenario so that replicates pair",
                s.name, s.replicates
            ));
        }
    }
    let options = RunOptions {
        expected: false,
        replicates: Some(replicates),
        seed: Some(seed),
        threads: o.threads,
    };
    let mut results = Vec::with_capacity(scenarios.len());
    let mut differences = Vec::new();
    let mut baseline_values = None;
    for (i, s) in scenarios.iter().enumerate() {
        let (result, traces) = run_traced(s, &options, &|done| progress(i, done))?;
        // Only the metric values per replicate and year are kept, not the classes.
        let values: Vec<_> = traces.into_iter().map(|t| t.values).collect();
        match &baseline_values {
            None => baseline_values = Some(values),
            Some(baseline) => {
                differences.extend(paired_differences(&result, &values, baseline, &base.name))
            }
        }
        results.push(result);
    }
    Ok(Comparison {
        seed,
        replicates,
        results,
        differences,
        warnings,
    })
}

/// Rows of scenario − baseline per year and metric, pairing replicate r with replicate r and
/// skipping pairs where either value is missing (NaN).
fn paired_differences<V: AsRef<[f64]>>(
    r: &ProjectionResult,
    values: &[Vec<V>],
    baseline: &[Vec<V>],
    baseline_name: &str,
) -> Vec<DifferenceRow> {
    let mut rows = Vec::with_capacity(r.years.len() * Metric::ALL.len());
    let mut column = Vec::with_capacity(values.len());
    for (y, year) in r.years.iter().enumerate() {
        for (m, &metric) in Metric::ALL.iter().enumerate() {
            column.clear();
            column.extend(
                values
                    .iter()
                    .zip(baseline)
                    .map(|(a, b)| a[y].as_ref()[m] - b[y].as_ref()[m])
                    .filter(|d| d.is_finite()),
            );
            let s = summarise(&column);
            rows.push(DifferenceRow {
                year: year.year,
                metric,
                scenario: r.scenario.clone(),
                baseline: baseline_name.to_string(),
                mean: s.mean,
                p05: s.p05,
                p95: s.p95,
            });
        }
    }
    rows
}
