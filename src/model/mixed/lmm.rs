//! The linear mixed model with a random plot intercept, y = Xβ + u_plot + e, fitted by REML or
//! ML. β and σ_e² are profiled out in closed form; the remaining one-dimensional problem in
//! the variance ratio γ = σ_u²/σ_e² is solved by a scan over ln γ and a safeguarded root
//! search of the profile's derivative, with γ = 0 (no plot effect) checked separately.
//! See docs/mixed-models.md, "The linear mixed model".

use ndarray::ArrayView2;
use serde::Serialize;

use super::{boundary_lr_test, intraclass_correlation, BoundaryLrTest, PlotEffectMethod, PlotMode};
use crate::model::glm::wald;
use crate::model::linalg::SpdFactor;
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

/// Sufficient statistics: within-plot centred data and plot means.
struct Stats {
    p: usize,
    n: usize,
    /// Within-plot centred rows of X (n×p) and y.
    xc: Vec<f64>,
    yc: Vec<f64>,
    /// Plot sizes, mean rows of X (G×p) and mean responses.
    size: Vec<f64>,
    xbar: Vec<f64>,
    ybar: Vec<f64>,
    /// Σ x̃ x̃ᵀ and Σ x̃ ỹ.
    wxx: Vec<f64>,
    wxy: Vec<f64>,
    /// Plot code of each plot here.
    codes: Vec<u32>,
}

/// The profile at one γ.
struct Profile {
    beta: Vec<f64>,
    factor: SpdFactor,
    /// Σ (y − Xβ)ᵀ M (y − Xβ), the minimised quadratic form.
    rss: f64,
    /// Plot mean residuals ȳ_j − x̄_jᵀβ.
    ebar: Vec<f64>,
    /// ℓ of the method at (γ, σ̂_e²(γ)).
    ll: f64,
    /// dℓ/dγ.
    slope: f64,
}

impl Stats {
    fn new(x: ArrayView2<f64>, y: &[f64], plots: &[u32]) -> Result<Self, ModelError> {
        let (n, p) = x.dim();
        if y.len() != n || plots.len() != n {
            return Err(ModelError::Invalid(format!(
                "LMM columns must have {n} rows"
            )));
        }
        let groups = plots.iter().map(|&g| g as usize + 1).max().unwrap_or(0);
        let mut size = vec![0.0; groups];
        let mut xbar = vec![0.0; groups * p];
        let mut ybar = vec![0.0; groups];
        for i in 0..n {
            let g = plots[i] as usize;
            size[g] += 1.0;
            ybar[g] += y[i];
            for c in 0..p {
                xbar[g * p + c] += x[[i, c]];
            }
        }
        let present: Vec<usize> = (0..groups).filter(|&g| size[g] > 0.0).collect();
        let mut index = vec![usize::MAX; groups];
        for (k, &g) in present.iter().enumerate() {
            index[g] = k;
            ybar[g] /= size[g];
            for c in 0..p {
                xbar[g * p + c] /= size[g];
            }
        }
        let mut xc = vec![0.0; n * p];
        let mut yc = vec![0.0; n];
        let mut wxx = vec![0.0; p * p];
        let mut wxy = vec![0.0; p];
        for i in 0..n {
            let g = plots[i] as usize;
            yc[i] = y[i] - ybar[g];
            for c in 0..p {
                xc[i * p + c] = x[[i, c]] - xbar[g * p + c];
            }
            let row = &xc[i * p..(i + 1) * p];
            for a in 0..p {
                wxy[a] += row[a] * yc[i];
                for b in 0..p {
                    wxx[a * p + b] += row[a] * row[b];
                }
            }
        }
        Ok(Stats {
            p,
            n,
            xc,
            yc,
            size: present.iter().map(|&g| size[g]).collect(),
            xbar: present
                .iter()
                .flat_map(|&g| xbar[g * p..(g + 1) * p].to_vec())
                .collect(),
            ybar: present.iter().map(|&g| ybar[g]).collect(),
            wxx,
            wxy,
            codes: present.iter().map(|&g| g as u32).collect(),
        })
    }

    /// The profile of the method's log-likelihood at γ.
    ///
    /// # Formula
    /// aⱼ = nⱼ/(1 + nⱼγ); A = W_xx + Σ aⱼ x̄ⱼx̄ⱼᵀ; β̂ = A⁻¹(W_xy + Σ aⱼ x̄ⱼȳⱼ);
    /// r = Σ (ỹ − x̃ᵀβ̂)² + Σ aⱼ (ȳⱼ − x̄ⱼᵀβ̂)²; with m = n (ML) or n − p (REML),
    /// ℓ = −½[m(ln(2π r/m) + 1) + Σ ln(1 + nⱼγ) (+ ln det A for REML)].
    fn profile(&self, gamma: f64, method: LmmMethod) -> Option<Profile> {
        let p = self.p;
        let mut a = self.wxx.clone();
        let mut rhs = self.wxy.clone();
        let mut ln_det_v = 0.0;
        for (j, &nj) in self.size.iter().enumerate() {
            let aj = nj / (1.0 + nj * gamma);
            ln_det_v += (nj * gamma).ln_1p();
            let xb = &self.xbar[j * p..(j + 1) * p];
            for r in 0..p {
                rhs[r] += aj * xb[r] * self.ybar[j];
                for c in 0..p {
                    a[r * p + c] += aj * xb[r] * xb[c];
                }
            }
        }
        let factor = SpdFactor::new(&a, p)?;
        let beta = factor.solve(&rhs);
        let dot = |row: &[f64]| row.iter().zip(&beta).map(|(u, v)| u * v).sum::<f64>();
        let within: f64 = (0..self.n)
            .map(|i| {
                let e = self.yc[i] - dot(&self.xc[i * p..(i + 1) * p]);
                e * e
            })
            .sum();
        let ebar: Vec<f64> = (0..self.size.len())
            .map(|j| self.ybar[j] - dot(&self.xbar[j * p..(j + 1) * p]))
            .collect();
        let mut rss = within;
        let (mut d_rss, mut d_ln_det_v, mut d_ln_det_a) = (0.0, 0.0, 0.0);
        for (j, &nj) in self.size.iter().enumerate() {
            let aj = nj / (1.0 + nj * gamma);
            let daj = -aj * aj;
            rss += aj * ebar[j] * ebar[j];
            d_rss += daj * ebar[j] * ebar[j];
            d_ln_det_v += aj;
            if method == LmmMethod::Reml {
                let xb = &self.xbar[j * p..(j + 1) * p];
                let s = factor.solve(xb);
                d_ln_det_a += daj * xb.iter().zip(&s).map(|(u, v)| u * v).sum::<f64>();
            }
        }
        let m = self.dof(method);
        let two_pi = 2.0 * std::f64::consts::PI;
        let (ll, slope) = match method {
            LmmMethod::Ml => (
                -0.5 * (m * ((two_pi * rss / m).ln() + 1.0) + ln_det_v),
                -0.5 * (m * d_rss / rss + d_ln_det_v),
            ),
            LmmMethod::Reml => (
                -0.5 * (m * ((two_pi * rss / m).ln() + 1.0) + ln_det_v + factor.ln_det()),
                -0.5 * (m * d_rss / rss + d_ln_det_v + d_ln_det_a),
            ),
        };
        Some(Profile {
            beta,
            factor,
            rss,
            ebar,
            ll,
            slope,
        })
    }

    fn dof(&self, method: LmmMethod) -> f64 {
        match method {
            LmmMethod::Ml => self.n as f64,
            LmmMethod::Reml => (self.n - self.p) as f64,
        }
    }

    /// The method's log-likelihood at (σ_u, σ_e), β profiled (ML) or integrated out (REML).
    fn at_sds(&self, su: f64, se: f64, method: LmmMethod) -> f64 {
        let v = se * se;
        let Some(pr) = self.profile(su * su / v, method) else {
            return f64::NAN;
        };
        let gamma = su * su / v;
        let ln_det_v: f64 = self.size.iter().map(|nj| (nj * gamma).ln_1p()).sum();
        let m = self.dof(method);
        let two_pi = 2.0 * std::f64::consts::PI;
        let extra = match method {
            LmmMethod::Ml => 0.0,
            LmmMethod::Reml => pr.factor.ln_det(),
        };
        -0.5 * (m * (two_pi * v).ln() + ln_det_v + extra + pr.rss / v)
    }

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
