//! Firth's penalised-likelihood logistic regression (Firth 1993), which gives finite
//! estimates under complete and quasi-complete separation and removes the first-order bias
//! of the maximum-likelihood estimate.

use ndarray::{CowArray, Ix2};
use serde::Serialize;

use super::glm::{log_likelihood, prepare_response, rank_deficient, wald, GlmData};
use super::irls::{unit_deviance, Response};
use super::linalg::{first_aliased_column, SpdFactor};
use super::link::{Link, MU_EPS};
use super::ModelError;
use crate::tolerance::{IRLS_COEF_RTOL, MAX_ITERATIONS};

/// Step-halvings tried before a step that lowers the penalised likelihood is accepted anyway.
const MAX_HALVINGS: usize = 30;

/// A Firth-penalised logistic fit. It holds no data.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct FirthFit {
    /// Term names, in coefficient order.
    pub terms: Vec<String>,
    /// Penalised-likelihood estimates.
    pub coefficients: Vec<f64>,
    /// (XᵀWX)⁻¹ at the estimate.
    pub covariance: Vec<Vec<f64>>,
    /// √ of the covariance diagonal.
    pub std_errors: Vec<f64>,
    /// Wald statistics b / SE.
    pub z: Vec<f64>,
    /// Two-sided normal (Wald) p-values.
    pub p_values: Vec<f64>,
    /// The ordinary binomial log-likelihood at the estimate.
    pub log_likelihood: f64,
    /// ℓ + ½ ln det(XᵀWX) at the estimate.
    pub penalized_log_likelihood: f64,
    /// Newton iterations.
    pub iterations: usize,
    /// Rows with non-zero weight.
    pub n_obs: usize,
}

/// Everything needed at one β.
struct State {
    factor: SpdFactor,
    inverse: Vec<Vec<f64>>,
    mu: Vec<f64>,
    deviance: f64,
    penalized: f64,
}

fn state(x: &[f64], p: usize, r: &Response, data: &GlmData, beta: &[f64]) -> Option<State> {
    let mut info = vec![0.0; p * p];
    let mut mu = Vec::with_capacity(r.y.len());
    let mut deviance = 0.0;
    for (i, xi) in x.chunks_exact(p).enumerate() {
        let off = data.offset.map_or(0.0, |o| o[i]);
        let eta: f64 = xi.iter().zip(beta).map(|(a, b)| a * b).sum::<f64>() + off;
        let m = Link::Logit.inverse(eta);
        mu.push(m);
        if r.wt[i] == 0.0 {
            continue;
        }
        deviance += r.wt[i] * unit_deviance(r.y[i], m);
        let w = r.wt[i] * (m * (1.0 - m)).max(MU_EPS);
        for j in 0..p {
            for k in 0..p {
                info[j * p + k] += w * xi[j] * xi[k];
            }
        }
    }
    let factor = SpdFactor::new(&info, p)?;
    let ll = log_likelihood(data, r, deviance);
    let penalized = ll + 0.5 * factor.ln_det();
    Some(State {
        inverse: factor.inverse(),
        factor,
        mu,
        deviance,
        penalized,
    })
}

/// Fits a logistic regression by Firth's penalised likelihood (logit link only).
///
/// # Formula
/// Maximises ℓ*(β) = ℓ(β) + ½ ln det(XᵀWX), W = diag(wᵢ μᵢ(1 − μᵢ)), by the modified score
/// U*(β) = Σᵢ xᵢ [wᵢ(yᵢ − μᵢ) + hᵢ(½ − μᵢ)] = 0 with hᵢ the diagonal of the hat matrix
/// W^½X(XᵀWX)⁻¹XᵀW^½, stepping β ← β + (XᵀWX)⁻¹U* with step-halving on ℓ*. Stops when the
/// largest coefficient change |Δβ|/(|β| + 0.1) is below [`IRLS_COEF_RTOL`]. SEs from
/// (XᵀWX)⁻¹ at the estimate.
///
/// # Errors
/// [`ModelError::RankDeficient`], [`ModelError::Invalid`], [`ModelError::NotConverged`].
pub fn fit_firth(data: &GlmData) -> Result<FirthFit, ModelError> {
    let r = prepare_response(data)?;
    let n_obs = r.wt.iter().filter(|&&w| w > 0.0).count();
    let p = data.x.ncols();
    if p == 0 || n_obs < p {
        return Err(ModelError::Invalid(format!(
            "{n_obs} records with non-zero weight cannot estimate {p} coefficients"
        )));
    }
    let xc: CowArray<f64, Ix2> = data.x.as_standard_layout();
    let x = xc
        .as_slice()
        .ok_or_else(|| ModelError::Invalid("design matrix layout".into()))?;
    let not_converged = |iterations, deviance| ModelError::NotConverged {
        iterations,
        deviance,
        hint: "the penalised likelihood could not be maximised".into(),
    };
    let mut beta = vec![0.0; p];
    let mut current = state(x, p, &r, data, &beta).ok_or_else(|| {
        let mut gram = vec![0.0; p * p];
        for (xi, &w) in x.chunks_exact(p).zip(&r.wt) {
            for j in 0..p {
                for k in 0..p {
                    gram[j * p + k] += w * xi[j] * xi[k];
                }
            }
        }
        let j = first_aliased_column(&gram, p).unwrap_or(p - 1);
        rank_deficient(x, p, &r, data.terms, j)
    })?;
    for iteration in 1..=MAX_ITERATIONS {
        let mut score = vec![0.0; p];
        for (i, xi) in x
            .chunks_exact(p)
            .enumerate()
            .filter(|(i, _)| r.wt[*i] > 0.0)
        {
            let m = current.mu[i];
            let w = r.wt[i] * (m * (1.0 - m)).max(MU_EPS);
            let quad: f64 = (0..p)
                .map(|j| xi[j] * (0..p).map(|k| current.inverse[j][k] * xi[k]).sum::<f64>())
                .sum();
            let h = w * quad;
            let u = r.wt[i] * (r.y[i] - m) + h * (0.5 - m);
            for (s, v) in score.iter_mut().zip(xi) {
                *s += u * v;
            }
        }
        let delta = current.factor.solve(&score);
        let mut step = 1.0;
        let mut next = None;
        for _ in 0..=MAX_HALVINGS {
            let trial: Vec<f64> = beta.iter().zip(&delta).map(|(b, d)| b + step * d).collect();
            if let Some(s) = state(x, p, &r, data, &trial) {
                if s.penalized >= current.penalized - 1e-12 * current.penalized.abs() {
                    next = Some((trial, s));
                    break;
                }
            }
            step *= 0.5;
        }
        let (trial, s) = next.ok_or_else(|| not_converged(iteration, current.deviance))?;
        let change = trial
            .iter()
            .zip(&beta)
            .map(|(b, o)| (b - o).abs() / (b.abs() + 0.1))
            .fold(0.0, f64::max);
        beta = trial;
        current = s;
        if change < IRLS_COEF_RTOL {
            return Ok(finish(data, beta, current, iteration, n_obs, &r));
        }
    }
    Err(not_converged(MAX_ITERATIONS, current.deviance))
}

fn finish(
    data: &GlmData,
    coefficients: Vec<f64>,
    s: State,
    iterations: usize,
    n_obs: usize,
    r: &Response,
) -> FirthFit {
    let (std_errors, z, p_values) = wald(&coefficients, &s.inverse);
    FirthFit {
        terms: data.terms.to_vec(),
        p_values,
        z,
        std_errors,
        coefficients,
        log_likelihood: log_likelihood(data, r, s.deviance),
        penalized_log_likelihood: s.penalized,
        covariance: s.inverse,
        iterations,
        n_obs,
    }
}
