//! Cluster-robust (sandwich) covariance of a binomial GLM, for records that are not
//! independent within clusters (trees in one plot).

use std::collections::HashMap;
use std::hash::Hash;

use serde::Serialize;

use super::glm::{GlmData, GlmFit};
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
        let prior = data.weights.map_or(1.0, |w| w[i]);
        let (wt, y) = match data.trials {
            Some(t) if t[i] > 0.0 => (prior * t[i], data.y[i] / t[i]),
            Some(_) => (0.0, 0.0),
            None => (prior, data.y[i]),
        };
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
