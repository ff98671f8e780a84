//! The binomial generalised linear model, fitted by iteratively reweighted least squares
//! (links logit, probit, cloglog; prior weights; offsets; 0/1 or successes/trials responses).

use ndarray::{Array1, ArrayView1, ArrayView2, CowArray, Ix2};
use serde::Serialize;
use statrs::distribution::{ContinuousCDF, Normal};

use super::irls::{unit_deviance, IrlsError, Problem, Response};
use super::linalg::{first_aliased_column, SpdFactor};
use super::link::Link;
use super::separation::{self, Separation};
use super::ModelError;
use crate::tolerance::MAX_ITERATIONS;

mod response;

pub(crate) use response::{log_likelihood, prepare_response};

/// The data of one binomial GLM fit. Rows whose weight (prior weight × trials) is zero are
/// left out of every sum and count.
#[derive(Debug, Clone)]
pub struct GlmData<'a> {
    /// The n×p design matrix, columns in term order (an intercept is a column of ones).
    pub x: ArrayView2<'a, f64>,
    /// The name of each column of `x`, e.g. `(intercept)`, `dbh`, `treatment=b`.
    pub terms: &'a [String],
    /// The response: 0/1 per row, or the number of successes when `trials` is given.
    pub y: ArrayView1<'a, f64>,
    /// Number of trials per row for successes/trials data.
    pub trials: Option<ArrayView1<'a, f64>>,
    /// Prior (frequency) weights, non-negative.
    pub weights: Option<ArrayView1<'a, f64>>,
    /// A known term added to the linear predictor.
    pub offset: Option<ArrayView1<'a, f64>>,
}

/// Options of a GLM fit.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Default)]
pub struct GlmOptions {
    /// The link function.
    pub link: Link,
}

/// Limits of an iterative fit: IRLS ([`fit_glm_with`]), Firth's Newton iterations
/// ([`crate::model::firth::fit_firth_with`]) and the annualised Newton fit
/// ([`crate::model::annualized::fit_annualized_with`]).
///
/// # Examples
/// ```
/// use stemcast::model::glm::FitControl;
/// let control = FitControl::default().max_iterations(10);
/// assert_eq!(control.max_iterations, 10);
/// assert_eq!(FitControl::default().max_iterations, stemcast::tolerance::MAX_ITERATIONS);
/// ```
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub struct FitControl {
    /// Iterations (weighted least-squares solves or Newton steps) before the fit gives up with
    /// [`ModelError::NotConverged`]; default [`MAX_ITERATIONS`].
    pub max_iterations: usize,
}

impl Default for FitControl {
    fn default() -> Self {
        FitControl {
            max_iterations: MAX_ITERATIONS,
        }
    }
}

impl FitControl {
    /// The same control with at most `n` iterations.
    pub fn max_iterations(self, n: usize) -> Self {
        FitControl { max_iterations: n }
    }
}

/// A fitted binomial GLM: estimates, their covariance and the fit statistics. It holds no data.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct GlmFit {
    /// The link used.
    pub link: Link,
    /// Term names, in coefficient order.
    pub terms: Vec<String>,
    /// Maximum-likelihood estimates.
    pub coefficients: Vec<f64>,
    /// Inverse expected (Fisher) information at the estimate, dispersion 1.
    pub covariance: Vec<Vec<f64>>,
    /// √ of the covariance diagonal.
    pub std_errors: Vec<f64>,
    /// Wald statistics b / SE.
    pub z: Vec<f64>,
    /// Two-sided normal p-values 2(1 − Φ(|z|)).
    pub p_values: Vec<f64>,
    /// Residual deviance.
    pub deviance: f64,
    /// Deviance of the intercept-only model fitted with the offset (without an intercept
    /// column: of η = offset, as R's `glm`).
    pub null_deviance: f64,
    /// n_obs − number of coefficients.
    pub df_residual: usize,
    /// n_obs − 1 with an intercept column, else n_obs.
    pub df_null: usize,
    /// The full binomial log-likelihood (with Σ ln C(n, y) for successes/trials data).
    pub log_likelihood: f64,
    /// −2ℓ + 2k.
    pub aic: f64,
    /// −2ℓ + k ln n_obs.
    pub bic: f64,
    /// IRLS iterations (weighted least-squares solves).
    pub iterations: usize,
    /// Whether IRLS met both stopping rules.
    pub converged: bool,
    /// Rows with non-zero weight.
    pub n_obs: usize,
    /// Things the user should know about the fit (step-halving, fitted probabilities at 0 or 1).
    pub warnings: Vec<String>,
}

impl GlmFit {
    /// The linear predictor η = Xβ (+ offset) for new rows, columns in the fit's term order.
    pub fn linear_predictor(
        &self,
        x: ArrayView2<f64>,
        offset: Option<ArrayView1<f64>>,
    ) -> Result<Array1<f64>, ModelError> {
        if x.ncols() != self.coefficients.len() {
            return Err(ModelError::Invalid(format!(
                "the model has {} coefficients but the design has {} columns",
                self.coefficients.len(),
                x.ncols()
            )));
        }
        if let Some(o) = offset.filter(|o| o.len() != x.nrows()) {
            return Err(ModelError::Invalid(format!(
                "offset has {} values for {} rows",
                o.len(),
                x.nrows()
            )));
        }
        let beta = Array1::from(self.coefficients.clone());
        let mut eta = x.dot(&beta);
        if let Some(o) = offset {
            eta += &o;
        }
        Ok(eta)
    }

    /// The fitted probabilities μ = g⁻¹(η) for new rows.
    pub fn fitted(
        &self,
        x: ArrayView2<f64>,
        offset: Option<ArrayView1<f64>>,
    ) -> Result<Array1<f64>, ModelError> {
        Ok(self
            .linear_predictor(x, offset)?
            .mapv(|e| self.link.inverse(e)))
    }
}

fn invalid(message: String) -> ModelError {
    ModelError::Invalid(message)
}

/// Index of a column of ones (over rows with non-zero weight), the model's intercept.
fn intercept_column(x: &[f64], p: usize, r: &Response) -> Option<usize> {
    (0..p).find(|&j| {
        x.chunks_exact(p)
            .zip(&r.wt)
            .all(|(row, &w)| w == 0.0 || row[j] == 1.0)
    })
}

pub(crate) fn rank_deficient(
    x: &[f64],
    p: usize,
    r: &Response,
    terms: &[String],
    j: usize,
) -> ModelError {
    let mut values = x.chunks_exact(p).zip(&r.wt).filter(|(_, &w)| w > 0.0);
    let first = values.next().map(|(row, _)| row[j]);
    let constant = values.all(|(row, _)| Some(row[j]) == first);
    let term = terms[j].clone();
    let message = match first {
        Some(v) if constant && v == 0.0 => {
            format!("term `{term}` is zero for every record used; drop it")
        }
        Some(v) if constant && intercept_column(x, p, r).is_some_and(|i| i != j) => format!(
            "term `{term}` is constant ({v}) over the records used, which the intercept already covers; drop it"
        ),
        _ if constant => format!("term `{term}` is constant over the records used and aliases another term; drop one of them"),
        _ => format!("term `{term}` is a linear combination of the other terms (collinear); drop it"),
    };
    ModelError::RankDeficient { term, message }
}

/// Fits a binomial GLM by IRLS (`docs/maths.md#irls`), refusing data without a maximum-likelihood
/// estimate.
///
/// Starts from μ = (w·y + ½)/(w + 1), stops when the relative deviance change is below
/// [`crate::tolerance::IRLS_DEVIANCE_RTOL`] and the largest relative coefficient change
/// (|Δβ|/(|β| + 0.1)) below [`crate::tolerance::IRLS_COEF_RTOL`], halving steps that increase the
/// deviance. Separation is checked as the [`separation`] module documents.
///
/// # Errors
/// [`ModelError::Invalid`] for inconsistent shapes or values, [`ModelError::RankDeficient`]
/// naming an aliased term, [`ModelError::Separation`] when the MLE does not exist, and
/// [`ModelError::NotConverged`] after [`crate::tolerance::MAX_ITERATIONS`] iterations.
pub fn fit_glm(data: &GlmData, opts: &GlmOptions) -> Result<GlmFit, ModelError> {
    fit_glm_with(data, opts, &FitControl::default())
}

/// [`fit_glm`] with explicit iteration limits.
///
/// # Errors
/// As [`fit_glm`]; [`ModelError::NotConverged`] names the iteration count when IRLS stops at
/// `control.max_iterations` without meeting the stopping rules and no separation explains it.
pub fn fit_glm_with(
    data: &GlmData,
    opts: &GlmOptions,
    control: &FitControl,
) -> Result<GlmFit, ModelError> {
    let response = prepare_response(data)?;
    let n_obs = response.wt.iter().filter(|&&w| w > 0.0).count();
    let p = data.x.ncols();
    if p == 0 || n_obs <= p {
        return Err(invalid(format!(
            "{n_obs} records with non-zero weight cannot estimate {p} coefficients"
        )));
    }
    let x: CowArray<f64, Ix2> = data.x.as_standard_layout();
    let xs = x
        .as_slice()
        .ok_or_else(|| invalid("design matrix layout".into()))?;
    let offset = data.offset.map(|o| o.to_vec());
    let problem = Problem {
        x: xs,
        p,
        response: &response,
        offset: offset.as_deref(),
        link: opts.link,
    };
    let start = problem.pass(None);
    if let Some(j) = first_aliased_column(&start.xtwx, p) {
        return Err(rank_deficient(xs, p, &response, data.terms, j));
    }
    let separation_error = |s: Separation| ModelError::Separation {
        kind: s.kind.as_str().to_string(),
        terms: s.terms,
    };
    if n_obs <= separation::ALWAYS_CHECK_MAX_ROWS {
        if let Some(s) = separation::detect(xs, p, &response, data.terms) {
            return Err(separation_error(s));
        }
    }
    let fit = problem.run_limited(start, control.max_iterations);
    let suspicious = match &fit {
        Ok(f) => !f.converged || f.last.extreme,
        Err(_) => true,
    };
    if suspicious && n_obs > separation::ALWAYS_CHECK_MAX_ROWS {
        if let Some(s) = separation::detect(xs, p, &response, data.terms) {
            return Err(separation_error(s));
        }
    }
    let fit = fit.map_err(
        |IrlsError::Singular { iterations }| ModelError::NotConverged {
            iterations,
            deviance: f64::NAN,
            hint: "the information matrix became singular; check for near-collinear terms".into(),
        },
    )?;
    if !fit.converged {
        let hint = if fit.iterations >= control.max_iterations {
            format!(
                "the limit of {} iterations was reached: raise it (--max-iterations), check the data for extreme values, or try another link",
                control.max_iterations
            )
        } else {
            "no step along the IRLS direction lowered the deviance; check the data for extreme values or try another link".into()
        };
        return Err(ModelError::NotConverged {
            iterations: fit.iterations,
            deviance: fit.last.deviance,
            hint,
        });
    }
    let covariance = SpdFactor::new(&fit.last.xtwx, p)
        .ok_or_else(|| rank_deficient(xs, p, &response, data.terms, p - 1))?
        .inverse();
    let intercept = intercept_column(xs, p, &response);
    let null_deviance = null_deviance(&problem, intercept)?;
    let log_likelihood = log_likelihood(data, &response, fit.last.deviance);
    let mut warnings = Vec::new();
    if fit.halved_iterations > 0 {
        warnings.push(format!(
            "the IRLS step was halved in {} iteration(s) because the deviance increased",
            fit.halved_iterations
        ));
    }
    if fit.last.extreme {
        warnings.push(
            "fitted probabilities numerically 0 or 1 occurred (no separation was found)".into(),
        );
    }
    let (std_errors, z, p_values) = wald(&fit.beta, &covariance);
    let k = p as f64;
    Ok(GlmFit {
        link: opts.link,
        terms: data.terms.to_vec(),
        coefficients: fit.beta,
        covariance,
        std_errors,
        z,
        p_values,
        deviance: fit.last.deviance,
        null_deviance,
        df_residual: n_obs - p,
        df_null: n_obs - usize::from(intercept.is_some()),
        log_likelihood,
        aic: -2.0 * log_likelihood + 2.0 * k,
        bic: -2.0 * log_likelihood + k * (n_obs as f64).ln(),
        iterations: fit.iterations,
        converged: fit.converged,
        n_obs,
        warnings,
    })
}

/// Deviance of the intercept-only model with the offset; without an intercept, of η = offset.
/// Without an offset the intercept-only estimate is the weighted mean μ̂ = Σ wy / Σ w.
fn null_deviance(problem: &Problem, intercept: Option<usize>) -> Result<f64, ModelError> {
    let r = problem.response;
    if intercept.is_some() && problem.offset.is_none() {
        let total: f64 = r.wt.iter().sum();
        let mu = r.wt.iter().zip(&r.y).map(|(w, y)| w * y).sum::<f64>() / total;
        let (mut ones, mut zeros, mut other) = (0.0, 0.0, 0.0);
        for (&w, &y) in r.wt.iter().zip(&r.y).filter(|(&w, _)| w > 0.0) {
            match y {
                1.0 => ones += w,
                0.0 => zeros += w,
                _ => other += w * unit_deviance(y, mu),
            }
        }
        return Ok(-2.0 * (ones * mu.ln() + zeros * (-mu).ln_1p()) + other);
    }
    let n = r.wt.len();
    let ones = vec![1.0; n];
    let null = Problem {
        x: &ones,
        p: 1,
        ..*problem
    };
    match intercept {
        Some(_) => null
            .run(null.pass(None))
            .map(|r| r.last.deviance)
            .map_err(|_| invalid("the intercept-only model cannot be fitted".into())),
        None => Ok(null.pass(Some(&[0.0])).deviance),
    }
}

/// Standard errors, Wald statistics and two-sided normal p-values from a covariance.
///
/// # Formula
/// SEⱼ = √Vⱼⱼ, zⱼ = bⱼ / SEⱼ, pⱼ = 2(1 − Φ(|zⱼ|)) computed as 2Φ(−|zⱼ|).
pub(crate) fn wald(
    coefficients: &[f64],
    covariance: &[Vec<f64>],
) -> (Vec<f64>, Vec<f64>, Vec<f64>) {
    let std_errors: Vec<f64> = (0..coefficients.len())
        .map(|j| covariance[j][j].sqrt())
        .collect();
    let z: Vec<f64> = coefficients
        .iter()
        .zip(&std_errors)
        .map(|(b, s)| b / s)
        .collect();
    let normal = Normal::standard();
    let p_values = z.iter().map(|z| 2.0 * normal.cdf(-z.abs())).collect();
    (std_errors, z, p_values)
}
