//! The Newton–Raphson engine of [`super::fit_truncated`]: the data in row-major form, the
//! log-likelihood with its exact gradient and Hessian in (β, α), and Newton steps on
//! (β, ln α) with Levenberg–Marquardt damping and step-halving (`docs/ingrowth.md`, "Fitting
//! the count part").

use ndarray::{CowArray, Ix2};

use super::super::linalg::SpdFactor;
use super::super::truncated::{nb_row, poisson_row, CountFamily, RowTerms};
use super::super::ModelError;
use crate::tolerance::{NEWTON_MAX_ITERATIONS, NEWTON_STEP_SE_TOL};

/// Step-halvings tried before a Newton step is given up.
const MAX_HALVINGS: usize = 40;
/// The fitted α below which the data show no overdispersion worth a parameter.
pub(super) const ALPHA_FLOOR: f64 = 1e-8;
/// ln α is kept inside ±this during the search (α from 1e-13 to 1e13).
const LN_ALPHA_BOUND: f64 = 30.0;

/// The data in contiguous row-major form with ln y! precomputed.
pub(super) struct Problem<'a> {
    pub(super) x: CowArray<'a, f64, Ix2>,
    pub(super) p: usize,
    pub(super) y: &'a [u64],
    pub(super) ln_fact: Vec<f64>,
    pub(super) offset: &'a [f64],
    pub(super) family: CountFamily,
}

/// ℓ, gradient and Hessian in (β, α) (α last when present), Hessian row-major.
pub(super) struct Evaluation {
    pub(super) ll: f64,
    pub(super) grad: Vec<f64>,
    pub(super) hess: Vec<f64>,
}

impl Problem<'_> {
    pub(super) fn k(&self) -> usize {
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
    pub(super) fn log_likelihood(&self, beta: &[f64], alpha: f64) -> f64 {
        (0..self.y.len())
            .map(|i| self.row(i, self.eta(i, beta), alpha).ll)
            .sum()
    }

    /// ℓ with its exact gradient and Hessian in (β, α).
    pub(super) fn evaluate(&self, beta: &[f64], alpha: f64) -> Evaluation {
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

/// Newton–Raphson on θ = (β, ln α) (β alone for the Poisson). Returns (β, α, iterations).
pub(super) fn newton(
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
        if nb && alpha < ALPHA_FLOOR {
            let ll = problem.log_likelihood(&beta, alpha);
            let why = format!("the dispersion α fell below {ALPHA_FLOOR:e}");
            return Err(not_converged(iteration, ll, alpha, nb, &why));
        }
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

pub(super) fn not_converged(
    iterations: usize,
    ll: f64,
    alpha: f64,
    nb: bool,
    why: &str,
) -> ModelError {
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
