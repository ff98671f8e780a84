//! Summaries of a validation (docs/validation.md): bias, relative bias, RMSE and band
//! coverage by metric and group, with a bootstrap over plots, and survival calibration by
//! DBH class.

use std::collections::BTreeMap;

use rand::{RngExt, SeedableRng};
use rand_chacha::ChaCha8Rng;

use super::summary::percentile_type7;
use super::validate::{CaseResult, METRICS};

/// One summary row of `validation.csv`.
#[derive(Debug, Clone, PartialEq)]
pub struct SummaryRow {
    /// Metric name.
    pub metric: &'static str,
    /// `all`, `qmd_class` or an attribute name.
    pub group: String,
    /// `all`, the class `[lo, hi)` or the attribute level.
    pub level: String,
    /// Plot-intervals with an observed and a predicted value.
    pub n: usize,
    /// Distinct plots among them.
    pub plots: usize,
    /// Mean observed value.
    pub mean_observed: f64,
    /// Mean predicted value.
    pub mean_predicted: f64,
    /// Mean of observed − predicted.
    pub bias: f64,
    /// Standard error of the bias, clustered by plot.
    pub se_bias: f64,
    /// bias / mean observed.
    pub relative_bias: f64,
    /// Root mean squared error.
    pub rmse: f64,
    /// Share of plot-intervals inside the 90 % band (ties ½); `None` without bands.
    pub coverage: Option<f64>,
    /// 2.5 % and 97.5 % bootstrap percentiles of the coverage (resampling plots).
    pub coverage_interval: Option<[f64; 2]>,
}

/// How the summary groups plot-intervals.
#[derive(Debug, Clone, PartialEq)]
pub struct Grouping {
    /// Width of the QMD classes at t1 (cm).
    pub qmd_class_width_cm: f64,
    /// Attributes whose levels (at t1) form groups.
    pub by: Vec<String>,
    /// Bootstrap resamples.
    pub bootstrap: usize,
    /// Bootstrap seed.
    pub seed: u64,
}

/// The QMD class `[lo, hi)` label of `qmd`.
pub fn qmd_class(qmd: f64, width: f64) -> String {
    let lo = (qmd / width).floor() * width;
    format!("[{lo}, {})", lo + width)
}

/// One group's rows for one metric: (plot, observed, mean, inside).
type Obs = (usize, f64, f64, Option<f64>);

fn summarise_group(
    metric: &'static str,
    group: &str,
    level: &str,
    obs: &[Obs],
    g: &Grouping,
    salt: u64,
) -> Option<SummaryRow> {
    let n = obs.len();
    if n == 0 {
        return None;
    }
    let nf = n as f64;
    let mean_observed = obs.iter().map(|o| o.1).sum::<f64>() / nf;
    let mean_predicted = obs.iter().map(|o| o.2).sum::<f64>() / nf;
    let bias = mean_observed - mean_predicted;
    let rmse = (obs.iter().map(|o| (o.1 - o.2).powi(2)).sum::<f64>() / nf).sqrt();
    // Plots in first-seen order with their rows.
    let mut by_plot: BTreeMap<usize, Vec<usize>> = BTreeMap::new();
    for (i, o) in obs.iter().enumerate() {
        by_plot.entry(o.0).or_default().push(i);
    }
    let clusters: Vec<&Vec<usize>> = by_plot.values().collect();
    // Cluster (CR1) standard error of a mean over G plots:
    // sqrt(G/(G − 1) · Σ_g (Σ_{i∈g} (e_i − ē))²) / n (docs/validation.md).
    let g_count = clusters.len() as f64;
    let cr1 = if g_count > 1.0 {
        (g_count / (g_count - 1.0)).sqrt()
    } else {
        f64::NAN
    };
    let se_bias = cr1
        * clusters
            .iter()
            .map(|rows| {
                rows.iter()
                    .map(|&i| obs[i].1 - obs[i].2 - bias)
                    .sum::<f64>()
                    .powi(2)
            })
            .sum::<f64>()
            .sqrt()
        / nf;
    let inside: Option<Vec<f64>> = obs.iter().map(|o| o.3).collect();
    let (coverage, coverage_interval) = match inside {
        Some(v) => {
            let cov = v.iter().sum::<f64>() / nf;
            let sums: Vec<(f64, f64)> = clusters
                .iter()
                .map(|rows| (rows.iter().map(|&i| v[i]).sum(), rows.len() as f64))
                .collect();
            let mut rng = ChaCha8Rng::seed_from_u64(g.seed ^ salt);
            let k = sums.len();
            let mut draws: Vec<f64> = (0..g.bootstrap)
                .map(|_| {
                    let (mut a, mut b) = (0.0, 0.0);
                    for _ in 0..k {
                        let (s, m) = sums[rng.random_range(0..k)];
                        a += s;
                        b += m;
                    }
                    a / b
                })
                .collect();
            draws.sort_by(f64::total_cmp);
            let ci = (!draws.is_empty()).then(|| {
                [
                    percentile_type7(&draws, 0.025),
                    percentile_type7(&draws, 0.975),
                ]
            });
            (Some(cov), ci)
        }
        None => (None, None),
    };
    Some(SummaryRow {
        metric,
        group: group.to_string(),
        level: level.to_string(),
        n,
        plots: clusters.len(),
        mean_observed,
        mean_predicted,
        bias,
        se_bias,
        relative_bias: bias / mean_observed,
        rmse,
        coverage,
        coverage_interval,
    })
}

/// The summary rows: per metric, all plot-intervals, then QMD classes, then each `by`
/// attribute's levels (in byte order). Rows without an observed or predicted value are
/// left out (QMD without survivors).
pub fn summarise_validation(results: &[CaseResult], g: &Grouping) -> Vec<SummaryRow> {
    let mut plot_codes: BTreeMap<&str, usize> = BTreeMap::new();
    for r in results {
        let k = plot_codes.len();
        plot_codes.entry(r.plot.as_str()).or_insert(k);
    }
    let mut out = Vec::new();
    let mut salt = 0u64;
    for (k, (name, _)) in METRICS.iter().enumerate() {
        // Key: (kind: 0 all, 1 QMD class, 2 + j attribute j; class index; group; level).
        let mut groups: BTreeMap<(usize, i64, String, String), Vec<Obs>> = BTreeMap::new();
        for r in results {
            let c = r.metrics[k];
            let Some(mean) = c.mean.filter(|_| c.observed.is_finite()) else {
                continue;
            };
            let o = (plot_codes[r.plot.as_str()], c.observed, mean, c.inside);
            groups
                .entry((0, 0, "all".into(), "all".into()))
                .or_default()
                .push(o);
            if r.qmd_t1_cm.is_finite() {
                let w = g.qmd_class_width_cm;
                let class = (r.qmd_t1_cm / w).floor() as i64;
                groups
                    .entry((1, class, "qmd_class".into(), qmd_class(r.qmd_t1_cm, w)))
                    .or_default()
                    .push(o);
            }
            for (j, by) in g.by.iter().enumerate() {
                if let Some((_, v)) = r.levels.iter().find(|(n, _)| n == by) {
                    groups
                        .entry((2 + j, 0, by.clone(), v.clone()))
                        .or_default()
                        .push(o);
                }
            }
        }
        for ((_, _, group, level), obs) in groups {
            salt += 1;
            out.extend(summarise_group(name, &group, &level, &obs, g, salt));
        }
    }
    out
}

/// One DBH class of the survival calibration.
#[derive(Debug, Clone, PartialEq)]
pub struct SurvivalClass {
    /// Lower bound (cm), inclusive.
    pub lower_cm: f64,
    /// Upper bound (cm), exclusive; `None` for the open last class.
    pub upper_cm: Option<f64>,
    /// Trees (records) alive at t1 in the class.
    pub trees: usize,
    /// Share observed alive at t2.
    pub observed: f64,
    /// Mean predicted survival probability.
    pub predicted: f64,
}

/// Tree-level survival calibration over every plot-interval by DBH class at t1 (`breaks`
/// ascending; the last class is open). Records count once each (no expansion weighting).
pub fn survival_calibration(results: &[CaseResult], breaks: &[f64]) -> Vec<SurvivalClass> {
    let mut acc = vec![(0usize, 0usize, 0.0f64); breaks.len()];
    for r in results {
        for &(d, alive, p) in &r.trees {
            if !p.is_finite() {
                continue;
            }
            if let Some(k) = breaks.iter().rposition(|&b| d >= b) {
                acc[k].0 += 1;
                acc[k].1 += usize::from(alive);
                acc[k].2 += p;
            }
        }
    }
    acc.iter()
        .enumerate()
        .filter(|(_, a)| a.0 > 0)
        .map(|(k, a)| SurvivalClass {
            lower_cm: breaks[k],
            upper_cm: breaks.get(k + 1).copied(),
            trees: a.0,
            observed: a.1 as f64 / a.0 as f64,
            predicted: a.2 / a.0 as f64,
        })
        .collect()
}
