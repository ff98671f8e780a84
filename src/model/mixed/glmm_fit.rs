//! Fitting the binomial GLMM: start from the GLM, decide whether σ_u = 0 (the boundary) is
//! the maximum, otherwise maximise the quadrature likelihood in (β, σ) by quasi-Newton with
//! the exact gradient, and take standard errors from the central-difference Hessian of that
//! gradient. See docs/mixed-models.md, "Maximisation" and "Standard errors".

use serde::Serialize;

use super::glmm::Evaluator;
use super::glmm_data::GlmmData;
use super::optimize::{
    decrement_tolerance, maximize, negative_hessian, negative_hessian_forward, steps_from, Failure,
    Point,
};
use super::quadrature::GaussHermite;
use super::{
    boundary_lr_test, intraclass_correlation, latent_variance, BoundaryLrTest, PlotEffectMethod,
    PlotMode,
};
use crate::model::glm::wald;
use crate::model::linalg::SpdFactor;
use crate::model::ModelError;

/// Quasi-Newton iterations between refreshes of the Hessian by finite differences.
const ROUND: usize = 15;

/// Plot-effect SDs tried as starting points (with β from the GLM).
const START_SDS: [f64; 4] = [0.1, 0.3, 1.0, 3.0];

/// Smaller SDs tried when σ = 0 is not a maximum but no start above beats it.
const SMALL_SDS: [f64; 4] = [0.05, 0.02, 0.01, 0.003];

/// How the GLMM is fitted.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub struct GlmmOptions {
    /// Quadrature nodes per plot (1: Laplace).
    pub nodes: usize,
    /// Quasi-Newton iterations allowed.
    pub max_iterations: usize,
}

impl Default for GlmmOptions {
    fn default() -> Self {
        GlmmOptions {
            nodes: 15,
            max_iterations: 200,
        }
    }
}

/// A fitted binomial GLMM. Holds no data.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct GlmmFit {
    /// Estimates of β.
    pub coefficients: Vec<f64>,
    /// The β block of the inverse negative Hessian in (β, σ).
    pub covariance: Vec<Vec<f64>>,
    /// √ of its diagonal.
    pub std_errors: Vec<f64>,
    /// Wald statistics.
    pub z: Vec<f64>,
    /// Two-sided normal p-values.
    pub p_values: Vec<f64>,
    /// σ_u.
    pub sd: f64,
    /// Its standard error (None at σ_u = 0).
    pub std_error_sd: Option<f64>,
    /// The maximised approximate marginal log-likelihood, binomial constants included.
    pub log_likelihood: f64,
    /// The log-likelihood of the model without the plot effect (the GLM) at its maximum.
    pub glm_log_likelihood: f64,
    /// −2ℓ + 2(p + 1).
    pub aic: f64,
    /// −2ℓ + (p + 1) ln n.
    pub bic: f64,
    /// Laplace or AGQ.
    pub method: PlotEffectMethod,
    /// Quadrature nodes.
    pub nodes: usize,
    /// Test of σ_u > 0.
    pub lr_test: BoundaryLrTest,
    /// σ_u² / (σ_u² + latent variance of the link).
    pub intraclass_correlation: f64,
    /// Conditional modes and SDs, in the data's plot order.
    pub plots: Vec<PlotMode>,
    /// Quasi-Newton iterations (0 at the boundary).
    pub iterations: usize,
    /// Records in the fit.
    pub n_obs: usize,
}

fn not_converged(iterations: usize, ll: f64, hint: &str) -> ModelError {
    ModelError::NotConverged {
        iterations,
        deviance: -2.0 * ll,
        hint: format!("{hint}; try fewer predictors, rescaled covariates or --quadrature 1"),
    }
}

/// Fit the GLMM on `data` from the GLM estimate `start` (whose model covariance
/// `start_covariance` scales the first finite-difference steps).
///
/// # Errors
/// [`ModelError::NotConverged`] when the maximisation or a conditional mode fails, or the
/// Hessian at the maximum is not negative definite (exit code 1); [`ModelError::Invalid`]
/// for a bad number of nodes.
pub fn fit_glmm(
    data: &GlmmData,
    start: &[f64],
    start_covariance: &[Vec<f64>],
    opts: &GlmmOptions,
) -> Result<GlmmFit, ModelError> {
    let p = data.p;
    if data.single_binary_records() {
        return Err(ModelError::Invalid(
            "every plot has a single 0/1 record, so a plot effect cannot be told from the link's own variation; fit without --plot-effect".into(),
        ));
    }
    let rule = GaussHermite::new(opts.nodes).map_err(ModelError::Invalid)?;
    let mut ev = Evaluator::new(data, &rule);
    let theta = |sd: f64| -> Vec<f64> { start.iter().copied().chain([sd]).collect() };
    let glm_ll = ev.evaluate(&theta(0.0), false)?.value;
    let mut scan = [0.0; START_SDS.len()];
    for (v, sd) in scan.iter_mut().zip(START_SDS) {
        *v = ev.evaluate(&theta(sd), false)?.value;
    }
    let mut best = (0.0, glm_ll);
    for (i, &v) in scan.iter().enumerate() {
        if v > best.1 {
            best = (interpolate(&scan, i), v);
        }
    }
    // σ = 0 is a maximum in σ when ∂²ℓ/∂σ² ≤ 0 there (the expansion of docs/mixed-models.md).
    let mut boundary_curvature = || -> Result<f64, ModelError> {
        let probe = 1e-2 * super::glmm::SIGMA_SERIES;
        Ok(ev.evaluate(&theta(probe), true)?.gradient[p] / probe)
    };
    if best.0 == 0.0 && boundary_curvature()? > 0.0 {
        for sd in SMALL_SDS {
            let v = ev.evaluate(&theta(sd), false)?.value;
            if v > glm_ll {
                best = (sd, v);
                break;
            }
        }
    }
    let first_steps: Vec<f64> = (0..=p)
        .map(|k| match start_covariance.get(k) {
            Some(row) => 1e-3 * row[k].sqrt().max(1e-8),
            None => 1e-3 * best.0.max(0.1),
        })
        .collect();
    if best.0 == 0.0 {
        return boundary_fit(data, &mut ev, start, &first_steps[..p], glm_ll, opts);
    }
    let mut objective = |x: &[f64]| -> Result<Point, ModelError> {
        let e = ev.evaluate(x, true)?;
        Ok(Point {
            x: x.to_vec(),
            value: e.value,
            gradient: e.gradient,
        })
    };
    let x0 = theta(best.0);
    let mut at = objective(&x0)?;
    let mut b = negative_hessian_forward(&mut objective, &at, &first_steps)?;
    let mut iterations = 0;
    let mut hessian;
    // Quasi-Newton in rounds of at most ROUND iterations; after each, the central-difference
    // Hessian replaces the BFGS matrix. The fit ends when a round converges and that Hessian's
    // Newton decrement is negligible too.
    loop {
        let budget = ROUND.min(opts.max_iterations.saturating_sub(iterations));
        if budget == 0 {
            return Err(not_converged(
                iterations,
                at.value,
                "the iteration limit was reached",
            ));
        }
        let (point, used, converged) = match maximize(&mut objective, at, &mut b, budget) {
            Ok(m) => (m.point, m.iterations, true),
            Err(Failure::Iterations(pt)) => (pt, budget, false),
            Err(Failure::LineSearch(pt)) if iterations > 0 || pt.x != x0 => (pt, 1, false),
            Err(Failure::LineSearch(pt)) => {
                return Err(not_converged(
                    iterations,
                    pt.value,
                    "the line search found no ascent",
                ))
            }
            Err(Failure::Objective(e)) => return Err(e),
        };
        iterations += used;
        at = point;
        let steps = steps_from(&b, &first_steps);
        hessian = negative_hessian(&mut objective, &at.x, &steps)?;
        b.clone_from(&hessian);
        let decrement = SpdFactor::new(&hessian, p + 1).map(|f| {
            let d = f.solve(&at.gradient);
            0.5 * d.iter().zip(&at.gradient).map(|(a, g)| a * g).sum::<f64>()
        });
        let small = decrement.is_some_and(|d| d < decrement_tolerance(at.value));
        if small || (converged && used == 0 && iterations > 0) {
            break;
        }
    }
    let covariance = SpdFactor::new(&hessian, p + 1)
        .ok_or_else(|| {
            not_converged(
                iterations,
                at.value,
                "the Hessian of the marginal log-likelihood is not negative definite at the estimate",
            )
        })?
        .inverse();
    let last = ev.evaluate(&at.x, false)?;
    let sd = at.x[p].abs();
    let beta_cov: Vec<Vec<f64>> = covariance[..p].iter().map(|r| r[..p].to_vec()).collect();
    let coefficients = at.x[..p].to_vec();
    Ok(assemble(
        data,
        &ev,
        coefficients,
        beta_cov,
        sd,
        Some(covariance[p][p].sqrt()),
        last.value,
        glm_ll,
        opts.nodes,
        iterations,
    ))
}

/// The start σ from the scan's best grid point i: the vertex of the parabola in ln σ through
/// it and its neighbours, kept between the neighbours (the grid point itself at an end).
fn interpolate(scan: &[f64], i: usize) -> f64 {
    if i == 0 || i + 1 >= scan.len() {
        return START_SDS[i];
    }
    let t: Vec<f64> = START_SDS[i - 1..=i + 1].iter().map(|s| s.ln()).collect();
    let f = &scan[i - 1..=i + 1];
    let num = (t[1] - t[0]).powi(2) * (f[1] - f[2]) - (t[1] - t[2]).powi(2) * (f[1] - f[0]);
    let den = (t[1] - t[0]) * (f[1] - f[2]) - (t[1] - t[2]) * (f[1] - f[0]);
    let vertex = t[1] - 0.5 * num / den;
    if vertex.is_finite() && vertex > t[0] && vertex < t[2] {
        vertex.exp()
    } else {
        START_SDS[i]
    }
}

/// σ_u = 0 maximises the likelihood: β is the GLM's, and the covariance is the inverse
/// observed information of the GLM (the (β, σ) Hessian is block-diagonal there).
fn boundary_fit(
    data: &GlmmData,
    ev: &mut Evaluator,
    start: &[f64],
    first_steps: &[f64],
    glm_ll: f64,
    opts: &GlmmOptions,
) -> Result<GlmmFit, ModelError> {
    let p = data.p;
    let mut x = start.to_vec();
    x.push(0.0);
    let mut objective = |x: &[f64]| -> Result<Point, ModelError> {
        let e = ev.evaluate(x, true)?;
        Ok(Point {
            x: x.to_vec(),
            value: e.value,
            gradient: e.gradient,
        })
    };
    // Steps in β only; the σ column of the Hessian is not needed.
    let mut info = vec![0.0; p * p];
    let mut steps = first_steps.to_vec();
    steps.push(SIGMA_STEP);
    let full = negative_hessian(&mut objective, &x, &steps)?;
    for r in 0..p {
        for c in 0..p {
            info[r * p + c] = full[r * (p + 1) + c];
        }
    }
    let covariance = SpdFactor::new(&info, p)
        .ok_or_else(|| {
            not_converged(
                0,
                glm_ll,
                "the observed information of the GLM is not positive definite",
            )
        })?
        .inverse();
    ev.modes.fill(0.0);
    ev.mode_sds.fill(0.0);
    Ok(assemble(
        data,
        ev,
        start.to_vec(),
        covariance,
        0.0,
        None,
        glm_ll,
        glm_ll,
        opts.nodes,
        0,
    ))
}

/// σ step of the boundary Hessian: inside the series region, where ℓ is exact to O(σ⁴).
const SIGMA_STEP: f64 = 1e-7;

#[allow(clippy::too_many_arguments)]
fn assemble(
    data: &GlmmData,
    ev: &Evaluator,
    coefficients: Vec<f64>,
    covariance: Vec<Vec<f64>>,
    sd: f64,
    std_error_sd: Option<f64>,
    log_likelihood: f64,
    glm_ll: f64,
    nodes: usize,
    iterations: usize,
) -> GlmmFit {
    let (std_errors, z, p_values) = wald(&coefficients, &covariance);
    let k = (coefficients.len() + 1) as f64;
    let n = data.n_records();
    let plots = data
        .plot_codes
        .iter()
        .enumerate()
        .map(|(j, &code)| PlotMode {
            code,
            mode: if sd > 0.0 { ev.modes[j] } else { 0.0 },
            sd: if sd > 0.0 { ev.mode_sds[j] } else { 0.0 },
        })
        .collect();
    GlmmFit {
        coefficients,
        covariance,
        std_errors,
        z,
        p_values,
        sd,
        std_error_sd,
        log_likelihood,
        glm_log_likelihood: glm_ll,
        aic: -2.0 * log_likelihood + 2.0 * k,
        bic: -2.0 * log_likelihood + k * (n as f64).ln(),
        method: if nodes == 1 {
            PlotEffectMethod::Laplace
        } else {
            PlotEffectMethod::Agq
        },
        nodes,
        lr_test: boundary_lr_test(log_likelihood, glm_ll),
        intraclass_correlation: intraclass_correlation(sd, latent_variance(data.family)),
        plots,
        iterations,
        n_obs: n,
    }
}
