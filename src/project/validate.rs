//! `stemcast validate` (docs/validation.md): project every plot-interval of a measurement
//! history from its first measurement with a scenario's models and uncertainty settings, and
//! set the projection beside the second measurement.

use std::collections::{HashMap, HashSet};

use rayon::prelude::*;

use super::result::Metric;
use super::validate_cases::Case;
use super::{run_scenario, ProjectError, RunOptions};
use crate::scenario::Scenario;

pub use super::validate_cases::{build_cases, Span};

/// Relative tolerance for an interval that is a whole number of sub-steps (rounding of
/// decimal years).
const WHOLE_RTOL: f64 = 1e-9;

/// The compared metrics, in output order: (name in the CSVs, metric of the projection).
pub const METRICS: [(&str, Metric); 3] = [
    ("stems_per_ha", Metric::StemsPerHa),
    ("basal_area_m2_ha", Metric::BasalArea),
    ("qmd_cm", Metric::Qmd),
];

/// Options of a validation run.
#[derive(Debug, Clone, Default, PartialEq)]
pub struct ValidateOptions {
    /// Replicates, seed and worker threads; `expected` runs only the expected-value driver
    /// (no bands, so no coverage).
    pub run: RunOptions,
    /// Validate only these plots (`--plots FILE`); `None`: every plot.
    pub plots: Option<HashSet<String>>,
}

/// One metric of one plot-interval.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Compared {
    /// Observed at t2 (NaN for QMD without survivors).
    pub observed: f64,
    /// Mean of the projection (the expected trajectory with `--expected`).
    pub mean: Option<f64>,
    /// 5th percentile of the replicates.
    pub p05: Option<f64>,
    /// 95th percentile.
    pub p95: Option<f64>,
    /// 1 inside the 90 % band, 0 outside, ½ on an edge; `None` without a band or value.
    pub inside: Option<f64>,
}

/// The result of one plot-interval.
#[derive(Debug, Clone, PartialEq)]
pub struct CaseResult {
    /// Plot id.
    pub plot: String,
    /// Start time.
    pub t1: f64,
    /// End time.
    pub t2: f64,
    /// Sub-steps the interval was divided into (each (t2 − t1)/n years).
    pub sub_steps: u64,
    /// Stems per hectare cut or missing during the interval (removed at the start).
    pub cut_stems_per_ha: f64,
    /// QMD at t1 of every tree alive then (cm).
    pub qmd_t1_cm: f64,
    /// Attribute values at t1, by name.
    pub levels: Vec<(String, String)>,
    /// One entry per [`METRICS`] entry.
    pub metrics: [Compared; 3],
    /// Per start tree: (DBH at t1 in cm, observed alive at t2, predicted survival
    /// probability from the expected trajectory).
    pub trees: Vec<(f64, bool, f64)>,
}

/// Whether `x` lies in [lo, hi]: 1 inside, ½ on an edge, 0 outside (docs/validation.md).
pub fn inside_band(x: f64, lo: f64, hi: f64) -> f64 {
    let tol = 1e-9 * (1.0 + x.abs());
    if (x - lo).abs() <= tol || (x - hi).abs() <= tol {
        0.5
    } else if x > lo && x < hi {
        1.0
    } else {
        0.0
    }
}

/// The number of equal sub-steps for an interval of `h` years with the scenario sub-step
/// `sub`: h/sub when that is whole, else the next whole number (docs/validation.md,
/// "Intervals that are not whole model periods").
pub fn sub_steps(h: f64, sub: f64) -> u64 {
    let r = h / sub;
    if (r - r.round()).abs() <= WHOLE_RTOL * r.max(1.0) {
        (r.round() as u64).max(1)
    } else {
        (r.ceil() as u64).max(1)
    }
}

/// Project one case with `base`'s models and uncertainty settings.
///
/// # Errors
/// As [`Scenario::with_trees`] and [`run_scenario`].
pub fn run_case(base: &Scenario, case: &Case, o: &RunOptions) -> Result<CaseResult, crate::Error> {
    let h = case.t2 - case.t1;
    let n = sub_steps(h, base.sub_step_years);
    let mut s = base.with_trees(case.trees.clone())?;
    s.horizon_years = h;
    s.step_years = h;
    s.sub_step_years = h / n as f64;
    s.actions.clear();
    s.start_age_years = None;
    let one = RunOptions {
        threads: Some(1),
        ..o.clone()
    };
    let expected = run_scenario(
        &s,
        &RunOptions {
            expected: true,
            ..one.clone()
        },
    )?;
    let banded = if o.expected {
        None
    } else {
        Some(run_scenario(&s, &one)?)
    };
    let observed = case.observed();
    let last = |r: &super::ProjectionResult, m: Metric| {
        r.years.last().map(|y| *y.get(m)).unwrap_or_default()
    };
    let mut metrics = [Compared {
        observed: f64::NAN,
        mean: None,
        p05: None,
        p95: None,
        inside: None,
    }; 3];
    for (k, (_, m)) in METRICS.iter().enumerate() {
        let x = observed[k];
        let c = &mut metrics[k];
        c.observed = x;
        match &banded {
            Some(r) => {
                let v = last(r, *m);
                c.mean = v.mean;
                c.p05 = v.p05;
                c.p95 = v.p95;
                if let (Some(lo), Some(hi)) = (v.p05, v.p95) {
                    c.inside = x.is_finite().then(|| inside_band(x, lo, hi));
                }
            }
            None => c.mean = last(&expected, *m).mean,
        }
    }
    let survival: HashMap<&str, f64> = expected
        .trees
        .iter()
        .filter(|t| (t.year - h).abs() <= WHOLE_RTOL * h.max(1.0))
        .map(|t| (t.tree.as_str(), t.cumulative_survival))
        .collect();
    let trees = (0..case.trees.len())
        .map(|i| {
            let p = survival
                .get(case.trees.tree_ids[i].as_str())
                .copied()
                .unwrap_or(f64::NAN);
            (case.trees.dbh_cm[i], case.survived[i], p)
        })
        .collect();
    Ok(CaseResult {
        plot: case.plot.clone(),
        t1: case.t1,
        t2: case.t2,
        sub_steps: n,
        cut_stems_per_ha: case.cut_stems_per_ha,
        qmd_t1_cm: case.qmd_t1_cm,
        levels: case.levels.clone(),
        metrics,
        trees,
    })
}

/// Project every case (those of the plots in `o.plots`, when given), in case order. Cases
/// run in parallel, one replicate loop each; every case's draws are keyed by its plot and
/// start time, so results do not depend on the thread count or on the other cases.
///
/// # Errors
/// As [`run_case`]; [`ProjectError`] for zero threads or a pool that cannot start, or when
/// no case is left.
pub fn run_validation(
    base: &Scenario,
    cases: &[Case],
    o: &ValidateOptions,
) -> Result<Vec<CaseResult>, crate::Error> {
    if o.run.threads == Some(0) {
        return Err(ProjectError::Invalid("threads must be at least 1".into()).into());
    }
    let chosen: Vec<&Case> = cases
        .iter()
        .filter(|c| o.plots.as_ref().is_none_or(|p| p.contains(&c.plot)))
        .filter(|c| !c.trees.is_empty())
        .collect();
    if chosen.is_empty() {
        return Err(ProjectError::Invalid(
            "no plot-interval to validate (check --plots and that the plots have live trees)"
                .into(),
        )
        .into());
    }
    let pool = rayon::ThreadPoolBuilder::new()
        .num_threads(o.run.threads.unwrap_or(0))
        .build()
        .map_err(|e| ProjectError::Threads {
            threads: o.run.threads.unwrap_or(0),
            message: e.to_string(),
        })?;
    pool.install(|| {
        chosen
            .par_iter()
            .map(|c| run_case(base, c, &o.run))
            .collect()
    })
}
