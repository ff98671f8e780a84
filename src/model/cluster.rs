//! The CR1 cluster-robust covariance from per-record scores and a bread matrix: the form shared
//! by the annualised survival model and the growth regression (the binomial GLM has its own in
//! [`super::robust`], which derives its scores from the fit).

use std::collections::HashMap;

use super::robust::ClusterRobust;
use super::ModelError;

/// CR1 from the scores `scores[i]` of the records (only records that count: non-zero weight)
/// in clusters `clusters[i]`, and the bread `bread` (the model covariance, k×k).
///
/// # Formula
/// u_g = Σ_{i∈g} sᵢ; M = Σ_g u_g u_gᵀ; CR1 = B M B · G/(G − 1) · (n − 1)/(n − k), with G
/// clusters, n records and k coefficients (R `sandwich::vcovCL(type = "HC1")`).
///
/// # Errors
/// Fewer than 2 clusters, or no more records than coefficients.
pub fn cr1<K: Eq + std::hash::Hash>(
    bread: &[Vec<f64>],
    scores: &[Vec<f64>],
    clusters: &[K],
) -> Result<ClusterRobust, ModelError> {
    let k = bread.len();
    let n = scores.len();
    let mut sums: Vec<Vec<f64>> = Vec::new();
    let mut index: HashMap<&K, usize> = HashMap::new();
    for (s, c) in scores.iter().zip(clusters) {
        let next = sums.len();
        let g = *index.entry(c).or_insert(next);
        if g == sums.len() {
            sums.push(vec![0.0; k]);
        }
        for (a, b) in sums[g].iter_mut().zip(s) {
            *a += b;
        }
    }
    let groups = sums.len();
    if groups < 2 || n <= k {
        return Err(ModelError::Invalid(format!(
            "a cluster-robust covariance needs at least 2 clusters and more records than coefficients ({groups} clusters, {n} records)"
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
    let (g, nf, kf) = (groups as f64, n as f64, k as f64);
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
