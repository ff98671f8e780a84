//! The iteratively reweighted least squares engine behind [`crate::model::glm::fit_glm`].
//!
//! Each iteration is one pass over the rows of the contiguous row-major design, in blocks of
//! 128 rows (see `pass`): the linear predictor, μ, the deviance and the lower triangle of XᵀWX
//! and XᵀWz are accumulated together, with no n-sized temporaries and nothing allocated per row.

mod blocked;
mod pass;

pub(crate) use blocked::weighted_cross_products;

use super::linalg::SpdFactor;
use super::link::Link;
use crate::tolerance::{IRLS_COEF_RTOL, IRLS_DEVIANCE_RTOL, MAX_ITERATIONS};

/// Step-halving gives up after this many halvings; the fit then stops unconverged.
const MAX_HALVINGS: usize = 30;

/// The response in proportion form: `y` = successes / trials and `wt` = prior weight × trials.
#[derive(Debug, Clone)]
pub struct Response {
    /// Observed proportion of successes per row, in [0, 1].
    pub y: Vec<f64>,
    /// Total weight of the row (prior weight × number of trials); 0 leaves the row out.
    pub wt: Vec<f64>,
    /// True when every proportion is 0 or 1 (enables the logit fast path).
    pub binary: bool,
    /// True when every weight is 1 (the passes then read no weights).
    pub unit_weights: bool,
}

impl Response {
    /// Builds the response, noting whether every proportion is 0 or 1 and every weight 1.
    pub fn new(y: Vec<f64>, wt: Vec<f64>) -> Self {
        let binary = y.iter().fold(true, |ok, &v| ok & (v == 0.0 || v == 1.0));
        let unit_weights = wt.iter().fold(true, |ok, &w| ok & (w == 1.0));
        Response {
            y,
            wt,
            binary,
            unit_weights,
        }
    }
}

/// What one pass over the rows produces.
#[derive(Debug, Clone)]
pub struct Pass {
    /// The binomial deviance at the coefficients of the pass.
    pub deviance: f64,
    /// XᵀWX (full p×p, row-major) with the working weights of the pass.
    pub xtwx: Vec<f64>,
    /// XᵀWz with the working response of the pass (offset removed).
    pub xtwz: Vec<f64>,
    /// Whether some row with non-zero weight has a fitted probability within
    /// [`EXTREME_MU`](crate::model::separation::EXTREME_MU) of 0 or 1 (false in the start pass).
    pub extreme: bool,
}

/// The outcome of the IRLS loop.
#[derive(Debug, Clone)]
pub struct IrlsResult {
    /// Estimated coefficients.
    pub beta: Vec<f64>,
    /// The pass at the estimate: deviance and Fisher information XᵀWX there.
    pub last: Pass,
    /// Number of weighted least-squares solves.
    pub iterations: usize,
    /// Whether both stopping rules were met.
    pub converged: bool,
    /// Iterations in which the step had to be halved because the deviance increased.
    pub halved_iterations: usize,
}

/// Why IRLS could not continue.
#[derive(Debug, Clone, PartialEq)]
pub enum IrlsError {
    /// XᵀWX is not positive definite at some iteration.
    Singular {
        /// Weighted least-squares solves completed before it.
        iterations: usize,
    },
}

/// The unit binomial deviance 2[y ln(y/μ) + (1−y) ln((1−y)/(1−μ))], with 0·ln 0 = 0.
#[inline]
pub fn unit_deviance(y: f64, mu: f64) -> f64 {
    if y == 1.0 {
        -2.0 * mu.ln()
    } else if y == 0.0 {
        -2.0 * (-mu).ln_1p()
    } else {
        2.0 * (y * (y / mu).ln() + (1.0 - y) * ((1.0 - y) / (1.0 - mu)).ln())
    }
}

/// A row-major n×p design with its response and offset.
#[derive(Debug, Clone, Copy)]
pub struct Problem<'a> {
    /// Row-major n×p design matrix.
    pub x: &'a [f64],
    /// Number of columns.
    pub p: usize,
    /// Response in proportion form.
    pub response: &'a Response,
    /// Offset per row, if any.
    pub offset: Option<&'a [f64]>,
    /// The link.
    pub link: Link,
}

impl Problem<'_> {
    /// Runs IRLS from the pass at the starting values until both stopping rules
    /// (`docs/maths.md#irls`) hold or [`MAX_ITERATIONS`] solves have been made, halving the
    /// step whenever the deviance increases.
    pub fn run(&self, start: Pass) -> Result<IrlsResult, IrlsError> {
        self.run_limited(start, MAX_ITERATIONS)
    }

    /// [`Problem::run`] with at most `max_iterations` weighted least-squares solves.
    pub fn run_limited(&self, start: Pass, max_iterations: usize) -> Result<IrlsResult, IrlsError> {
        let mut current = start;
        let mut beta_old: Option<Vec<f64>> = None;
        let mut iterations = 0;
        let mut converged = false;
        let mut halved_iterations = 0;
        while iterations < max_iterations {
            let factor =
                SpdFactor::new(&current.xtwx, self.p).ok_or(IrlsError::Singular { iterations })?;
            let mut beta = factor.solve(&current.xtwz);
            iterations += 1;
            let mut next = self.pass(Some(&beta));
            if let Some(old) = &beta_old {
                let limit = current.deviance + 1e-12 * current.deviance.abs().max(1.0);
                let mut halvings = 0;
                while !(next.deviance.is_finite() && next.deviance <= limit)
                    && halvings < MAX_HALVINGS
                {
                    for (b, o) in beta.iter_mut().zip(old) {
                        *b = 0.5 * (*b + o);
                    }
                    next = self.pass(Some(&beta));
                    halvings += 1;
                }
                halved_iterations += usize::from(halvings > 0);
                if !(next.deviance.is_finite() && next.deviance <= limit) {
                    // No step along this direction lowers the deviance: stop, not converged
                    // (a tiny halved step must not pass for convergence).
                    break;
                }
            }
            converged = beta_old.as_ref().is_some_and(|old| {
                let dev_change =
                    (next.deviance - current.deviance).abs() / (next.deviance.abs() + 0.1);
                let coef_change = beta
                    .iter()
                    .zip(old)
                    .map(|(b, o)| (b - o).abs() / (b.abs() + 0.1))
                    .fold(0.0, f64::max);
                dev_change < IRLS_DEVIANCE_RTOL && coef_change < IRLS_COEF_RTOL
            });
            current = next;
            beta_old = Some(beta);
            if converged {
                break;
            }
        }
        Ok(IrlsResult {
            beta: beta_old.unwrap_or_default(),
            last: current,
            iterations,
            converged,
            halved_iterations,
        })
    }
}
