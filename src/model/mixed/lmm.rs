//! The linear mixed model with a random plot intercept, y = Xβ + u_plot + e, fitted by REML or
//! ML. β and σ_e² are profiled out in closed form; the remaining one-dimensional problem in
//! the variance ratio γ = σ_u²/σ_e² is solved by a scan over ln γ and a safeguarded root
//! search of the profile's derivative, with γ = 0 (no plot effect) checked separately.
//! See docs/mixed-models.md, "The growth model (linear mixed model)".

use ndarray::ArrayView2;
use serde::Serialize;

use super::lmm_profile::Stats;
use super::{boundary_lr_test, intraclass_correlation, BoundaryLrTest, PlotEffectMethod, PlotMode};
use crate::model::glm::wald;
use crate::model::ModelError;

/// The grid of ln γ scanned for the maximum.
const LN_GAMMA_GRID: (i32, i32) = (-15, 15);

/// Root search stops when the bracket in ln γ is narrower than this.
const LN_GAMMA_TOL: f64 = 1e-12;

/// REML or ML.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Default)]
pub enum LmmMethod {
    /// Restricted maximum likelihood (the default).
    #[default]
    Reml,
    /// Maximum likelihood.
    Ml,
}

/// A fitted random-intercept LMM. Holds no data.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct LmmFit {
    /// Estimates of β (generalised least squares at the estimated variances).
    pub coefficients: Vec<f64>,
    /// (Σ_j X_jᵀ V_j⁻¹ X_j)⁻¹ at the estimates.
    pub covariance: Vec<Vec<f64>>,
    /// √ of its diagonal.
    pub std_errors: Vec<f64>,
    /// Wald statistics.
    pub z: Vec<f64>,
    /// Two-sided normal p-values.
    pub p_values: Vec<f64>,
    /// σ_u.
    pub sd: f64,
    /// Its standard error from the observed information of the method's likelihood in
    /// (σ_u, σ_e) (None at σ_u = 0).
    pub std_error_sd: Option<f64>,
    /// σ_e.
    pub residual_sd: f64,
    /// The method's maximised log-likelihood (REML: the restricted one).
    pub log_likelihood: f64,
    /// −2ℓ + 2(p + 2).
    pub aic: f64,
    /// −2ℓ + (p + 2) ln n.
    pub bic: f64,
    /// REML or ML.
    pub method: PlotEffectMethod,
    /// Test of σ_u > 0 between ML fits.
    pub lr_test: BoundaryLrTest,
    /// The ML log-likelihood without the plot effect (the least-squares fit's).
    pub ml_log_likelihood_without: f64,
    /// σ_u² / (σ_u² + σ_e²).
    pub intraclass_correlation: f64,
    /// BLUPs and their conditional SDs, in plot-code order.
    pub plots: Vec<PlotMode>,
    /// Records.
    pub n_obs: usize,
}

impl Stats {
    /// The maximising γ (0 at the boundary).
    fn maximise(&self, method: LmmMethod) -> Result<f64, ModelError> {
        let fail = |m: &str| ModelError::Invalid(format!("linear mixed model: {m}"));
        let at = |g: f64| {
            self.profile(g, method)
                .ok_or_else(|| fail("X'V⁻¹X is singular"))
        };
        let zero = at(0.0)?;
        let mut best = (0.0, zero.ll, f64::NAN);
        let (lo, hi) = LN_GAMMA_GRID;
        for t in lo..=hi {
            let t = f64::from(t);
            let pr = at(t.exp())?;
            if pr.ll > best.1 {
                best = (t.exp(), pr.ll, t);
            }
        }
        if best.0 == 0.0 {
            if zero.slope <= 0.0 {
                return Ok(0.0);
            }
            // The maximum lies between 0 and the smallest grid point: search on γ itself.
            return Ok(self.root(method, 0.0, f64::from(lo).exp(), false));
        }
        if best.2 == f64::from(hi) {
            return Err(ModelError::NotConverged {
                iterations: 0,
                deviance: -2.0 * best.1,
                hint: "the residual variance goes to 0 (σ_u²/σ_e² beyond e^15): does every plot have a single record?".into(),
            });
        }
        Ok(self.root(method, best.2 - 1.0, best.2 + 1.0, true).exp())
    }

    /// The root of the profile's slope in [a, b], on ln γ (`log`) or on γ: bisection with
    /// secant steps (Illinois), to [`LN_GAMMA_TOL`].
    fn root(&self, method: LmmMethod, a: f64, b: f64, log: bool) -> f64 {
        let slope = |x: f64| -> f64 {
            let g = if log { x.exp() } else { x };
            self.profile(g, method)
                .map_or(f64::NAN, |p| if log { p.slope * g } else { p.slope })
        };
        let (mut a, mut b) = (a, b);
        let (mut fa, mut fb) = (slope(a), slope(b));
        if !(fa > 0.0 && fb < 0.0) {
            return if fa <= 0.0 { a } else { b };
        }
        let mut side = 0i8;
        for _ in 0..200 {
            let tol = if log { LN_GAMMA_TOL } else { LN_GAMMA_TOL * b };
            if (b - a).abs() < tol {
                break;
            }
            let c = (a * fb - b * fa) / (fb - fa);
            let c = if c > a && c < b { c } else { 0.5 * (a + b) };
            let fc = slope(c);
            if fc > 0.0 {
                a = c;
                fa = fc;
                if side == 1 {
                    fb *= 0.5;
                }
                side = 1;
            } else {
                b = c;
                fb = fc;
                if side == -1 {
                    fa *= 0.5;
                }
                side = -1;
            }
        }
        0.5 * (a + b)
    }
}

/// Fit the random-intercept LMM of `y` on `x` with plots `plots` (0-based codes).
///
/// # Errors
/// [`ModelError::Invalid`] for mismatched columns, too few records or a singular design;
/// [`ModelError::NotConverged`] when σ_e goes to 0.
pub fn fit_lmm(
    x: ArrayView2<f64>,
    y: &[f64],
    plots: &[u32],
    method: LmmMethod,
) -> Result<LmmFit, ModelError> {
    let s = Stats::new(x, y, plots)?;
    if s.size.iter().all(|&n| n < 2.0) {
        return Err(ModelError::Invalid(
            "every plot has a single record, so a plot effect cannot be told from the residual; fit without --plot-effect".into(),
        ));
    }
    if s.n <= s.p + 1 {
        return Err(ModelError::Invalid(format!(
            "{} records cannot estimate {} coefficients and two variances",
            s.n, s.p
        )));
    }
    let gamma = s.maximise(method)?;
    let singular = || ModelError::Invalid("linear mixed model: X'V⁻¹X is singular".into());
    let pr = s.profile(gamma, method).ok_or_else(singular)?;
    let ve = pr.rss / s.dof(method);
    let (se, su) = (ve.sqrt(), (gamma * ve).sqrt());
    let covariance: Vec<Vec<f64>> = pr
        .factor
        .inverse()
        .iter()
        .map(|r| r.iter().map(|v| v * ve).collect())
        .collect();
    let (std_errors, z, p_values) = wald(&pr.beta, &covariance);
    let ml_gamma = match method {
        LmmMethod::Ml => gamma,
        LmmMethod::Reml => s.maximise(LmmMethod::Ml)?,
    };
    let ml = s.profile(ml_gamma, LmmMethod::Ml).ok_or_else(singular)?;
    let ml0 = s.profile(0.0, LmmMethod::Ml).ok_or_else(singular)?;
    let plots = (0..s.size.len())
        .map(|j| {
            let c = gamma / (1.0 + s.size[j] * gamma);
            PlotMode {
                code: s.codes[j],
                mode: c * s.size[j] * pr.ebar[j],
                sd: (ve * c).sqrt(),
            }
        })
        .collect();
    let k = (s.p + 2) as f64;
    Ok(LmmFit {
        std_error_sd: (su > 0.0).then(|| sd_standard_error(&s, su, se, method)),
        coefficients: pr.beta,
        covariance,
        std_errors,
        z,
        p_values,
        sd: su,
        residual_sd: se,
        log_likelihood: pr.ll,
        aic: -2.0 * pr.ll + 2.0 * k,
        bic: -2.0 * pr.ll + k * (s.n as f64).ln(),
        method: match method {
            LmmMethod::Reml => PlotEffectMethod::Reml,
            LmmMethod::Ml => PlotEffectMethod::Ml,
        },
        lr_test: boundary_lr_test(ml.ll, ml0.ll),
        ml_log_likelihood_without: ml0.ll,
        intraclass_correlation: intraclass_correlation(su, ve),
        plots,
        n_obs: s.n,
    })
}

/// SE of σ_u: the (σ_u, σ_u) entry of the inverse of −∂²ℓ/∂(σ_u, σ_e)² by central
/// differences (steps 10⁻⁴ of each SD).
fn sd_standard_error(s: &Stats, su: f64, se: f64, method: LmmMethod) -> f64 {
    let (hu, he) = (1e-4 * su, 1e-4 * se);
    let f = |a: f64, b: f64| s.at_sds(a, b, method);
    let f0 = f(su, se);
    let huu = (f(su + hu, se) - 2.0 * f0 + f(su - hu, se)) / (hu * hu);
    let hee = (f(su, se + he) - 2.0 * f0 + f(su, se - he)) / (he * he);
    let hue = (f(su + hu, se + he) - f(su + hu, se - he) - f(su - hu, se + he)
        + f(su - hu, se - he))
        / (4.0 * hu * he);
    let det = huu * hee - hue * hue;
    (-hee / det).sqrt()
}
