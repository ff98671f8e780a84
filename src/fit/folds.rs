//! K-fold cross-validation grouped by stand: every tree of a stand falls in one fold, so the
//! held-out log-loss measures prediction for stands the model has not seen.
//!
//! A fold is fitted on the records of the other folds by giving the held-out records prior
//! weight 0 (the design matrix is shared, never copied), starting IRLS from the full-data
//! estimate. Zero-weight records do not count as observations in the fold fit.

use ndarray::{Array1, ArrayView1};
use rand::seq::SliceRandom;
use rand::SeedableRng;
use rand_chacha::ChaCha8Rng;
use rayon::prelude::*;

use super::estimate::{glm_data, Estimate};
use super::load::SurvivalData;
use crate::model::annualized::fit_annualized_with;
use crate::model::file::IntervalKind;
use crate::model::glm::{fit_glm_with, prepare_response, FitControl, GlmData, GlmOptions};
use crate::model::irls::{Problem, Response};
use crate::model::link::Link;
use crate::model::ModelError;
use crate::Error;

/// Fitted probabilities are kept this far from 0 and 1 in the log-loss.
const LOSS_EPS: f64 = 1e-15;

/// The fold (0..k) of each stand code: distinct stands shuffled by ChaCha8 seeded with `seed`,
/// then dealt to the folds in turn. Returns (fold per record, number of stands).
///
/// # Errors
/// Fewer than 2 folds, or more folds than stands (exit code 2).
pub fn stand_folds(
    stands: &[u32],
    k: usize,
    seed: u64,
    source: &str,
) -> Result<(Vec<u32>, usize), Error> {
    if k < 2 {
        return Err(Error::Usage(format!(
            "--folds {k}: cross-validation needs at least 2 folds"
        )));
    }
    let mut distinct: Vec<u32> = stands.to_vec();
    distinct.sort_unstable();
    distinct.dedup();
    if k > distinct.len() {
        return Err(Error::Usage(format!(
            "--folds {k}: {source} has only {} stands among the fitted records, and every fold needs at least one stand; use --folds {} or fewer",
            distinct.len(),
            distinct.len()
        )));
    }
    let mut rng = ChaCha8Rng::seed_from_u64(seed);
    distinct.shuffle(&mut rng);
    let max = distinct.iter().copied().max().unwrap_or(0) as usize;
    let mut fold_of = vec![0u32; max + 1];
    for (pos, &s) in distinct.iter().enumerate() {
        fold_of[s as usize] = (pos % k) as u32;
    }
    Ok((
        stands.iter().map(|&s| fold_of[s as usize]).collect(),
        distinct.len(),
    ))
}

/// The shared response of every fold fit: proportions and total weights of the full data.
///
/// # Errors
/// Invalid response or weights (exit code 2).
pub fn base_response(gd: &GlmData) -> Result<Response, Error> {
    Ok(prepare_response(gd)?)
}

/// Cross-validated log-loss of one fitted candidate over the folds.
///
/// # Formula
/// With μᵢ the probability of a response of 1 predicted for held-out record i by the fit
/// without its fold, yᵢ the observed proportion and wᵢ its prior weight × trials:
/// log-loss = −Σᵢ wᵢ [yᵢ ln μᵢ + (1 − yᵢ) ln(1 − μᵢ)] / Σᵢ wᵢ, every record held out once.
///
/// # Errors
/// A fold fit that fails (separation or non-convergence in a fold), naming the fold.
pub fn cv_log_loss(
    data: &SurvivalData,
    est: &Estimate,
    interval: IntervalKind,
    response: &Response,
    folds: &[u32],
    k: usize,
    control: &FitControl,
) -> Result<f64, Error> {
    let per_fold: Vec<(f64, f64)> = (0..k as u32)
        .into_par_iter()
        .map(|fold| held_out_loss(data, est, interval, response, (folds, fold, k), control))
        .collect::<Result<_, _>>()?;
    // Summed in fold order, so the result does not depend on the thread count.
    let (loss, weight) = per_fold
        .iter()
        .fold((0.0, 0.0), |(l, w), (fl, fw)| (l + fl, w + fw));
    Ok(loss / weight)
}

/// Held-out log-loss sum and weight of one fold.
fn held_out_loss(
    data: &SurvivalData,
    est: &Estimate,
    interval: IntervalKind,
    response: &Response,
    (folds, fold, k): (&[u32], u32, usize),
    control: &FitControl,
) -> Result<(f64, f64), Error> {
    let mut loss = 0.0;
    let mut weight = 0.0;
    let context = format!(
        "cross-validation fold {} of {k}, terms {}",
        fold + 1,
        est.glm.terms.join(", ")
    );
    let beta =
        fold_fit(data, est, interval, response, (folds, fold), control).map_err(|e| match e {
            Error::Model(ModelError::NotConverged {
                iterations,
                deviance,
                hint,
            }) => Error::Model(ModelError::NotConverged {
                iterations,
                deviance,
                hint: format!("{hint} ({context})"),
            }),
            other => Error::Usage(format!("{context}: {other}")),
        })?;
    let x = est.design.x.view();
    for (i, row) in x.rows().into_iter().enumerate() {
        let wt = response.wt[i];
        if folds[i] != fold || wt == 0.0 {
            continue;
        }
        let eta =
            row.dot(&ArrayView1::from(&beta[..])) + data.offset.as_ref().map_or(0.0, |o| o[i]);
        let mu = match interval {
            IntervalKind::Annualized => Link::Logit.inverse(eta).powf(data.years[i]),
            _ => est.glm.link.inverse(eta),
        }
        .clamp(LOSS_EPS, 1.0 - LOSS_EPS);
        let y = response.y[i];
        loss -= wt * (y * mu.ln() + (1.0 - y) * (-mu).ln_1p());
        weight += wt;
    }
    Ok((loss, weight))
}

/// Coefficients fitted without fold `fold`.
fn fold_fit(
    data: &SurvivalData,
    est: &Estimate,
    interval: IntervalKind,
    response: &Response,
    (folds, fold): (&[u32], u32),
    control: &FitControl,
) -> Result<Vec<f64>, Error> {
    let design = &est.design;
    if interval == IntervalKind::Annualized {
        let prior = masked_prior(data, folds, fold);
        let gd = glm_data(data, design.x.view(), &design.names, Some(prior.view()));
        let years = ArrayView1::from(&data.years[..]);
        return Ok(fit_annualized_with(&gd, years, control)?.coefficients);
    }
    let wt: Vec<f64> = response
        .wt
        .iter()
        .zip(folds)
        .map(|(&w, &f)| if f == fold { 0.0 } else { w })
        .collect();
    let masked = Response::new(response.y.clone(), wt);
    let x = design
        .x
        .as_slice()
        .ok_or_else(|| Error::Usage("design matrix layout".into()))?;
    let problem = Problem {
        x,
        p: design.names.len(),
        response: &masked,
        offset: data.offset.as_ref().and_then(|o| o.as_slice()),
        link: est.glm.link,
    };
    let start = problem.pass(Some(&est.glm.coefficients));
    match problem.run_limited(start, control.max_iterations) {
        Ok(r) if r.converged => Ok(r.beta),
        // Fall back to a full fit from the usual start, which also explains a failure
        // (separation in the fold, non-convergence).
        _ => {
            let prior = masked_prior(data, folds, fold);
            let gd = glm_data(data, design.x.view(), &design.names, Some(prior.view()));
            let opts = GlmOptions { link: est.glm.link };
            Ok(fit_glm_with(&gd, &opts, control)?.coefficients)
        }
    }
}

/// Prior weights with the records of `fold` set to 0.
fn masked_prior(data: &SurvivalData, folds: &[u32], fold: u32) -> Array1<f64> {
    (0..folds.len())
        .map(|i| {
            if folds[i] == fold {
                0.0
            } else {
                data.weights.as_ref().map_or(1.0, |w| w[i])
            }
        })
        .collect()
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn every_tree_of_a_stand_shares_a_fold_and_every_fold_has_a_stand() {
        let stands: Vec<u32> = (0..300).map(|i| (i * 7 % 23) as u32).collect();
        let (folds, n) = stand_folds(&stands, 5, 42, "t.csv").unwrap();
        assert_eq!(n, 23);
        for s in 0..23u32 {
            let of: Vec<u32> = (0..300)
                .filter(|&i| stands[i] == s)
                .map(|i| folds[i])
                .collect();
            assert!(of.windows(2).all(|w| w[0] == w[1]), "stand {s} split");
        }
        for f in 0..5u32 {
            assert!(folds.contains(&f), "fold {f} empty");
        }
        // The same seed deals the same folds; the assignment depends only on the seed.
        assert_eq!(stand_folds(&stands, 5, 42, "t.csv").unwrap().0, folds);
    }

    #[test]
    fn fold_counts_outside_two_to_the_number_of_stands_are_refused() {
        let stands = [0u32, 0, 1, 2];
        assert!(matches!(
            stand_folds(&stands, 1, 1, "t.csv"),
            Err(Error::Usage(_))
        ));
        assert!(matches!(
            stand_folds(&stands, 4, 1, "t.csv"),
            Err(Error::Usage(_))
        ));
        assert!(stand_folds(&stands, 3, 1, "t.csv").is_ok());
    }
}
