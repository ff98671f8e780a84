//! `--cluster` for the fits whose scores are not the binomial GLM's: the annualised survival
//! model (scores of ln P = L ln p(η)) and the growth regression (xᵢeᵢ). Both use the CR1
//! sandwich of [`crate::model::cluster::cr1`] with the model covariance as bread.

use ndarray::ArrayView2;

use super::estimate::{Estimate, Inference};
use super::load::SurvivalData;
use crate::model::cluster::cr1;
use crate::model::file::CovarianceKind;
use crate::model::glm::wald;
use crate::model::mixed::family::{Family, Record};
use crate::Error;

/// The inference of an annualised fit: model-based, or CR1 by `clusters`.
///
/// # Formula
/// Score of record i: wᵢ ∂ln f(yᵢ | ηᵢ)/∂η · xᵢ with f the annualised likelihood
/// (docs/mixed-models.md, "The record likelihood"); bread: the inverse observed information.
///
/// # Errors
/// Fewer than two clusters (exit code 2).
pub fn annualized_inference(
    est: &Estimate,
    data: &SurvivalData,
    clusters: Option<&[u32]>,
) -> Result<Inference, Error> {
    let g = &est.glm;
    let Some(codes) = clusters else {
        return super::estimate::inference(est, data, None);
    };
    let x = est.design.x.view();
    let mut scores = Vec::new();
    let mut kept = Vec::new();
    for i in 0..x.nrows() {
        let w = data.weights.as_ref().map_or(1.0, |w| w[i]);
        if w == 0.0 {
            continue;
        }
        let eta = data.offset.as_ref().map_or(0.0, |o| o[i])
            + x.row(i)
                .iter()
                .zip(&g.coefficients)
                .map(|(a, b)| a * b)
                .sum::<f64>();
        let r = Record {
            y: data.y[i],
            n: 1.0,
            years: data.years[i],
        };
        let d1 = Family::Annualized.derivatives(eta, r)[1];
        scores.push(x.row(i).iter().map(|v| w * d1 * v).collect());
        kept.push(codes[i]);
    }
    let robust = cr1(&g.covariance, &scores, &kept)?;
    let (std_errors, z, p_values) = wald(&g.coefficients, &robust.covariance);
    Ok(Inference {
        kind: CovarianceKind::ClusterRobust,
        covariance: robust.covariance,
        std_errors,
        z,
        p_values,
        n_clusters: Some(robust.n_clusters),
    })
}

/// The CR1 covariance of a least-squares fit with residuals `residuals`, bread
/// `covariance / σ̂²` = (XᵀX)⁻¹, and its number of clusters.
///
/// # Errors
/// Fewer than two clusters (exit code 2).
pub fn ols_cluster_covariance(
    x: ArrayView2<f64>,
    residuals: &[f64],
    unscaled_covariance: &[Vec<f64>],
    clusters: &[u32],
) -> Result<(Vec<Vec<f64>>, usize), Error> {
    let scores: Vec<Vec<f64>> = (0..x.nrows())
        .map(|i| x.row(i).iter().map(|v| v * residuals[i]).collect())
        .collect();
    let robust = cr1(unscaled_covariance, &scores, clusters)?;
    Ok((robust.covariance, robust.n_clusters))
}
