//! The GLMM's marginal log-likelihood by adaptive Gauss–Hermite quadrature and its exact
//! gradient in (β, σ). Records are held sorted by plot in plain arrays; an [`Evaluator`]
//! keeps each plot's conditional mode between calls as the next starting point, and
//! allocates nothing per plot or per call. See docs/mixed-models.md, "Adaptive Gauss–Hermite
//! quadrature" and "The gradient".

// Several parallel per-node arrays are indexed by the node number.
#![allow(clippy::needless_range_loop)]

use rayon::prelude::*;

use super::glmm_data::GlmmData;
use super::kernels::{node_sums, sums, Predictors, Scratch, Sums};
use super::quadrature::GaussHermite;
use crate::model::ModelError;

/// |σ| below which a plot's log-likelihood uses its expansion in σ² (exact to O(σ⁴)):
/// the quadrature formulas divide by σ³ and would lose digits there.
pub const SIGMA_SERIES: f64 = 1e-5;

/// Newton steps allowed for one conditional mode.
const MAX_MODE_STEPS: usize = 200;

/// Plots per parallel task.
const PLOTS_PER_TASK: usize = 16;

/// The marginal log-likelihood and, when asked for, its gradient in (β, σ).
#[derive(Debug, Clone, PartialEq)]
pub struct Evaluation {
    /// ℓ(β, σ), binomial constants included.
    pub value: f64,
    /// ∂ℓ/∂(β, σ) (empty when not asked for).
    pub gradient: Vec<f64>,
}

/// Evaluates the approximate marginal log-likelihood of one data set with one rule. Plots are
/// processed in parallel; their contributions are added in plot order, so the result does not
/// depend on the number of threads.
#[derive(Debug, Clone)]
pub struct Evaluator<'a> {
    data: &'a GlmmData,
    /// √2 zₘ.
    scaled_nodes: Vec<f64>,
    /// ln(ωₘ e^(zₘ²)).
    ln_weights: Vec<f64>,
    /// Conditional mode of each plot at the last evaluation (the next starting point).
    pub modes: Vec<f64>,
    /// Conditional SD (−h″(û))^(−1/2) of each plot at the last evaluation.
    pub mode_sds: Vec<f64>,
    eta: Vec<f64>,
    exp_eta: Vec<f64>,
    values: Vec<f64>,
    grads: Vec<f64>,
}

/// What one plot needs besides its records.
struct Rule<'r> {
    scaled_nodes: &'r [f64],
    ln_weights: &'r [f64],
}

impl<'a> Evaluator<'a> {
    /// An evaluator of `data` with the Gauss–Hermite `rule` (1 node: Laplace).
    pub fn new(data: &'a GlmmData, rule: &GaussHermite) -> Self {
        let g = data.n_plots();
        Evaluator {
            data,
            scaled_nodes: rule
                .nodes
                .iter()
                .map(|z| std::f64::consts::SQRT_2 * z)
                .collect(),
            ln_weights: rule
                .nodes
                .iter()
                .zip(&rule.weights)
                .map(|(z, w)| w.ln() + z * z)
                .collect(),
            modes: vec![0.0; g],
            mode_sds: vec![0.0; g],
            eta: vec![0.0; data.n_records()],
            exp_eta: vec![0.0; data.n_records()],
            values: vec![0.0; g],
            grads: vec![0.0; g * (data.p + 1)],
        }
    }

    /// ℓ at θ = (β, σ) (σ may be negative: ℓ is even in σ), with the gradient when
    /// `gradient` is set.
    ///
    /// # Errors
    /// [`ModelError::NotConverged`] when a conditional mode cannot be found.
    pub fn evaluate(&mut self, theta: &[f64], gradient: bool) -> Result<Evaluation, ModelError> {
        let d = self.data;
        let p = d.p;
        let (beta, sigma) = (&theta[..p], theta[p]);
        if std::env::var_os("GLMM_TRACE").is_some() {
            eprintln!("eval {theta:?} {gradient}");
        }
        for (i, (e, x)) in self.eta.iter_mut().zip(&mut self.exp_eta).enumerate() {
            let row = &d.x[i * p..(i + 1) * p];
            *e = d.offset[i] + row.iter().zip(beta).map(|(a, b)| a * b).sum::<f64>();
            *x = e.exp();
        }
        let pr = Predictors {
            eta: &self.eta,
            exp_eta: &self.exp_eta,
        };
        let rule = Rule {
            scaled_nodes: &self.scaled_nodes,
            ln_weights: &self.ln_weights,
        };
        let k = self.scaled_nodes.len();
        let q = p + 1;
        self.modes
            .par_chunks_mut(PLOTS_PER_TASK)
            .zip(self.mode_sds.par_chunks_mut(PLOTS_PER_TASK))
            .zip(self.values.par_chunks_mut(PLOTS_PER_TASK))
            .zip(self.grads.par_chunks_mut(PLOTS_PER_TASK * q))
            .enumerate()
            .try_for_each_init(
                || Scratch::new(k, p),
                |sc, (task, (((modes, sds), values), grads))| {
                    for r in 0..modes.len() {
                        let j = task * PLOTS_PER_TASK + r;
                        let (v, mode, sd) = plot(d, &pr, &rule, j, sigma, modes[r], gradient, sc)?;
                        (values[r], modes[r], sds[r]) = (v, mode, sd);
                        if gradient {
                            grads[r * q..(r + 1) * q].copy_from_slice(&sc.grad);
                        }
                    }
                    Ok::<(), ModelError>(())
                },
            )?;
        let value = d.ln_choose + self.values.iter().sum::<f64>();
        let mut total = vec![0.0; if gradient { q } else { 0 }];
        if gradient {
            for g in self.grads.chunks(q) {
                for (t, v) in total.iter_mut().zip(g) {
                    *t += v;
                }
            }
        }
        Ok(Evaluation {
            value,
            gradient: total,
        })
    }
}

/// The conditional mode of plot j (safeguarded Newton on h′) from `start`, with the sums at
/// the mode (and the vectors when `vectors`).
#[allow(clippy::too_many_arguments)]
fn mode(
    d: &GlmmData,
    pr: &Predictors,
    j: usize,
    start: f64,
    inv_var: f64,
    vectors: bool,
    sc: &mut Scratch,
) -> Result<(f64, Sums), ModelError> {
    let mut u = start;
    let (mut lo, mut hi) = (f64::NEG_INFINITY, f64::INFINITY);
    for _ in 0..MAX_MODE_STEPS {
        let s = sums(d, pr, j, u, false, vectors, sc);
        let h1 = s.d1 - u * inv_var;
        let h2 = s.d2 - inv_var;
        if h1 > 0.0 {
            lo = u;
        } else if h1 < 0.0 {
            hi = u;
        } else {
            return Ok((u, s));
        }
        let newton = if h2 < 0.0 {
            u - h1 / h2
        } else {
            u + h1 / inv_var
        };
        let scale = u.abs() + inv_var.sqrt().recip();
        if (newton - u).abs() <= 1e-10 * scale {
            // Take the last (tiny) Newton step and carry the sums to the new point to first
            // order, so that the mode and the curvature are exact to O(step²).
            if h2 >= 0.0 {
                return Ok((u, s));
            }
            let step = newton - u;
            if vectors {
                for c in 0..d.p {
                    sc.sx1[c] += step * sc.sx2[c];
                    sc.sx2[c] += step * sc.sx3[c];
                }
            }
            let moved = Sums {
                value: s.value,
                d1: s.d1 + step * s.d2,
                d2: s.d2 + step * s.d3,
                d3: s.d3,
            };
            return Ok((newton, moved));
        }
        // Outside the bracket of sign changes of h′, bisect (once both ends are known).
        let next = if (newton > lo && newton < hi) || !(lo.is_finite() && hi.is_finite()) {
            newton
        } else {
            0.5 * (lo + hi)
        };
        if !next.is_finite() {
            break;
        }
        u = next;
    }
    Err(ModelError::NotConverged {
        iterations: MAX_MODE_STEPS,
        deviance: f64::NAN,
        hint: format!(
            "the conditional mode of plot {} was not found",
            d.plot_codes[j] + 1
        ),
    })
}

/// (ln L_j, mode, conditional SD) of plot j, and its gradient into `sc.grad` when `gradient`.
#[allow(clippy::too_many_arguments)]
fn plot(
    d: &GlmmData,
    pr: &Predictors,
    rule: &Rule,
    j: usize,
    sigma: f64,
    start: f64,
    gradient: bool,
    sc: &mut Scratch,
) -> Result<(f64, f64, f64), ModelError> {
    let p = d.p;
    let var = sigma * sigma;
    if sigma.abs() < SIGMA_SERIES {
        return Ok(plot_series(d, pr, j, sigma, gradient, sc));
    }
    let inv_var = 1.0 / var;
    let (mode, s) = mode(d, pr, j, start, inv_var, gradient, sc)?;
    let curvature = inv_var - s.d2;
    let sd = curvature.sqrt().recip();
    let k = rule.scaled_nodes.len();
    node_sums(d, pr, j, mode, sd, rule.scaled_nodes, gradient, sc);
    // ln of the integrand at each node, without the constant −ln|σ| − ½ ln 2π.
    let mut top = f64::NEG_INFINITY;
    for m in 0..k {
        let v = mode + sd * rule.scaled_nodes[m];
        sc.node_value[m] += rule.ln_weights[m] - 0.5 * v * v * inv_var;
        top = top.max(sc.node_value[m]);
    }
    let total: f64 = sc.node_value.iter().map(|t| (t - top).exp()).sum();
    let lse = top + total.ln();
    let value = std::f64::consts::SQRT_2.ln() + sd.ln() + lse
        - sigma.abs().ln()
        - 0.5 * (2.0 * std::f64::consts::PI).ln();
    if !gradient {
        return Ok((value, mode, sd));
    }
    // Posterior node weights πₘ and the derivative of ln L_j (docs/mixed-models.md).
    let (mut e_hu, mut e_huz, mut e_v2) = (0.0, 0.0, 0.0);
    sc.grad.fill(0.0);
    for m in 0..k {
        let pi = (sc.node_value[m] - lse).exp();
        let z = rule.scaled_nodes[m];
        let v = mode + sd * z;
        let hu = sc.node_slope[m] - v * inv_var;
        e_hu += pi * hu;
        e_huz += pi * hu * z;
        e_v2 += pi * v * v;
        for c in 0..p {
            sc.grad[c] += pi * sc.node_score[m * p + c];
        }
    }
    let h3 = s.d3;
    for c in 0..p {
        let du = sc.sx2[c] / curvature;
        let dh = -(sc.sx3[c] + h3 * du);
        let ds = -0.5 * sd * dh / curvature;
        sc.grad[c] += -0.5 * dh / curvature + e_hu * du + e_huz * ds;
    }
    let s3 = sigma * var;
    let du = 2.0 * mode / (s3 * curvature);
    let dh = -(2.0 / s3 + h3 * du);
    let ds = -0.5 * sd * dh / curvature;
    sc.grad[p] = -0.5 * dh / curvature + e_v2 / s3 - 1.0 / sigma + e_hu * du + e_huz * ds;
    Ok((value, mode, sd))
}

/// ln L_j for |σ| < [`SIGMA_SERIES`]: a(0) + ½σ²(a′² + a″) with a(u) = Σ wᵢ ℓᵢ(ηᵢ + u);
/// the mode is σ²a′ and the conditional SD |σ| to that order.
fn plot_series(
    d: &GlmmData,
    pr: &Predictors,
    j: usize,
    sigma: f64,
    gradient: bool,
    sc: &mut Scratch,
) -> (f64, f64, f64) {
    let p = d.p;
    let var = sigma * sigma;
    let s = sums(d, pr, j, 0.0, true, gradient, sc);
    let excess = s.d1 * s.d1 + s.d2;
    if gradient {
        for c in 0..p {
            sc.grad[c] = sc.sx1[c] + 0.5 * var * (2.0 * s.d1 * sc.sx2[c] + sc.sx3[c]);
        }
        sc.grad[p] = sigma * excess;
    }
    (s.value + 0.5 * var * excess, var * s.d1, sigma.abs())
}
