//! One sub-step (`docs/maths.md#the-projection-step`): competition covariates from the live trees →
//! survival probability per record → mortality → growth of the survivors → DBH order restored.

use super::binomial;
use super::rng;
use super::stand::{Stand, Totals};
use crate::data::Units;
use crate::model::fastmath;
use crate::model::file::{GrowthResponse, IntervalKind, Outcome};
use crate::model::link::Link;
use crate::model::predictor::{CompiledPredictor, Covariates, Source};
use crate::scenario::Scenario;

/// Survival over one sub-step of `h` years.
#[derive(Debug, Clone, Copy)]
pub(crate) struct SurvivalRule {
    link: Link,
    outcome: Outcome,
    interval: IntervalKind,
    /// h / L0.
    exponent: f64,
    h: f64,
}

impl SurvivalRule {
    pub fn of(s: &Scenario) -> SurvivalRule {
        let m = &s.survival.model;
        SurvivalRule {
            link: m.link,
            outcome: m.outcome,
            interval: m.interval,
            exponent: s.sub_step_years / s.survival.period_years,
            h: s.sub_step_years,
        }
    }

    /// Replace each η by the probability of surviving the sub-step.
    ///
    /// # Formula
    /// fixed: `P_L0^(h/L0)`; annualized: `p^h` (L0 = 1); exposure: `exp(−e^η·h)`; with
    /// `outcome = "dead"`, `P_L0 = 1 − g⁻¹(η)`, computed as `g⁻¹(−η)` for the symmetric links
    /// and `exp(−e^η)` for cloglog.
    pub fn probabilities(&self, eta: &mut [f64]) {
        // Each case is its own loop so that the logistic ones vectorise.
        match (self.interval, self.outcome, self.link) {
            (IntervalKind::Exposure, _, _) => {
                let h = self.h;
                eta.iter_mut()
                    .for_each(|e| *e = fastmath::exp(-fastmath::exp(*e) * h));
                return;
            }
            (_, Outcome::Alive, Link::Logit) => eta
                .iter_mut()
                .for_each(|e| *e = 1.0 / (1.0 + fastmath::exp(-*e))),
            (_, Outcome::Dead, Link::Logit) => eta
                .iter_mut()
                .for_each(|e| *e = 1.0 / (1.0 + fastmath::exp(*e))),
            (_, Outcome::Dead, Link::Cloglog) => eta.iter_mut().for_each(|e| *e = (-e.exp()).exp()),
            (_, Outcome::Alive, link) => eta.iter_mut().for_each(|e| *e = link.inverse(*e)),
            (_, Outcome::Dead, link) => eta.iter_mut().for_each(|e| *e = link.inverse(-*e)),
        }
        if self.exponent != 1.0 {
            let k = self.exponent;
            eta.iter_mut().for_each(|p| *p = p.powf(k));
        }
    }
}

/// Diameter growth over one sub-step.
#[derive(Debug, Clone, Copy)]
pub(crate) struct GrowthRule {
    response: GrowthResponse,
    sigma: f64,
    /// ln_bai: (h/L0) · cm² per model unit² · 4/π; annual_increment: h · cm per model unit.
    scale: f64,
    /// Sub-steps per growth period (one residual per tree per period).
    sub_steps_per_period: u64,
}

impl GrowthRule {
    pub fn of(s: &Scenario) -> GrowthRule {
        let m = &s.growth.model;
        let cm = match m.common.units {
            Units::Metric => 1.0,
            Units::Imperial => crate::model::predictor::CM_PER_IN,
        };
        let h = s.sub_step_years;
        let scale = match m.response {
            GrowthResponse::AnnualIncrement => h * cm,
            _ => h / s.growth.period_years * cm * cm * 4.0 / std::f64::consts::PI,
        };
        GrowthRule {
            response: m.response,
            sigma: m.residual_sd,
            scale,
            sub_steps_per_period: (s.growth.period_years / h).round().max(1.0) as u64,
        }
    }
}

/// How survivors are decided.
#[derive(Debug, Clone, Copy)]
pub(crate) enum Mortality {
    /// Weights times probabilities (expected driver, or Monte Carlo without process noise).
    Expected,
    /// One Bernoulli draw per record from this stream.
    Bernoulli(u64),
    /// Binomial(e·area, P) survivors per record from this stream.
    Binomial(u64, f64),
}

/// Everything a sub-step needs besides the stand.
pub(crate) struct StepContext<'a> {
    pub survival: &'a CompiledPredictor,
    pub growth: &'a CompiledPredictor,
    pub survival_rule: SurvivalRule,
    pub growth_rule: GrowthRule,
    pub survival_coefs: &'a [f64],
    pub growth_coefs: &'a [f64],
    pub numeric: &'a [Vec<f64>],
    pub codes: &'a [Vec<u32>],
    pub mortality: Mortality,
    /// Stream of growth residuals; `None` grows at the bias-corrected mean.
    pub residuals: Option<u64>,
}

/// Stems at the start of the sub-step and after mortality.
#[derive(Debug, Clone, Copy)]
pub(crate) struct StepStems {
    pub start: f64,
    pub survived: f64,
}

/// Advance `stand` by one sub-step (index `k`); `observe` sees the covariates at its start.
pub(crate) fn sub_step(
    stand: &mut Stand,
    ctx: &StepContext,
    k: u64,
    observe: &mut dyn FnMut(&Stand, &Totals),
) -> StepStems {
    let totals = stand.covariates();
    observe(stand, &totals);
    let Stand {
        dbh,
        stems,
        tree,
        bal,
        eta,
        tmp,
        survival_by_record,
        ..
    } = stand;
    let cov = Covariates {
        dbh,
        bal,
        tree,
        ba: totals.ba,
        qmd: totals.qmd,
        stems: totals.stems,
        numeric: ctx.numeric,
        codes: ctx.codes,
    };
    ctx.survival.eval(ctx.survival_coefs, &cov, eta, tmp);
    ctx.survival_rule.probabilities(eta);
    let probability = &*eta;
    let mut survived = 0.0;
    match ctx.mortality {
        Mortality::Expected => {
            for ((e, &p), &t) in stems.iter_mut().zip(probability).zip(tree.iter()) {
                *e *= p;
                survived += *e;
                survival_by_record[t as usize] *= p;
            }
        }
        Mortality::Bernoulli(stream) => {
            let s = rng::absorb(stream, k);
            // Mortality and compaction in one pass: every record is copied to slot j, which
            // advances only for survivors (a select rather than a branch: deaths are random,
            // so a branch would mispredict). Later loops then see only live records.
            // Slices of one known length: the bounds checks on `i` fold away and the
            // vectors' pointers stay in registers instead of being reloaded after each store.
            let n = dbh.len();
            let (dbh, bal, stems, tree) = (
                &mut dbh[..n],
                &mut bal[..n],
                &mut stems[..n],
                &mut tree[..n],
            );
            let probability = &probability[..n];
            let mut j = 0;
            for i in 0..n {
                let t = tree[i];
                let alive = rng::uniform(rng::absorb(s, t as u64)) < probability[i];
                let e = if alive { stems[i] } else { 0.0 };
                survived += e;
                // j ≤ i < n; `min` tells the compiler so, which removes four bounds checks.
                let slot = j.min(i);
                dbh[slot] = dbh[i];
                bal[slot] = bal[i];
                stems[slot] = e;
                tree[slot] = t;
                j += usize::from(e > 0.0);
            }
            stand.truncate(j);
        }
        Mortality::Binomial(stream, area) => {
            let s = rng::absorb(stream, k);
            for ((e, &p), &t) in stems.iter_mut().zip(probability).zip(tree.iter()) {
                let n = (*e * area).round() as u64;
                let u = rng::uniform(rng::absorb(s, t as u64));
                let deaths = binomial::inverse_cdf(n, 1.0 - p, u);
                if deaths > 0 {
                    *e *= (n - deaths) as f64 / n as f64;
                }
                survived += *e;
            }
        }
    }
    if matches!(ctx.mortality, Mortality::Binomial(..)) {
        stand.compact();
    }
    grow(stand, ctx, &totals, k);
    stand.restore_order();
    StepStems {
        start: totals.stems,
        survived,
    }
}

fn grow(stand: &mut Stand, ctx: &StepContext, totals: &Totals, k: u64) {
    let Stand {
        dbh,
        tree,
        bal,
        eta,
        tmp,
        uniform,
        ..
    } = stand;
    let cov = Covariates {
        dbh,
        bal,
        tree,
        ba: totals.ba,
        qmd: totals.qmd,
        stems: totals.stems,
        numeric: ctx.numeric,
        codes: ctx.codes,
    };
    ctx.growth.eval(ctx.growth_coefs, &cov, eta, tmp);
    let g = ctx.growth_rule;
    // The residual of the growth period containing sub-step k, in tmp.
    match ctx.residuals {
        Some(stream) => {
            let s = rng::absorb(stream, k / g.sub_steps_per_period);
            for (u, &t) in uniform.iter_mut().zip(tree.iter()) {
                *u = rng::uniform(rng::absorb(s, t as u64));
            }
            rng::scaled_normals(uniform, g.sigma, tmp);
        }
        None => {
            let mean = match g.response {
                GrowthResponse::LnBai => crate::model::growth::baskerville_log_term(g.sigma),
                _ => 0.0,
            };
            tmp.fill(mean);
        }
    }
    match g.response {
        GrowthResponse::AnnualIncrement => {
            for ((d, &x), &z) in dbh.iter_mut().zip(eta.iter()).zip(tmp.iter()) {
                *d += ((x + z) * g.scale).max(0.0);
            }
        }
        _ => {
            for ((d, &x), &z) in dbh.iter_mut().zip(eta.iter()).zip(tmp.iter()) {
                *d = (*d * *d + fastmath::exp(x + z) * g.scale).sqrt();
            }
        }
    }
}

/// Model variables with a fitted range, tracked as (min, max) over live trees.
pub(crate) fn observe_ranges(
    pred: &CompiledPredictor,
    stand: &Stand,
    totals: &Totals,
    numeric: &[Vec<f64>],
    seen: &mut [[f64; 2]],
) {
    let n = stand.len();
    if n == 0 {
        return;
    }
    for ((_, source, scale, _), mm) in pred.ranged.iter().zip(seen.iter_mut()) {
        // Arrays are in descending DBH order, so DBH, rel_dbh and BAL are monotone.
        let (a, b) = match source {
            Source::Dbh => (stand.dbh[0], stand.dbh[n - 1]),
            Source::RelDbh => (stand.dbh[0] / totals.qmd, stand.dbh[n - 1] / totals.qmd),
            Source::Bal => (stand.bal[0], stand.bal[n - 1]),
            Source::Ba => (totals.ba, totals.ba),
            Source::Qmd => (totals.qmd, totals.qmd),
            Source::Stems => (totals.stems, totals.stems),
            Source::Numeric(c) => stand
                .tree
                .iter()
                .fold((f64::NAN, f64::NAN), |(lo, hi), &t| {
                    let v = numeric[*c][t as usize];
                    (lo.min(v), hi.max(v))
                }),
            Source::Indicator(..) => continue,
        };
        mm[0] = mm[0].min(a.min(b) * scale);
        mm[1] = mm[1].max(a.max(b) * scale);
    }
}
