//! Firth's penalised-likelihood logistic regression (Firth 1993), which gives finite
//! estimates under complete and quasi-complete separation and removes the first-order bias
//! of the maximum-likelihood estimate.

use ndarray::{CowArray, Ix2};
use serde::Serialize;

use statrs::distribution::{ContinuousCDF, Normal};

use super::glm::{log_likelihood, prepare_response, rank_deficient, wald, FitControl, GlmData};
use super::irls::{unit_deviance, Response};
use super::linalg::{first_aliased_column, SpdFactor};
use super::link::{Link, MU_EPS};
use super::ModelError;
use crate::tolerance::IRLS_COEF_RTOL;

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
    /// Penalised likelihood-ratio statistics 2(ℓ*(β̂) − ℓ*(β̃₍ⱼ₎)), β̃₍ⱼ₎ the penalised fit with
    /// βⱼ fixed at 0 and the penalty from the full design (logistf's default tests).
    pub plr_statistics: Vec<f64>,
    /// Upper-tail χ²₁ p-values of [`FirthFit::plr_statistics`].
    pub plr_p_values: Vec<f64>,
    /// Newton iterations.
    pub iterations: usize,
    /// Rows with non-zero weight.
    pub n_obs: usize,
}

/// Everything needed at one β.
struct State {
    /// XᵀWX (row-major p×p) with W = diag(wᵢ μᵢ(1 − μᵢ)); the penalty is ½ ln det of it.
    info: Vec<f64>,
    factor: SpdFactor,
    inverse: Vec<Vec<f64>>,
    mu: Vec<f64>,
    deviance: f64,
    penalized: f64,
}

/// The design and response of one Firth fit.
#[derive(Clone, Copy)]
struct Problem<'a, 'd> {
    x: &'a [f64],
    p: usize,
    r: &'a Response,
    data: &'a GlmData<'d>,
}

impl Problem<'_, '_> {
    fn state(&self, beta: &[f64]) -> Option<State> {
        let (x, p, r) = (self.x, self.p, self.r);
        let mut info = vec![0.0; p * p];
        let mut mu = Vec::with_capacity(r.y.len());
        let mut deviance = 0.0;
        for (i, xi) in x.chunks_exact(p).enumerate() {
            let off = self.data.offset.map_or(0.0, |o| o[i]);
            let eta: f64 = xi.iter().zip(beta).map(|(a, b)| a * b).sum::<f64>() + off;
            let m = Link::Logit.inverse(eta);
            mu.push(m);
            if r.wt[i] == 0.0 {
                continue;
            }
            deviance += r.wt[i] * unit_deviance(r.y[i], m);
            let w = r.wt[i] * (m * (1.0 - m)).max(MU_EPS);
            for j in 0..p {
                let wx = w * xi[j];
                for (k, v) in info[j * p..=j * p + j].iter_mut().enumerate() {
                    *v += wx * xi[k];
                }
            }
        }
        for j in 0..p {
            for k in 0..j {
                info[k * p + j] = info[j * p + k];
            }
        }
        let factor = SpdFactor::new(&info, p)?;
        let ll = log_likelihood(self.data, r, deviance);
        let penalized = ll + 0.5 * factor.ln_det();
        Some(State {
            inverse: factor.inverse(),
            info,
            factor,
            mu,
            deviance,
            penalized,
        })
    }

    /// The modified score U*(β) = Σᵢ xᵢ [wᵢ(yᵢ − μᵢ) + hᵢ(½ − μᵢ)], the gradient of ℓ*.
    fn score(&self, s: &State) -> Vec<f64> {
        let (p, r) = (self.p, self.r);
        let mut score = vec![0.0; p];
        let mut inv_x = vec![0.0; p];
        for (i, xi) in self.x.chunks_exact(p).enumerate() {
            if r.wt[i] == 0.0 {
                continue;
            }
            let m = s.mu[i];
            let w = r.wt[i] * (m * (1.0 - m)).max(MU_EPS);
            for (v, row) in inv_x.iter_mut().zip(&s.inverse) {
                *v = row.iter().zip(xi).map(|(a, b)| a * b).sum();
            }
            let quad: f64 = xi.iter().zip(&inv_x).map(|(a, b)| a * b).sum();
            let u = r.wt[i] * (r.y[i] - m) + w * quad * (0.5 - m);
            for (sc, v) in score.iter_mut().zip(xi) {
                *sc += u * v;
            }
        }
        score
    }

    /// Maximises ℓ* from `beta` over every coefficient but `fixed`, which keeps its value.
    /// Returns the estimate, the state there and the number of Newton steps.
    fn maximize(
        &self,
        mut beta: Vec<f64>,
        fixed: Option<usize>,
        max_iterations: usize,
    ) -> Result<(Vec<f64>, State, usize), ModelError> {
        let p = self.p;
        let not_converged = |iterations, deviance| {
            ModelError::NotConverged {
            iterations,
            deviance,
            hint: match fixed {
                None => "the penalised likelihood could not be maximised".into(),
                Some(j) => format!(
                    "the penalised likelihood with `{}` fixed at 0 (its likelihood-ratio test) could not be maximised",
                    self.data.terms[j]
                ),
            },
        }
        };
        let mut current = self
            .state(&beta)
            .ok_or_else(|| not_converged(0, f64::NAN))?;
        for iteration in 1..=max_iterations {
            let mut score = self.score(&current);
            let delta = match fixed {
                None => current.factor.solve(&score),
                Some(j) => {
                    // The Fisher step on the free coefficients: row and column j of XᵀWX
                    // replaced by the unit vector, so that Δⱼ = 0.
                    let mut info = current.info.clone();
                    for k in 0..p {
                        info[j * p + k] = 0.0;
                        info[k * p + j] = 0.0;
                    }
                    info[j * p + j] = 1.0;
                    score[j] = 0.0;
                    SpdFactor::new(&info, p)
                        .ok_or_else(|| not_converged(iteration, current.deviance))?
                        .solve(&score)
                }
            };
            let mut step = 1.0;
            let mut next = None;
            for _ in 0..=MAX_HALVINGS {
                let trial: Vec<f64> = beta.iter().zip(&delta).map(|(b, d)| b + step * d).collect();
                if let Some(s) = self.state(&trial) {
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
                return Ok((beta, current, iteration));
            }
        }
        Err(not_converged(max_iterations, current.deviance))
    }
}

/// Fits a logistic regression by Firth's penalised likelihood (logit link only), with
/// penalised-likelihood-ratio tests of each coefficient.
///
/// # Formula
/// Maximises ℓ*(β) = ℓ(β) + ½ ln det(XᵀWX), W = diag(wᵢ μᵢ(1 − μᵢ)), by the modified score
/// U*(β) = Σᵢ xᵢ [wᵢ(yᵢ − μᵢ) + hᵢ(½ − μᵢ)] = 0 with hᵢ the diagonal of the hat matrix
/// W^½X(XᵀWX)⁻¹XᵀW^½, stepping β ← β + (XᵀWX)⁻¹U* with step-halving on ℓ*. Stops when the
/// largest coefficient change |Δβ|/(|β| + 0.1) is below [`IRLS_COEF_RTOL`]. SEs from
/// (XᵀWX)⁻¹ at the estimate. The test of βⱼ = 0 (logistf's default, Heinze & Schemper 2002)
/// maximises ℓ* again with βⱼ fixed at 0, the penalty still from the full design, and
/// compares 2(ℓ*(β̂) − ℓ*(β̃₍ⱼ₎)) with χ²₁.
///
/// # Errors
/// [`ModelError::RankDeficient`], [`ModelError::Invalid`], [`ModelError::NotConverged`]
/// (also when a restricted fit of a likelihood-ratio test does not converge).
pub fn fit_firth(data: &GlmData) -> Result<FirthFit, ModelError> {
    fit_firth_with(data, &FitControl::default())
}

/// [`fit_firth`] with explicit iteration limits (for the fit and each restricted fit).
///
/// # Errors
/// As [`fit_firth`].
pub fn fit_firth_with(data: &GlmData, control: &FitControl) -> Result<FirthFit, ModelError> {
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
    let problem = Problem { x, p, r: &r, data };
    if problem.state(&vec![0.0; p]).is_none() {
        let mut gram = vec![0.0; p * p];
        for (xi, &w) in x.chunks_exact(p).zip(&r.wt) {
            for j in 0..p {
                for k in 0..p {
                    gram[j * p + k] += w * xi[j] * xi[k];
                }
            }
        }
        let j = first_aliased_column(&gram, p).unwrap_or(p - 1);
        return Err(rank_deficient(x, p, &r, data.terms, j));
    }
    let (beta, state, iterations) = problem.maximize(vec![0.0; p], None, control.max_iterations)?;
    let mut plr_statistics = Vec::with_capacity(p);
    for j in 0..p {
        let mut start = beta.clone();
        start[j] = 0.0;
        let (_, restricted, _) = problem.maximize(start, Some(j), control.max_iterations)?;
        plr_statistics.push((2.0 * (state.penalized - restricted.penalized)).max(0.0));
    }
    Ok(finish(
        data,
        beta,
        state,
        iterations,
        n_obs,
        &r,
        plr_statistics,
    ))
}

fn finish(
    data: &GlmData,
    coefficients: Vec<f64>,
    s: State,
    iterations: usize,
    n_obs: usize,
    r: &Response,
    plr_statistics: Vec<f64>,
) -> FirthFit {
    let (std_errors, z, p_values) = wald(&coefficients, &s.inverse);
    let normal = Normal::standard();
    // For χ²₁, P(X ≥ s) = P(|Z| ≥ √s) = 2Φ(−√s), exact and accurate in the far tail.
    let plr_p_values = plr_statistics
        .iter()
        .map(|s| 2.0 * normal.cdf(-s.sqrt()))
        .collect();
    FirthFit {
        plr_statistics,
        plr_p_values,
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
