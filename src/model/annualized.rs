//! The annualised survival model: record i, observed over Lᵢ years, survives with probability
//! Pᵢ = p(ηᵢ)^Lᵢ, p = logistic(η) the annual survival probability (Monserud 1976; the same form
//! as the logistic-exposure link of Shaffer 2004). Fitted by Newton–Raphson on that likelihood.

use ndarray::{ArrayView, ArrayView1, CowArray, Ix1, Ix2};
use serde::Serialize;

use super::glm::{wald, FitControl, GlmData};
use super::irls::weighted_cross_products;
use super::linalg::SpdFactor;
use super::ModelError;
use crate::tolerance::{IRLS_COEF_RTOL, IRLS_DEVIANCE_RTOL};

/// Step-halvings tried before giving up on a Newton step.
const MAX_HALVINGS: usize = 30;

/// A fitted annualised survival model. It holds no data.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct AnnualizedFit {
    /// Term names, in coefficient order.
    pub terms: Vec<String>,
    /// Maximum-likelihood estimates (logit of the annual probability).
    pub coefficients: Vec<f64>,
    /// Inverse observed information at the estimate.
    pub covariance: Vec<Vec<f64>>,
    /// √ of the covariance diagonal.
    pub std_errors: Vec<f64>,
    /// Wald statistics b / SE.
    pub z: Vec<f64>,
    /// Two-sided normal p-values.
    pub p_values: Vec<f64>,
    /// ℓ at the estimate.
    pub log_likelihood: f64,
    /// −2ℓ (the saturated model of 0/1 data has ℓ = 0).
    pub deviance: f64,
    /// −2ℓ + 2k.
    pub aic: f64,
    /// −2ℓ + k ln n_obs.
    pub bic: f64,
    /// Newton iterations.
    pub iterations: usize,
    /// Rows with non-zero weight.
    pub n_obs: usize,
}

/// Log-likelihood, gradient and Hessian contributions of one record, as functions of η.
///
/// # Formula
/// With ln p = −ln(1 + e^−η), Lₐ = L ln p, P = e^{Lₐ}, g = dlnP/dη = L(1 − p) and
/// g′ = −L p(1 − p): outcome 1 gives ℓ = Lₐ, ℓ′ = g, ℓ″ = g′; outcome 0 gives ℓ = ln(1 − P),
/// ℓ′ = −P g/(1 − P), ℓ″ = −P [g² + g′(1 − P)]/(1 − P)²; 1 − P is computed as −expm1(Lₐ).
fn record_terms(eta: f64, years: f64, y: f64) -> (f64, f64, f64) {
    let ln_p = -(-eta).exp().ln_1p();
    let ln_p = if ln_p.is_finite() { ln_p } else { eta };
    let p = ln_p.exp();
    let la = years * ln_p;
    let g = years * (1.0 - p);
    let g1 = -years * p * (1.0 - p);
    if y == 1.0 {
        return (la, g, g1);
    }
    let big_p = la.exp();
    let q = -la.exp_m1();
    (q.ln(), -big_p * g / q, -big_p * (g * g + g1 * q) / (q * q))
}

/// The data of an annualised fit in contiguous form (borrowed when it already is).
struct Columns<'a> {
    x: CowArray<'a, f64, Ix2>,
    y: CowArray<'a, f64, Ix1>,
    years: CowArray<'a, f64, Ix1>,
    weights: Option<CowArray<'a, f64, Ix1>>,
    offset: Option<CowArray<'a, f64, Ix1>>,
}

impl<'a> Columns<'a> {
    fn new<'d: 'a>(data: &GlmData<'d>, years: ArrayView1<'a, f64>) -> Self {
        Columns {
            x: contiguous(data.x),
            y: contiguous(data.y),
            years: contiguous(years),
            weights: data.weights.map(contiguous),
            offset: data.offset.map(contiguous),
        }
    }
}

/// The view itself when it is in standard layout, else a standard-layout copy.
fn contiguous<D: ndarray::Dimension>(v: ArrayView<'_, f64, D>) -> CowArray<'_, f64, D> {
    if v.is_standard_layout() {
        CowArray::from(v)
    } else {
        CowArray::from(v.as_standard_layout().into_owned())
    }
}

/// A standard-layout array as a slice (never empty-handed: standard layout is contiguous).
fn slice<'b, D: ndarray::Dimension>(a: &'b CowArray<f64, D>) -> &'b [f64] {
    a.as_slice().unwrap_or(&[])
}

/// ℓ(β), its gradient and the Hessian (row-major p×p), in one blocked pass over the rows.
fn evaluate(c: &Columns, beta: &[f64]) -> (f64, Vec<f64>, Vec<f64>) {
    let (y, years) = (slice(&c.y), slice(&c.years));
    let weights = c.weights.as_ref().map(slice);
    let offset = c.offset.as_ref().map(slice);
    let mut ll = 0.0;
    let (info, grad) =
        weighted_cross_products(slice(&c.x), beta.len(), beta, |first, eta, w, v| {
            for (r, (&eta, (w, v))) in eta.iter().zip(w.iter_mut().zip(v)).enumerate() {
                let i = first + r;
                let wt = weights.map_or(1.0, |wts| wts[i]);
                if wt == 0.0 {
                    (*w, *v) = (0.0, 0.0);
                    continue;
                }
                let (l, d1, d2) = record_terms(eta + offset.map_or(0.0, |o| o[i]), years[i], y[i]);
                ll += wt * l;
                (*w, *v) = (wt * d2, wt * d1);
            }
        });
    (ll, grad, info)
}

fn check(data: &GlmData, years: ArrayView1<f64>) -> Result<usize, ModelError> {
    let n = data.x.nrows();
    let bad = |m: String| Err(ModelError::Invalid(m));
    if data.trials.is_some() {
        return bad(
            "the annualised model takes one 0/1 outcome per record, not successes/trials".into(),
        );
    }
    if years.len() != n || data.y.len() != n || data.terms.len() != data.x.ncols() {
        return bad(format!(
            "years, response and design must have {n} rows and matching terms"
        ));
    }
    for i in 0..n {
        let (y, l) = (data.y[i], years[i]);
        if y != 0.0 && y != 1.0 {
            return bad(format!("row {}: response {y} is not 0 or 1", i + 1));
        }
        if !(l.is_finite() && l > 0.0) {
            return bad(format!("row {}: interval {l} years is not positive", i + 1));
        }
        if data
            .weights
            .is_some_and(|w| !(w[i].is_finite() && w[i] >= 0.0))
        {
            return bad(format!(
                "row {}: weight is not a non-negative number",
                i + 1
            ));
        }
    }
    Ok(data
        .weights
        .map_or(n, |w| w.iter().filter(|&&v| v > 0.0).count()))
}

/// Fits the annualised survival model by Newton–Raphson with analytic gradient and Hessian,
/// step-halving on ℓ, from β = 0. Stops when the relative change of ℓ is below
/// [`IRLS_DEVIANCE_RTOL`] and the largest coefficient change |Δβ|/(|β| + 0.1) below
/// [`IRLS_COEF_RTOL`]. SEs from the inverse observed information −H⁻¹ at the estimate.
///
/// # Formula
/// ℓ(β) = Σᵢ wᵢ [yᵢ Lᵢ ln p(ηᵢ) + (1 − yᵢ) ln(1 − p(ηᵢ)^Lᵢ)], p = 1/(1 + e^−η), η = xᵀβ (+ offset).
///
/// # Errors
/// [`ModelError::Invalid`] for bad input, [`ModelError::NotConverged`] when Newton fails
/// (including a Hessian that is not negative definite at the end, e.g. under separation).
pub fn fit_annualized(data: &GlmData, years: ArrayView1<f64>) -> Result<AnnualizedFit, ModelError> {
    fit_annualized_with(data, years, &FitControl::default())
}

/// [`fit_annualized`] with explicit iteration limits.
///
/// # Errors
/// As [`fit_annualized`]; [`ModelError::NotConverged`] after `control.max_iterations` steps.
pub fn fit_annualized_with(
    data: &GlmData,
    years: ArrayView1<f64>,
    control: &FitControl,
) -> Result<AnnualizedFit, ModelError> {
    let n_obs = check(data, years)?;
    let p = data.x.ncols();
    let failed = |iterations, ll: f64| {
        ModelError::NotConverged {
        iterations,
        deviance: -2.0 * ll,
        hint: "the annualised likelihood has no finite maximum here (check for separation or collinear terms)".into(),
    }
    };
    let mut beta = vec![0.0; p];
    let columns = Columns::new(data, years);
    let (mut ll, mut grad, mut hess) = evaluate(&columns, &beta);
    for iteration in 1..=control.max_iterations {
        let info: Vec<f64> = hess.iter().map(|h| -h).collect();
        let delta = SpdFactor::new(&info, p)
            .map(|f| f.solve(&grad))
            // Far from the maximum the observed information need not be positive definite:
            // take a scaled gradient step instead.
            .unwrap_or_else(|| grad.iter().map(|g| g * 1e-3).collect());
        let mut step = 1.0;
        let mut accepted = None;
        for _ in 0..=MAX_HALVINGS {
            let trial: Vec<f64> = beta.iter().zip(&delta).map(|(b, d)| b + step * d).collect();
            let eval = evaluate(&columns, &trial);
            if eval.0.is_finite() && eval.0 >= ll - 1e-12 * ll.abs() {
                accepted = Some((trial, eval));
                break;
            }
            step *= 0.5;
        }
        let (trial, (new_ll, new_grad, new_hess)) =
            accepted.ok_or_else(|| failed(iteration, ll))?;
        let coef_change = trial
            .iter()
            .zip(&beta)
            .map(|(b, o)| (b - o).abs() / (b.abs() + 0.1))
            .fold(0.0, f64::max);
        let ll_change = (new_ll - ll).abs() / (new_ll.abs() + 0.1);
        (beta, ll, grad, hess) = (trial, new_ll, new_grad, new_hess);
        if coef_change < IRLS_COEF_RTOL && ll_change < IRLS_DEVIANCE_RTOL {
            let info: Vec<f64> = hess.iter().map(|h| -h).collect();
            let covariance = SpdFactor::new(&info, p)
                .ok_or_else(|| failed(iteration, ll))?
                .inverse();
            return Ok(finish(data, beta, covariance, ll, iteration, n_obs));
        }
    }
    Err(failed(control.max_iterations, ll))
}

fn finish(
    data: &GlmData,
    coefficients: Vec<f64>,
    covariance: Vec<Vec<f64>>,
    ll: f64,
    iterations: usize,
    n_obs: usize,
) -> AnnualizedFit {
    let k = coefficients.len();
    let (std_errors, z, p_values) = wald(&coefficients, &covariance);
    AnnualizedFit {
        terms: data.terms.to_vec(),
        p_values,
        z,
        std_errors,
        coefficients,
        covariance,
        log_likelihood: ll,
        deviance: -2.0 * ll,
        aic: -2.0 * ll + 2.0 * k as f64,
        bic: -2.0 * ll + k as f64 * (n_obs as f64).ln(),
        iterations,
        n_obs,
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use ndarray::array;

    #[test]
    fn derivatives_match_finite_differences() {
        let h = 1e-6;
        for (eta, years, y) in [
            (2.0, 5.0, 0.0),
            (2.0, 5.0, 1.0),
            (-0.5, 1.0, 0.0),
            (4.0, 10.0, 0.0),
        ] {
            let (l, d1, d2) = record_terms(eta, years, y);
            let (lp, d1p, _) = record_terms(eta + h, years, y);
            let (lm, d1m, _) = record_terms(eta - h, years, y);
            assert!(
                ((lp - lm) / (2.0 * h) - d1).abs() < 1e-6 * d1.abs().max(1.0),
                "ℓ′ at {eta}"
            );
            assert!(
                ((d1p - d1m) / (2.0 * h) - d2).abs() < 1e-6 * d2.abs().max(1.0),
                "ℓ″ at {eta}"
            );
            // handbook-checks.md "Survival over intervals": ℓ = y·L·ln p + (1 − y)·ln(1 − p^L).
            let p = 1.0 / (1.0 + (-eta).exp());
            let direct = y * years * p.ln() + (1.0 - y) * (1.0 - p.powf(years)).ln();
            assert!((l - direct).abs() < 1e-12, "ℓ at {eta}");
        }
    }

    #[test]
    fn gradient_of_the_sum_matches_finite_differences() {
        let x = array![[1.0, 0.5], [1.0, -1.0], [1.0, 2.0], [1.0, 0.0]];
        let y = array![1.0, 0.0, 1.0, 0.0];
        let years = array![5.0, 3.0, 7.0, 5.0];
        let terms = vec!["(intercept)".to_string(), "x".to_string()];
        let data = GlmData {
            x: x.view(),
            terms: &terms,
            y: y.view(),
            trials: None,
            weights: None,
            offset: None,
        };
        let beta = [1.5, 0.3];
        let columns = Columns::new(&data, years.view());
        let (_, grad, hess) = evaluate(&columns, &beta);
        let h = 1e-6;
        for j in 0..2 {
            let mut up = beta;
            let mut down = beta;
            up[j] += h;
            down[j] -= h;
            let (lu, gu, _) = evaluate(&columns, &up);
            let (ld, gd, _) = evaluate(&columns, &down);
            assert!(((lu - ld) / (2.0 * h) - grad[j]).abs() < 1e-6);
            for k in 0..2 {
                assert!(((gu[k] - gd[k]) / (2.0 * h) - hess[k * 2 + j]).abs() < 1e-5);
            }
        }
    }
}
