//! Maximum likelihood for a zero-truncated count GLM (log link, offset) by Newton–Raphson on
//! (β, ln α) with the exact gradient and Hessian of [`crate::model::truncated`], step-halving,
//! and a scale-free stopping rule; standard errors from the inverse observed information in
//! (β, α). `docs/ingrowth.md` ("Fitting the count part") explains each choice.

use ndarray::{ArrayView2, CowArray, Ix2};
use serde::Serialize;

use super::glm::wald;
use super::linalg::{first_aliased_column, SpdFactor};
use super::truncated::{ln_count_factorial, nb_row, poisson_row, CountFamily, RowTerms};
use super::ModelError;
use crate::tolerance::{NEWTON_MAX_ITERATIONS, NEWTON_STEP_SE_TOL};

/// Step-halvings tried before a Newton step is given up.
const MAX_HALVINGS: usize = 40;
/// ln α is kept inside ±this during the search (α from 1e-13 to 3e13).
const LN_ALPHA_BOUND: f64 = 30.0;
/// Dispersions tried for the starting α; the one with the highest likelihood at the
/// truncated-Poisson β is the start.
const ALPHA_GRID: [f64; 9] = [1e-3, 0.01, 0.05, 0.1, 0.3, 1.0, 3.0, 10.0, 30.0];
/// The fitted α below which the data show no overdispersion worth a parameter.
const ALPHA_FLOOR: f64 = 1e-8;

/// The positive rows of a count fit: design, counts (each ≥ 1) and the offset ln(area·L).
#[derive(Debug, Clone)]
pub struct CountData<'a> {
    /// The n×p design matrix.
    pub x: ArrayView2<'a, f64>,
    /// Column names.
    pub terms: &'a [String],
    /// Counts, each at least 1.
    pub y: &'a [u64],
    /// The offset added to the linear predictor.
    pub offset: &'a [f64],
}

/// A fitted zero-truncated count model. It holds no data.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct TruncatedFit {
    /// The distribution.
    pub family: CountFamily,
    /// Term names, in coefficient order.
    pub terms: Vec<String>,
    /// Estimates of β (log link).
    pub coefficients: Vec<f64>,
    /// NB2 dispersion α (None for the Poisson).
    pub alpha: Option<f64>,
    /// SE of α from the inverse observed information.
    pub alpha_std_error: Option<f64>,
    /// Inverse observed information in (β, α), α last for NB2.
    pub covariance: Vec<Vec<f64>>,
    /// √ of the covariance diagonal for β.
    pub std_errors: Vec<f64>,
    /// Wald statistics b / SE.
    pub z: Vec<f64>,
    /// Two-sided normal p-values.
    pub p_values: Vec<f64>,
    /// ℓ at the estimate (with −ln y!).
    pub log_likelihood: f64,
    /// −2ℓ + 2k, k = p (+1 for α).
    pub aic: f64,
    /// −2ℓ + k ln n.
    pub bic: f64,
    /// Newton iterations of the final fit (after the truncated-Poisson start for NB2).
    pub iterations: usize,
    /// Rows (all with a positive count).
    pub n_obs: usize,
    /// Things the user should know.
    pub warnings: Vec<String>,
}

impl TruncatedFit {
    /// The number of estimated parameters (β and, for NB2, α).
    pub fn n_params(&self) -> usize {
        self.coefficients.len() + usize::from(self.alpha.is_some())
    }

    /// Names of the covariance rows: the terms, then `alpha` for NB2.
    pub fn covariance_names(&self) -> Vec<String> {
        let mut v = self.terms.clone();
        if self.alpha.is_some() {
            v.push("alpha".into());
        }
        v
    }
}

/// The data in contiguous row-major form with ln y! precomputed.
struct Problem<'a> {
    x: CowArray<'a, f64, Ix2>,
    p: usize,
    y: &'a [u64],
    ln_fact: Vec<f64>,
    offset: &'a [f64],
    family: CountFamily,
}

/// ℓ, gradient and Hessian in (β, α) (α last when present), Hessian row-major.
struct Evaluation {
    ll: f64,
    grad: Vec<f64>,
    hess: Vec<f64>,
}

impl Problem<'_> {
    fn k(&self) -> usize {
        self.p + usize::from(self.family.has_alpha())
    }

    fn row(&self, i: usize, eta: f64, alpha: f64) -> RowTerms {
        match self.family {
            CountFamily::NegativeBinomial => nb_row(self.y[i], eta, alpha, self.ln_fact[i]),
            CountFamily::Poisson => poisson_row(self.y[i], eta, self.ln_fact[i]),
        }
    }

    fn eta(&self, i: usize, beta: &[f64]) -> f64 {
        let row = self.x.row(i);
        row.iter().zip(beta).map(|(a, b)| a * b).sum::<f64>() + self.offset[i]
    }

    /// ℓ alone (for step-halving).
    fn log_likelihood(&self, beta: &[f64], alpha: f64) -> f64 {
        (0..self.y.len())
            .map(|i| self.row(i, self.eta(i, beta), alpha).ll)
            .sum()
    }

    /// ℓ with its exact gradient and Hessian in (β, α).
    fn evaluate(&self, beta: &[f64], alpha: f64) -> Evaluation {
        let (p, k) = (self.p, self.k());
        let mut grad = vec![0.0; k];
        let mut hess = vec![0.0; k * k];
        let mut ll = 0.0;
        for i in 0..self.y.len() {
            let t = self.row(i, self.eta(i, beta), alpha);
            ll += t.ll;
            let xi = self.x.row(i);
            for a in 0..p {
                grad[a] += xi[a] * t.d_eta;
                for b in 0..=a {
                    hess[a * k + b] += xi[a] * xi[b] * t.d_eta_eta;
                }
                if k > p {
                    hess[p * k + a] += xi[a] * t.d_eta_alpha;
                }
            }
            if k > p {
                grad[p] += t.d_alpha;
                hess[p * k + p] += t.d_alpha_alpha;
            }
        }
        for a in 0..k {
            for b in 0..a {
                hess[b * k + a] = hess[a * k + b];
            }
        }
        Evaluation { ll, grad, hess }
    }
}

/// Fits a zero-truncated count GLM with log link and offset by maximum likelihood.
///
/// The Poisson fit starts from least squares of ln y − offset on X; the NB2 fit starts from the
/// truncated-Poisson estimate with the best α of a small grid, then runs Newton–Raphson on
/// (β, ln α). Newton stops after a full step shorter than
/// [`NEWTON_STEP_SE_TOL`] standard errors in every parameter.
///
/// # Errors
/// [`ModelError::Invalid`] for inconsistent shapes, fewer rows than parameters, a zero count
/// or counts that are all 1 (no maximum exists); [`ModelError::RankDeficient`] naming a
/// collinear term; [`ModelError::NotConverged`] when Newton does not converge, or α tends to 0
/// (refit with the Poisson).
pub fn fit_truncated(data: &CountData, family: CountFamily) -> Result<TruncatedFit, ModelError> {
    let (n, p) = data.x.dim();
    if data.y.len() != n || data.offset.len() != n || data.terms.len() != p {
        return Err(ModelError::Invalid(format!(
            "count part: {n} design rows, {} counts, {} offsets, {} names for {p} columns",
            data.y.len(),
            data.offset.len(),
            data.terms.len()
        )));
    }
    let k = p + usize::from(family.has_alpha());
    if p == 0 || n <= k {
        return Err(ModelError::Invalid(format!(
            "the count part has {n} plot periods with ingrowth, too few to estimate {k} parameters"
        )));
    }
    if data.y.contains(&0) {
        return Err(ModelError::Invalid(
            "the count part takes positive counts only".into(),
        ));
    }
    if data.y.iter().all(|&y| y == 1) {
        return Err(ModelError::Invalid(
            "every plot period with ingrowth has exactly one new tree, so the count given any has no maximum-likelihood estimate (the mean tends to 0); model P(any) alone or pool longer periods".into(),
        ));
    }
    let x = data.x.as_standard_layout();
    check_rank(&x, data.terms)?;
    let ln_fact = data.y.iter().map(|&y| ln_count_factorial(y)).collect();
    let poisson = Problem {
        x,
        p,
        y: data.y,
        ln_fact,
        offset: data.offset,
        family: CountFamily::Poisson,
    };
    let start = least_squares_start(&poisson)?;
    let (beta, _, poisson_iterations) = newton(&poisson, start, 0.0)?;
    let problem = Problem { family, ..poisson };
    let (beta, alpha, iterations) = match family {
        CountFamily::Poisson => (beta, 0.0, poisson_iterations),
        CountFamily::NegativeBinomial => {
            let alpha = ALPHA_GRID
                .iter()
                .copied()
                .map(|a| (a, problem.log_likelihood(&beta, a)))
                .filter(|(_, ll)| ll.is_finite())
                .fold((1.0, f64::NEG_INFINITY), |best, c| {
                    if c.1 > best.1 {
                        c
                    } else {
                        best
                    }
                })
                .0;
            newton(&problem, beta, alpha)?
        }
    };
    finish(&problem, data.terms, beta, alpha, iterations)
}

/// Refuse a design whose columns are collinear over the positive rows.
fn check_rank(x: &CowArray<f64, Ix2>, terms: &[String]) -> Result<(), ModelError> {
    let gram = x.t().dot(x);
    let p = gram.nrows();
    let flat: Vec<f64> = gram.iter().copied().collect();
    match first_aliased_column(&flat, p) {
        None => Ok(()),
        Some(j) => {
            let term = terms[j].clone();
            Err(ModelError::RankDeficient {
                message: format!("term `{term}` is constant or a linear combination of the other terms over the plot periods with ingrowth, so the count part cannot estimate it; drop it"),
                term,
            })
        }
    }
}

/// β minimising ‖ln y − offset − Xβ‖ (the Poisson GLM's usual start η = ln y).
fn least_squares_start(problem: &Problem) -> Result<Vec<f64>, ModelError> {
    let target: ndarray::Array1<f64> = problem
        .y
        .iter()
        .zip(problem.offset)
        .map(|(&y, o)| (y as f64).ln() - o)
        .collect();
    let names: Vec<String> = (0..problem.p).map(|j| format!("column {j}")).collect();
    let ls = super::linalg::least_squares_qr(problem.x.view(), target.view(), &names)?;
    Ok(ls.coefficients)
}

/// Newton–Raphson on θ = (β, ln α) (β alone for the Poisson). Returns (β, α, iterations).
fn newton(
    problem: &Problem,
    mut beta: Vec<f64>,
    mut alpha: f64,
) -> Result<(Vec<f64>, f64, usize), ModelError> {
    let p = problem.p;
    let nb = problem.family.has_alpha();
    let mut last_ll = f64::NAN;
    for iteration in 1..=NEWTON_MAX_ITERATIONS {
        let ev = problem.evaluate(&beta, alpha);
        last_ll = ev.ll;
        let (grad, info) = tau_scale(ev, alpha, p, nb);
        let k = grad.len();
        let (step, exact) = newton_step(&info, &grad, k);
        let se_step = if exact {
            SpdFactor::new(&info, k).map(|f| {
                let inv = f.inverse();
                (0..k)
                    .map(|j| step[j].abs() / inv[j][j].sqrt())
                    .fold(0.0, f64::max)
            })
        } else {
            None
        };
        let small = se_step.is_some_and(|s| s < NEWTON_STEP_SE_TOL);
        let mut t = 1.0;
        let mut accepted = false;
        let mut candidate = (beta.clone(), alpha);
        for _ in 0..=MAX_HALVINGS {
            let b: Vec<f64> = beta.iter().zip(&step).map(|(b, d)| b + t * d).collect();
            let a = if nb {
                (alpha.ln() + t * step[p])
                    .clamp(-LN_ALPHA_BOUND, LN_ALPHA_BOUND)
                    .exp()
            } else {
                0.0
            };
            let ll = problem.log_likelihood(&b, a);
            if ll.is_finite() && ll >= last_ll - 1e-12 * last_ll.abs().max(1.0) {
                candidate = (b, a);
                accepted = true;
                break;
            }
            t *= 0.5;
        }
        if !accepted {
            if small {
                return Ok((beta, alpha, iteration));
            }
            return Err(not_converged(
                iteration,
                last_ll,
                alpha,
                nb,
                "no step along the Newton direction raised the log-likelihood",
            ));
        }
        (beta, alpha) = candidate;
        if small && t == 1.0 {
            return Ok((beta, alpha, iteration));
        }
    }
    Err(not_converged(
        NEWTON_MAX_ITERATIONS,
        last_ll,
        alpha,
        nb,
        "the iteration limit was reached",
    ))
}

/// Gradient and observed information (−Hessian) in (β, τ = ln α) from those in (β, α).
///
/// # Formula
/// ∂ℓ/∂τ = α ∂ℓ/∂α, ∂²ℓ/∂τ² = α² ∂²ℓ/∂α² + α ∂ℓ/∂α, ∂²ℓ/∂β∂τ = α ∂²ℓ/∂β∂α.
fn tau_scale(ev: Evaluation, alpha: f64, p: usize, nb: bool) -> (Vec<f64>, Vec<f64>) {
    let mut grad = ev.grad;
    let mut info: Vec<f64> = ev.hess.iter().map(|h| -h).collect();
    if nb {
        let k = p + 1;
        let g_alpha = grad[p];
        grad[p] = alpha * g_alpha;
        for a in 0..p {
            info[p * k + a] *= alpha;
            info[a * k + p] *= alpha;
        }
        info[p * k + p] = alpha * alpha * info[p * k + p] - alpha * g_alpha;
    }
    (grad, info)
}

/// The Newton step solving (I) δ = g, with the information scaled to unit diagonal; where it is
/// not positive definite (far from the maximum), a Levenberg–Marquardt step (I + λ diag I) δ = g
/// with the smallest λ = 10^k that makes it so. Returns (δ, whether it is the exact step).
fn newton_step(info: &[f64], grad: &[f64], k: usize) -> (Vec<f64>, bool) {
    let d: Vec<f64> = (0..k)
        .map(|j| {
            let v = info[j * k + j].abs().sqrt();
            if v > 0.0 && v.is_finite() {
                v
            } else {
                1.0
            }
        })
        .collect();
    let scaled: Vec<f64> = (0..k * k)
        .map(|ij| info[ij] / (d[ij / k] * d[ij % k]))
        .collect();
    let g: Vec<f64> = grad.iter().zip(&d).map(|(g, d)| g / d).collect();
    let mut lambda = 0.0;
    loop {
        let mut m = scaled.clone();
        for j in 0..k {
            m[j * k + j] += lambda;
        }
        if let Some(f) = SpdFactor::new(&m, k) {
            let s = f.solve(&g);
            return (
                s.iter().zip(&d).map(|(s, d)| s / d).collect(),
                lambda == 0.0,
            );
        }
        lambda = if lambda == 0.0 { 1e-4 } else { lambda * 10.0 };
        if lambda > 1e12 {
            // Information not finite: a tiny gradient step lets step-halving decide.
            return (g.iter().zip(&d).map(|(g, d)| 1e-6 * g / d).collect(), false);
        }
    }
}

fn not_converged(iterations: usize, ll: f64, alpha: f64, nb: bool, why: &str) -> ModelError {
    let hint = if nb && alpha < 1e-6 {
        format!("{why}; α tends to 0 (no overdispersion beyond the Poisson): refit with --counts poisson")
    } else {
        format!("{why}; check the count part's terms for extreme values or near-collinearity")
    };
    ModelError::NotConverged {
        iterations,
        deviance: -2.0 * ll,
        hint: format!("count part: {hint}"),
    }
}

/// Covariance, Wald tests and the fit statistics at the estimate.
fn finish(
    problem: &Problem,
    terms: &[String],
    beta: Vec<f64>,
    alpha: f64,
    iterations: usize,
) -> Result<TruncatedFit, ModelError> {
    let nb = problem.family.has_alpha();
    if nb && alpha < ALPHA_FLOOR {
        return Err(not_converged(
            iterations,
            problem.log_likelihood(&beta, alpha),
            alpha,
            nb,
            &format!("the dispersion α fell below {ALPHA_FLOOR:e}"),
        ));
    }
    let ev = problem.evaluate(&beta, alpha);
    let k = problem.k();
    let info: Vec<f64> = ev.hess.iter().map(|h| -h).collect();
    let covariance = SpdFactor::new(&info, k)
        .ok_or_else(|| ModelError::NotConverged {
            iterations,
            deviance: -2.0 * ev.ll,
            hint: "count part: the observed information is not positive definite at the estimate (not a maximum); check for near-collinear terms".into(),
        })?
        .inverse();
    let p = problem.p;
    let beta_cov: Vec<Vec<f64>> = covariance.iter().take(p).map(|r| r[..p].to_vec()).collect();
    let (std_errors, z, p_values) = wald(&beta, &beta_cov);
    let n = problem.y.len();
    let kf = k as f64;
    Ok(TruncatedFit {
        family: problem.family,
        terms: terms.to_vec(),
        coefficients: beta,
        alpha: nb.then_some(alpha),
        alpha_std_error: nb.then(|| covariance[p][p].sqrt()),
        covariance,
        std_errors,
        z,
        p_values,
        log_likelihood: ev.ll,
        aic: -2.0 * ev.ll + 2.0 * kf,
        bic: -2.0 * ev.ll + kf * (n as f64).ln(),
        iterations,
        n_obs: n,
        warnings: Vec::new(),
    })
}

/// The log-likelihood of a zero-truncated count model at given parameters (α ignored for the
/// Poisson), for checking the objective without an optimiser.
///
/// # Errors
/// [`ModelError::Invalid`] for inconsistent shapes or a zero count.
pub fn truncated_log_likelihood(
    data: &CountData,
    family: CountFamily,
    beta: &[f64],
    alpha: f64,
) -> Result<f64, ModelError> {
    let (n, p) = data.x.dim();
    if data.y.len() != n || data.offset.len() != n || beta.len() != p || data.y.contains(&0) {
        return Err(ModelError::Invalid(
            "count part: inconsistent shapes or a zero count".into(),
        ));
    }
    let problem = Problem {
        x: data.x.as_standard_layout(),
        p,
        y: data.y,
        ln_fact: data.y.iter().map(|&y| ln_count_factorial(y)).collect(),
        offset: data.offset,
        family,
    };
    Ok(problem.log_likelihood(beta, alpha))
}
