//! `rank --plot-effect`: every candidate also fitted with a random plot intercept, on the same
//! records, compared by AIC with the fits without it; cross-validation predicts each held-out
//! stand's records with the marginal probability of a new plot (docs/mixed-models.md).

use rayon::prelude::*;

use super::estimate::Estimate;
use super::load::SurvivalData;
use super::mixed::{family_of, plots, survival_plot_effect, SurvivalPlotEffect};
use super::survival::SurvivalSpec;
use crate::model::irls::Response;
use crate::model::mixed::{fit_glmm, marginal_probability, GlmmColumns, GlmmData, GlmmOptions};
use crate::Error;

/// Fitted probabilities are kept this far from 0 and 1 in the log-loss.
const LOSS_EPS: f64 = 1e-15;

/// One candidate fitted with the plot effect.
#[derive(Debug, Clone)]
pub struct MixedCandidate {
    /// The estimate in GLM form (the GLMM's β, ℓ, AIC, BIC; marginal fitted values).
    pub estimate: Estimate,
    /// σ_u.
    pub sd: f64,
    /// The log-likelihood of the same candidate without the plot effect.
    pub log_likelihood_without: f64,
    /// Cross-validated log-loss with marginal predictions.
    pub cv_log_loss: f64,
}

/// The plot-effect fit of every candidate in `fits`, with its cross-validated log-loss over
/// `folds` (k folds).
///
/// # Errors
/// Bad plot ids (exit code 2); a fit or fold fit that does not converge (1).
pub fn mixed_candidates(
    spec: &SurvivalSpec,
    pe: &SurvivalPlotEffect,
    data: &SurvivalData,
    fits: &[Estimate],
    response: &Response,
    (folds, k): (&[u32], usize),
    max_iterations: usize,
) -> Result<Vec<MixedCandidate>, Error> {
    let groups = plots(&data.records.frame, &pe.plot)?;
    fits.par_iter()
        .map(|est| {
            let (mixed, summary) = survival_plot_effect(spec, data, est, pe, max_iterations)?;
            let per_fold: Vec<(f64, f64)> = (0..k as u32)
                .into_par_iter()
                .map(|fold| {
                    held_out(
                        spec,
                        pe,
                        data,
                        &mixed,
                        response,
                        &groups.codes,
                        (folds, fold),
                    )
                    .map_err(|e| {
                        Error::Usage(format!(
                            "cross-validation fold {} of {k} with the plot effect, terms {}: {e}",
                            fold + 1,
                            est.glm.terms.join(", ")
                        ))
                    })
                })
                .collect::<Result<_, _>>()?;
            let (loss, weight) = per_fold
                .iter()
                .fold((0.0, 0.0), |(l, w), (fl, fw)| (l + fl, w + fw));
            Ok(MixedCandidate {
                sd: summary.sd,
                log_likelihood_without: summary.log_likelihood_without,
                cv_log_loss: loss / weight,
                estimate: mixed,
            })
        })
        .collect()
}

/// Held-out log-loss sum and weight of one fold: the GLMM fitted without the fold's records
/// (their weight set to 0), the held-out records predicted as records of new plots.
fn held_out(
    spec: &SurvivalSpec,
    pe: &SurvivalPlotEffect,
    data: &SurvivalData,
    mixed: &Estimate,
    response: &Response,
    plots: &[u32],
    (folds, fold): (&[u32], u32),
) -> Result<(f64, f64), Error> {
    let n = folds.len();
    let weights: Vec<f64> = (0..n)
        .map(|i| {
            if folds[i] == fold {
                0.0
            } else {
                data.weights.as_ref().map_or(1.0, |w| w[i])
            }
        })
        .collect();
    let family = family_of(spec);
    let x = mixed.design.x.view();
    let columns = GlmmColumns {
        x,
        y: data.y.as_slice().unwrap_or(&[]),
        trials: data.trials.as_ref().and_then(|t| t.as_slice()),
        weights: Some(&weights),
        offset: data.offset.as_ref().and_then(|o| o.as_slice()),
        years: &data.years,
        plots,
    };
    let gd = GlmmData::new(family, &columns)?;
    let fit = fit_glmm(
        &gd,
        &mixed.glm.coefficients,
        &mixed.glm.covariance,
        &GlmmOptions {
            nodes: pe.nodes,
            ..GlmmOptions::default()
        },
    )?;
    let (mut loss, mut weight) = (0.0, 0.0);
    for i in (0..n).filter(|&i| folds[i] == fold && response.wt[i] > 0.0) {
        let eta = data.offset.as_ref().map_or(0.0, |o| o[i])
            + x.row(i)
                .iter()
                .zip(&fit.coefficients)
                .map(|(a, b)| a * b)
                .sum::<f64>();
        let years = data.years.get(i).copied().unwrap_or(1.0);
        let mu = marginal_probability(family, eta, fit.sd, years).clamp(LOSS_EPS, 1.0 - LOSS_EPS);
        let (y, wt) = (response.y[i], response.wt[i]);
        loss -= wt * (y * mu.ln() + (1.0 - y) * (-mu).ln_1p());
        weight += wt;
    }
    Ok((loss, weight))
}
