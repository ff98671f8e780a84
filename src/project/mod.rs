//! The projector: per-tree state arrays, one sub-step, the expected-value and Monte Carlo
//! drivers, and streaming summaries.
//!
//! Entry point: [`run_scenario`] (or [`run_scenario_with_progress`]).

mod actions;
mod batch;
mod binomial;
mod compare;
mod drivers;
mod fingerprint;
mod harvest;
pub mod ingrowth;
mod params;
mod plan;
mod result;
mod rng;
mod runaway;
mod shard_env;
mod species_actions;
mod stand;
mod step;
mod summary;
mod validate;
mod validate_cases;
mod validate_stats;

use std::sync::atomic::{AtomicUsize, Ordering};

use rayon::prelude::*;

pub use batch::{run_batch, stand_hash, BatchCounts, BatchOptions, Shard, StandOutcome};
pub use compare::{
    compare_scenarios, validate_comparison, CompareOptions, Comparison, DifferenceRow,
};
pub use fingerprint::{hash_file, RecordedFile, RunRecord, RNG_ID};
pub use plan::{check, CheckReport};
pub use result::{
    ClassRow, Driver, HarvestAction, HarvestRow, Metric, ProjectionResult, Settings, Summary,
    TreeRow, YearSummary,
};
pub use shard_env::shard_text_from;
pub use summary::{percentile_type7, summarise};
pub use validate::{
    build_cases, inside_band, run_case, run_validation, sub_steps, CaseResult, Compared, Span,
    ValidateOptions, METRICS,
};
pub use validate_cases::Case;
pub use validate_stats::{
    qmd_class, summarise_validation, survival_calibration, Grouping, SummaryRow, SurvivalClass,
};

use crate::scenario::Scenario;
use drivers::{Engine, CLASS_WIDTH_CM};
use stand::Stand;
use summary::Trace;

/// An error during a projection.
#[derive(Debug, thiserror::Error)]
pub enum ProjectError {
    /// The projection cannot run with these inputs.
    #[error("{0}")]
    Invalid(String),
    /// Diameters or densities became non-finite or passed the physical limits.
    #[error("the projection with growth model {model} ran away: stand \"{stand}\", year {year}, {}: {what}; the model cannot be projected this far (docs/scenario.md#limits)", .replicate.map_or("expected trajectory".to_string(), |r| format!("replicate {r}")))]
    Runaway {
        /// The growth model's file.
        model: String,
        /// The stand.
        stand: String,
        /// The output year reached.
        year: f64,
        /// The replicate (none for the expected trajectory).
        replicate: Option<u64>,
        /// What was found.
        what: String,
    },
    /// The worker threads could not be started.
    #[error("cannot start {threads} worker threads: {message}")]
    Threads {
        /// Threads requested.
        threads: usize,
        /// What the system said.
        message: String,
    },
}

impl ProjectError {
    /// True for failures of the computation itself (exit code 1).
    pub fn is_runtime(&self) -> bool {
        matches!(
            self,
            ProjectError::Threads { .. } | ProjectError::Runaway { .. }
        )
    }
}

/// Run-time choices that override or complement the scenario file.
#[derive(Debug, Clone, Default, PartialEq)]
pub struct RunOptions {
    /// Run the expected-value driver instead of Monte Carlo.
    pub expected: bool,
    /// Replicates (overrides the scenario).
    pub replicates: Option<usize>,
    /// Seed (overrides the scenario).
    pub seed: Option<u64>,
    /// Worker threads (default: all cores). Results do not depend on it.
    pub threads: Option<usize>,
}

/// Project a scenario.
///
/// # Errors
/// [`ProjectError::Invalid`] for zero replicates or threads; [`ProjectError::Threads`] when
/// the thread pool cannot start.
pub fn run_scenario(s: &Scenario, o: &RunOptions) -> Result<ProjectionResult, crate::Error> {
    run_scenario_with_progress(s, o, &|_| {})
}

/// [`run_scenario`], calling `progress(done)` after each finished replicate (from worker
/// threads, in any order).
///
/// # Errors
/// As [`run_scenario`].
pub fn run_scenario_with_progress(
    s: &Scenario,
    o: &RunOptions,
    progress: &(dyn Fn(usize) + Sync),
) -> Result<ProjectionResult, crate::Error> {
    run_traced(s, o, progress).map(|(r, _)| r)
}

/// [`run_scenario_with_progress`], also returning every replicate's trace (in replicate order),
/// which `compare` needs to pair replicates across scenarios.
pub(crate) fn run_traced(
    s: &Scenario,
    o: &RunOptions,
    progress: &(dyn Fn(usize) + Sync),
) -> Result<(ProjectionResult, Vec<Trace>), crate::Error> {
    let seed = o.seed.unwrap_or(s.seed);
    let replicates = if o.expected {
        1
    } else {
        o.replicates.unwrap_or(s.replicates)
    };
    if replicates == 0 {
        return Err(ProjectError::Invalid("replicates must be at least 1".into()).into());
    }
    if o.threads == Some(0) {
        return Err(ProjectError::Invalid("threads must be at least 1".into()).into());
    }
    let output_years = (s.horizon_years / s.step_years).round() as u64 + 1;
    crate::data::limits::check_run_size(replicates as u64, output_years)
        .map_err(ProjectError::Invalid)?;
    let engine = Engine::new(s, seed);
    let mut tree_rows = Vec::new();
    let traces: Vec<Trace> = if o.expected {
        let t = engine.run(&mut Stand::default(), None, Some(&mut tree_rows));
        progress(1);
        vec![t]
    } else {
        let pool = rayon::ThreadPoolBuilder::new()
            .num_threads(o.threads.unwrap_or(0))
            .build()
            .map_err(|e| ProjectError::Threads {
                threads: o.threads.unwrap_or(0),
                message: e.to_string(),
            })?;
        let done = AtomicUsize::new(0);
        pool.install(|| {
            (0..replicates as u64)
                .into_par_iter()
                .map_init(Stand::default, |stand, r| {
                    let t = engine.run(stand, Some(r), None);
                    progress(done.fetch_add(1, Ordering::Relaxed) + 1);
                    t
                })
                .collect()
        })
    };
    let first_runaway = traces
        .iter()
        .enumerate()
        .find_map(|(r, t)| t.runaway.clone().map(|x| (r, x)));
    if let Some((r, (year, what))) = first_runaway {
        return Err(ProjectError::Runaway {
            model: s.growth.path.display().to_string(),
            stand: s.trees.stand.clone(),
            year,
            replicate: (!o.expected).then_some(r as u64),
            what,
        }
        .into());
    }
    let years: Vec<f64> = (0..=engine.steps)
        .map(|k| k as f64 * s.step_years)
        .collect();
    let ages: Vec<Option<f64>> = years
        .iter()
        .map(|y| s.start_age_years.map(|a| a + y))
        .collect();
    let (summaries, classes) = summary::reduce(&traces, &years, &ages, CLASS_WIDTH_CM, !o.expected);
    let warnings = warnings(s, &traces, &summaries);
    let harvest = engine.harvest.rows(&traces, !o.expected);
    let u = s.uncertainty;
    let result = ProjectionResult {
        scenario: s.name.clone(),
        stand: s.trees.stand.clone(),
        driver: if o.expected {
            Driver::Expected
        } else {
            Driver::MonteCarlo
        },
        seed,
        settings: Settings {
            replicates,
            horizon_years: s.horizon_years,
            step_years: s.step_years,
            sub_step_years: s.sub_step_years,
            process: u.process,
            parameters: u.parameters,
            growth_residual: u.growth_residual,
            area_ha: s.area_ha,
            start_age_years: s.start_age_years,
            class_width_cm: CLASS_WIDTH_CM,
            actions: s.actions.iter().map(|a| a.describe()).collect(),
        },
        years: summaries,
        classes,
        trees: tree_rows,
        harvest,
        inputs: s.inputs.clone(),
        warnings,
    };
    Ok((result, traces))
}

/// Basal area in strictly larger trees (m²/ha) for each record, in input order, computed the
/// way the projector does at the start of every sub-step (descending DBH order and a prefix
/// sum; equal diameters are not larger).
///
/// # Formula
/// `BAL_i = Σ_{j: d_j > d_i} e_j · π/40000 · d_j²`.
///
/// # Examples
/// ```
/// // handbook-checks.md: d = 10, 20, 30 cm at 100 trees/ha each → BAL = 10.21018, 7.06858, 0.
/// let bal = stemcast::project::basal_area_larger(&[10.0, 20.0, 30.0], &[100.0; 3]);
/// assert!((bal[0] - 10.21018).abs() < 1e-5 && bal[2] == 0.0);
/// ```
pub fn basal_area_larger(dbh_cm: &[f64], stems_per_ha: &[f64]) -> Vec<f64> {
    let n = dbh_cm.len().min(stems_per_ha.len());
    let trees = crate::scenario::TreeList {
        stand: String::new(),
        tree_ids: (0..n).map(|i| i.to_string()).collect(),
        dbh_cm: dbh_cm[..n].to_vec(),
        stems_per_ha: stems_per_ha[..n].to_vec(),
        attributes: Vec::new(),
    };
    let mut stand = Stand::default();
    stand.reset(&stand::Initial::of(&trees));
    stand.covariates();
    let mut out = vec![0.0; n];
    for (&t, &b) in stand.tree.iter().zip(&stand.bal) {
        out[t as usize] = b;
    }
    out
}

fn warnings(s: &Scenario, traces: &[Trace], years: &[YearSummary]) -> Vec<String> {
    let mut out = Vec::new();
    let ranged = s
        .survival_eval
        .ranged
        .iter()
        .map(|r| ("survival", &s.survival.path, r))
        .chain(
            s.growth_eval
                .ranged
                .iter()
                .map(|r| ("growth", &s.growth.path, r)),
        );
    for (i, (kind, path, (var, _, _, [lo, hi]))) in ranged.enumerate() {
        let seen = traces
            .iter()
            .fold([f64::INFINITY, f64::NEG_INFINITY], |a, t| {
                [a[0].min(t.ranges[i][0]), a[1].max(t.ranges[i][1])]
            });
        let tol = crate::tolerance::EXTRAPOLATION_RTOL;
        if seen[0] < lo - tol * lo.abs() || seen[1] > hi + tol * hi.abs() {
            out.push(format!(
                "the {kind} model {} is extrapolated: `{var}` ranges over [{:.4}, {:.4}] in this projection, outside its fitting range [{lo}, {hi}]",
                path.display(),
                seen[0],
                seen[1]
            ));
        }
    }
    for (i, a) in s.actions.iter().enumerate() {
        let idle: u32 = traces.iter().map(|t| t.idle_thinnings[i]).sum();
        if idle > 0 {
            out.push(format!(
                "action {} (thin at year {}): the stand was already at or below the target in {idle} of {} replicate{}, so nothing was removed there",
                i + 1,
                a.year,
                traces.len(),
                if traces.len() == 1 { "" } else { "s" }
            ));
        }
    }
    if let Some(y) = years.iter().find(|y| y.extinct_replicates > 0) {
        out.push(format!(
            "{} of {} replicates have no stems left by year {} (QMD is summarised over the others)",
            y.extinct_replicates,
            traces.len(),
            y.year
        ));
    }
    out
}
