//! The records of a GLMM held sorted by plot in plain arrays (structure of arrays), so that
//! each plot's integral reads one contiguous range.

use ndarray::ArrayView2;
use statrs::function::gamma::ln_gamma;

use super::family::{Family, Record};
use crate::model::ModelError;

/// The records of a GLMM sorted by plot, rows with zero weight or zero trials left out.
#[derive(Debug, Clone)]
pub struct GlmmData {
    /// How a record's response depends on η.
    pub family: Family,
    /// Number of coefficients.
    pub p: usize,
    /// Design rows, n×p row-major, sorted by plot.
    pub(crate) x: Vec<f64>,
    pub(crate) offset: Vec<f64>,
    pub(crate) y: Vec<f64>,
    pub(crate) trials: Vec<f64>,
    pub(crate) years: Vec<f64>,
    pub(crate) weight: Vec<f64>,
    /// Record range of plot j: `starts[j]..starts[j + 1]`.
    pub(crate) starts: Vec<usize>,
    /// Whether every record of plot j has weight 1 and one trial.
    pub(crate) unit: Vec<bool>,
    /// The caller's plot code of each plot here (plots without records are left out).
    pub plot_codes: Vec<u32>,
    /// Σ wᵢ ln C(nᵢ, yᵢ).
    pub ln_choose: f64,
}

/// The columns of a GLMM before sorting, as the fit pipeline holds them.
#[derive(Debug, Clone, Copy)]
pub struct GlmmColumns<'a> {
    /// Design matrix, n×p.
    pub x: ArrayView2<'a, f64>,
    /// Successes (or the 0/1 outcome).
    pub y: &'a [f64],
    /// Trials per record (None: 1).
    pub trials: Option<&'a [f64]>,
    /// Prior weights (None: 1).
    pub weights: Option<&'a [f64]>,
    /// Offset (None: 0).
    pub offset: Option<&'a [f64]>,
    /// Intervals in years (annualised family only; empty otherwise).
    pub years: &'a [f64],
    /// Plot code per record, 0-based.
    pub plots: &'a [u32],
}

impl GlmmData {
    /// Sort the records of `c` by plot.
    ///
    /// # Errors
    /// Lengths that do not match, or no records with positive weight.
    pub fn new(family: Family, c: &GlmmColumns) -> Result<Self, ModelError> {
        let (n, p) = c.x.dim();
        let bad = |m: String| ModelError::Invalid(m);
        if c.y.len() != n
            || c.plots.len() != n
            || c.trials.is_some_and(|t| t.len() != n)
            || c.weights.is_some_and(|w| w.len() != n)
            || c.offset.is_some_and(|o| o.len() != n)
            || (family == Family::Annualized && c.years.len() != n)
        {
            return Err(bad(format!("GLMM columns must all have {n} rows")));
        }
        let keep =
            |i: usize| c.weights.is_none_or(|w| w[i] > 0.0) && c.trials.is_none_or(|t| t[i] > 0.0);
        let groups = c.plots.iter().map(|&g| g as usize + 1).max().unwrap_or(0);
        let mut count = vec![0usize; groups + 1];
        for i in (0..n).filter(|&i| keep(i)) {
            count[c.plots[i] as usize + 1] += 1;
        }
        let mut first = count.clone();
        for g in 1..=groups {
            first[g] += first[g - 1];
        }
        let kept = first[groups];
        if kept == 0 {
            return Err(bad("no records with positive weight".into()));
        }
        let mut order = vec![0usize; kept];
        let mut next = first.clone();
        for i in (0..n).filter(|&i| keep(i)) {
            let g = c.plots[i] as usize;
            order[next[g]] = i;
            next[g] += 1;
        }
        let mut starts = vec![0usize];
        let mut plot_codes = Vec::new();
        for g in 0..groups {
            if first[g + 1] > first[g] {
                starts.push(first[g + 1]);
                plot_codes.push(g as u32);
            }
        }
        let pick = |v: Option<&[f64]>, default: f64| -> Vec<f64> {
            order.iter().map(|&i| v.map_or(default, |v| v[i])).collect()
        };
        let mut x = Vec::with_capacity(kept * p);
        for &i in &order {
            x.extend(c.x.row(i).iter());
        }
        let y = pick(Some(c.y), 0.0);
        let trials = pick(c.trials, 1.0);
        let weight = pick(c.weights, 1.0);
        let years = if family == Family::Annualized {
            pick(Some(c.years), 1.0)
        } else {
            vec![1.0; kept]
        };
        let ln_choose = (0..if c.trials.is_some() { kept } else { 0 })
            .map(|i| {
                let (k, m) = (y[i], trials[i]);
                weight[i] * (ln_gamma(m + 1.0) - ln_gamma(k + 1.0) - ln_gamma(m - k + 1.0))
            })
            .sum();
        let unit = (0..starts.len() - 1)
            .map(|j| (starts[j]..starts[j + 1]).all(|i| weight[i] == 1.0 && trials[i] == 1.0))
            .collect();
        Ok(GlmmData {
            unit,
            family,
            p,
            x,
            offset: pick(c.offset, 0.0),
            y,
            trials,
            years,
            weight,
            starts,
            plot_codes,
            ln_choose,
        })
    }

    /// Number of plots with records.
    pub fn n_plots(&self) -> usize {
        self.starts.len() - 1
    }

    /// Number of records (positive weight).
    pub fn n_records(&self) -> usize {
        self.y.len()
    }

    /// True when every plot holds one record of one trial (σ is then not identified).
    pub fn single_binary_records(&self) -> bool {
        self.starts.windows(2).all(|w| w[1] - w[0] == 1) && self.trials.iter().all(|&n| n <= 1.0)
    }

    /// Size of the largest plot.
    pub fn largest_plot(&self) -> usize {
        self.starts
            .windows(2)
            .map(|w| w[1] - w[0])
            .max()
            .unwrap_or(0)
    }

    #[inline]
    pub(crate) fn record(&self, i: usize) -> Record {
        Record {
            y: self.y[i],
            n: self.trials[i],
            years: self.years[i],
        }
    }
}
