//! Maximum likelihood for a zero-truncated count GLM (log link, offset) by Newton–Raphson on
//! (β, ln α) with the exact gradient and Hessian of [`crate::model::truncated`], step-halving,
//! and a scale-free stopping rule; standard errors from the inverse observed information in
//! (β, α). `docs/ingrowth.md` ("Fitting the count part") explains each choice.

use ndarray::{ArrayView2, CowArray, Ix2};
use serde::Serialize;

use super::glm::wald;
use super::linalg::{first_aliased_column, SpdFactor};
use super::truncated::{ln_count_factorial, CountFamily};
use super::ModelError;

mod newton;

use newton::{newton, not_converged, Problem, ALPHA_FLOOR};

/// Dispersions tried for the starting α; the one with the highest likelihood at the
/// truncated-Poisson β is the start.
const ALPHA_GRID: [f64; 9] = [1e-3, 0.01, 0.05, 0.1, 0.3, 1.0, 3.0, 10.0, 30.0];

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

/// Fits a zero-truncated count GLM with log link and offset by maximum likelihood.
///
/// The Poisson fit starts from least squares of ln y − offset on X; the NB2 fit starts from the
/// truncated-Poisson estimate with the best α of a small grid, then runs Newton–Raphson on
/// (β, ln α). Newton stops after a full step shorter than
/// [`NEWTON_STEP_SE_TOL`](crate::tolerance::NEWTON_STEP_SE_TOL) standard errors in every parameter.
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
