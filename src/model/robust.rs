//! Alternative covariances of a binomial GLM's coefficients: cluster-robust (sandwich), for
//! records that are not independent within clusters (trees in one plot), and the inverse
//! observed information (Stata, Greene, statsmodels `Probit`), which differs from the model's
//! expected-information covariance for the non-canonical links.

use std::collections::HashMap;
use std::hash::Hash;

use serde::Serialize;

use super::glm::{GlmData, GlmFit};
use super::linalg::SpdFactor;
use super::link::variance;
use super::ModelError;

/// A cluster-robust covariance (CR1) of a fit's coefficients.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct ClusterRobust {
    /// The CR1 covariance, rows and columns in the fit's term order.
    pub covariance: Vec<Vec<f64>>,
    /// √ of its diagonal.
    pub std_errors: Vec<f64>,
    /// Number of clusters among the records with non-zero weight.
    pub n_clusters: usize,
}

/// The CR1 cluster-robust covariance of `fit`, refitted data `data`, clusters given per row.
///
/// # Formula
/// Score of row i: uᵢ = wᵢ (yᵢ − μᵢ) (dμ/dη)ᵢ / V(μᵢ) · xᵢ (y a proportion, w = prior weight ×
/// trials); bread B = (XᵀWX)⁻¹ at the estimate (the fit's model covariance); meat
/// M = Σ_g u_g u_gᵀ with u_g the sum of the scores in cluster g; CR0 = B M B and
/// CR1 = CR0 · G/(G − 1) · (n − 1)/(n − k), G clusters, n records, k coefficients (R
/// `sandwich::vcovCL(type = "HC1")`, Stata `vce(cluster)`).
pub fn cluster_robust<K: Eq + Hash>(
    fit: &GlmFit,
    data: &GlmData,
    clusters: &[K],
) -> Result<ClusterRobust, ModelError> {
    let n = data.x.nrows();
    if clusters.len() != n {
        return Err(ModelError::Invalid(format!(
            "cluster column has {} values for {n} rows",
            clusters.len()
        )));
    }
    let eta = fit.linear_predictor(data.x, data.offset)?;
    let k = fit.coefficients.len();
    let mut sums: Vec<Vec<f64>> = Vec::new();
    let mut index: HashMap<&K, usize> = HashMap::new();
    let mut n_obs = 0usize;
    for i in 0..n {
        let (wt, y) = row_response(data, i);
        if wt == 0.0 {
            continue;
        }
        n_obs += 1;
        let mu = fit.link.inverse(eta[i]);
        let factor = wt * (y - mu) * fit.link.mu_eta(eta[i]) / variance(mu);
        let next = sums.len();
        let g = *index.entry(&clusters[i]).or_insert(next);
        if g == sums.len() {
            sums.push(vec![0.0; k]);
        }
        for (s, x) in sums[g].iter_mut().zip(data.x.row(i)) {
            *s += factor * x;
        }
    }
    let groups = sums.len();
    if groups < 2 || n_obs <= k {
        return Err(ModelError::Invalid(format!(
            "a cluster-robust covariance needs at least 2 clusters and more records than coefficients ({groups} clusters, {n_obs} records)"
        )));
    }
    let mut meat = vec![vec![0.0; k]; k];
    for u in &sums {
        for a in 0..k {
            for b in 0..k {
                meat[a][b] += u[a] * u[b];
            }
        }
    }
    let bread = &fit.covariance;
    let (g, nf, kf) = (groups as f64, n_obs as f64, k as f64);
    let scale = g / (g - 1.0) * (nf - 1.0) / (nf - kf);
    let bm: Vec<Vec<f64>> = (0..k)
        .map(|a| {
            (0..k)
                .map(|b| (0..k).map(|c| bread[a][c] * meat[c][b]).sum())
                .collect()
        })
        .collect();
    let covariance: Vec<Vec<f64>> = (0..k)
        .map(|a| {
            (0..k)
                .map(|b| scale * (0..k).map(|c| bm[a][c] * bread[c][b]).sum::<f64>())
                .collect()
        })
        .collect();
    let std_errors = (0..k).map(|j| covariance[j][j].sqrt()).collect();
    Ok(ClusterRobust {
        covariance,
        std_errors,
        n_clusters: groups,
    })
}

/// The total weight (prior weight × trials) and observed proportion of row i.
fn row_response(data: &GlmData, i: usize) -> (f64, f64) {
    let prior = data.weights.map_or(1.0, |w| w[i]);
    match data.trials {
        Some(t) if t[i] > 0.0 => (prior * t[i], data.y[i] / t[i]),
        Some(_) => (0.0, 0.0),
        None => (prior, data.y[i]),
    }
}

/// The inverse observed information of a fit's coefficients.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct ObservedInformation {
    /// −H⁻¹ at the estimate, rows and columns in the fit's term order.
    pub covariance: Vec<Vec<f64>>,
    /// √ of its diagonal.
    pub std_errors: Vec<f64>,
}

/// The covariance −H⁻¹ from the observed information (the negative Hessian of ℓ) at the
/// estimate of `fit`, refitted data `data`. For the logit link it equals the fit's covariance.
///
/// # Formula
/// With y a proportion, w = prior weight × trials, V = μ(1 − μ), μ′ = dμ/dη, μ″ = d²μ/dη²:
/// −∂²ℓ/∂η² = w [μ′²/V − (y − μ)(μ″/V − μ′²(1 − 2μ)/V²)] per row, and
/// J = Σᵢ (−∂²ℓᵢ/∂ηᵢ²) xᵢxᵢᵀ.
///
/// # Errors
/// [`ModelError::Invalid`] when the design does not match the fit or J is not positive
/// definite (the estimate is not a maximum of ℓ).
pub fn observed_information(
    fit: &GlmFit,
    data: &GlmData,
) -> Result<ObservedInformation, ModelError> {
    let eta = fit.linear_predictor(data.x, data.offset)?;
    let k = fit.coefficients.len();
    let mut info = vec![0.0; k * k];
    for (i, xi) in data.x.rows().into_iter().enumerate() {
        let (wt, y) = row_response(data, i);
        if wt == 0.0 {
            continue;
        }
        let mu = fit.link.inverse(eta[i]);
        let (d, d2, v) = (
            fit.link.mu_eta(eta[i]),
            fit.link.mu_eta_derivative(eta[i]),
            variance(mu),
        );
        let h = wt * (d * d / v - (y - mu) * (d2 / v - d * d * (1.0 - 2.0 * mu) / (v * v)));
        for a in 0..k {
            for b in 0..k {
                info[a * k + b] += h * xi[a] * xi[b];
            }
        }
    }
    let covariance = SpdFactor::new(&info, k)
        .ok_or_else(|| {
            ModelError::Invalid(
                "the observed information is not positive definite at the estimate".into(),
            )
        })?
        .inverse();
    let std_errors = (0..k).map(|j| covariance[j][j].sqrt()).collect();
    Ok(ObservedInformation {
        covariance,
        std_errors,
    })
}
