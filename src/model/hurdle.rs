//! The ingrowth hurdle model on a plot-period table held in memory: logistic regression for
//! P(any ingrowth in L years) on every plot period, and a zero-truncated count GLM (NB2 or
//! Poisson, log link, offset ln(area·L)) for the number of new trees on the plot periods that
//! have any. The likelihood factorises, so the two parts are fitted separately and their
//! log-likelihoods add (`docs/ingrowth.md`, "The hurdle model"). [`hurdle_expectation`] gives
//! P(any), E\[N | N > 0\] and E\[N\] for given linear predictors, area and period.

use ndarray::{ArrayView2, Axis};
use serde::Serialize;

use super::glm::{fit_glm, GlmData, GlmFit, GlmOptions};
use super::link::Link;
use super::truncated::{mean_given_positive, zero_probability, CountFamily};
use super::truncated_fit::{fit_truncated, CountData, TruncatedFit};
use super::ModelError;

/// A plot-period table in memory: one row per plot and period.
#[derive(Debug, Clone)]
pub struct PlotPeriods<'a> {
    /// Design of the any-ingrowth part, one row per plot period.
    pub x_any: ArrayView2<'a, f64>,
    /// Column names of `x_any`.
    pub any_terms: &'a [String],
    /// Design of the count part, one row per plot period (only rows with a positive count
    /// enter the fit).
    pub x_count: ArrayView2<'a, f64>,
    /// Column names of `x_count`.
    pub count_terms: &'a [String],
    /// Number of trees that entered the plot in the period.
    pub count: &'a [u64],
    /// Plot area (ha, or acres with imperial units), positive.
    pub area: &'a [f64],
    /// Period length L in years, positive.
    pub years: &'a [f64],
}

/// A fitted hurdle model. It holds no data.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct HurdleFit {
    /// P(any ingrowth): the logistic regression on every plot period.
    pub any: GlmFit,
    /// The count given any: the zero-truncated GLM on the plot periods with ingrowth.
    pub count: TruncatedFit,
    /// Plot periods.
    pub n_obs: usize,
    /// Plot periods with ingrowth.
    pub n_positive: usize,
    /// ℓ_any + ℓ_count.
    pub log_likelihood: f64,
    /// Parameters of both parts (α counted).
    pub n_params: usize,
    /// −2ℓ + 2k.
    pub aic: f64,
    /// −2ℓ + k ln n with n every plot period.
    pub bic: f64,
}

/// Fits the hurdle model to a plot-period table.
///
/// # Errors
/// [`ModelError::Invalid`] for inconsistent lengths, non-positive area or years, no plot
/// period with (or without) ingrowth; the errors of [`fit_glm`] (separation is reported for the
/// any-ingrowth part) and of [`fit_truncated`].
pub fn fit_hurdle(data: &PlotPeriods, family: CountFamily) -> Result<HurdleFit, ModelError> {
    let n = data.count.len();
    if data.x_any.nrows() != n
        || data.x_count.nrows() != n
        || data.area.len() != n
        || data.years.len() != n
    {
        return Err(ModelError::Invalid(format!(
            "plot periods: {n} counts but {} and {} design rows, {} areas, {} periods",
            data.x_any.nrows(),
            data.x_count.nrows(),
            data.area.len(),
            data.years.len()
        )));
    }
    let positive_finite = |v: f64| v > 0.0 && v.is_finite();
    if let Some(i) =
        (0..n).find(|&i| !(positive_finite(data.area[i]) && positive_finite(data.years[i])))
    {
        return Err(ModelError::Invalid(format!(
            "plot period {} has area {} and period {}; both must be positive",
            i + 1,
            data.area[i],
            data.years[i]
        )));
    }
    let positive: Vec<usize> = (0..n).filter(|&i| data.count[i] > 0).collect();
    let n_positive = positive.len();
    if n_positive == 0 || n_positive == n {
        let which = if n_positive == 0 { "none" } else { "every one" };
        return Err(ModelError::Invalid(format!(
            "{which} of the {n} plot periods has ingrowth, so P(any ingrowth) cannot be estimated"
        )));
    }
    let any_y: ndarray::Array1<f64> = data.count.iter().map(|&c| f64::from(c > 0)).collect();
    let any = fit_glm(
        &GlmData {
            x: data.x_any,
            terms: data.any_terms,
            y: any_y.view(),
            trials: None,
            weights: None,
            offset: None,
        },
        &GlmOptions { link: Link::Logit },
    )
    .map_err(|e| match e {
        ModelError::Separation { kind, terms } => ModelError::Invalid(format!(
            "any-ingrowth part: {kind} separation: whether a plot period has ingrowth is perfectly predicted by {}, so the maximum-likelihood estimate does not exist; drop or merge those terms",
            terms.join(", ")
        )),
        other => other,
    })?;
    let x_count = data.x_count.select(Axis(0), &positive);
    let y: Vec<u64> = positive.iter().map(|&i| data.count[i]).collect();
    let offset: Vec<f64> = positive
        .iter()
        .map(|&i| (data.area[i] * data.years[i]).ln())
        .collect();
    let count = fit_truncated(
        &CountData {
            x: x_count.view(),
            terms: data.count_terms,
            y: &y,
            offset: &offset,
        },
        family,
    )?;
    let log_likelihood = any.log_likelihood + count.log_likelihood;
    let n_params = any.coefficients.len() + count.n_params();
    let k = n_params as f64;
    Ok(HurdleFit {
        any,
        count,
        n_obs: n,
        n_positive,
        log_likelihood,
        n_params,
        aic: -2.0 * log_likelihood + 2.0 * k,
        bic: -2.0 * log_likelihood + k * (n as f64).ln(),
    })
}

/// Expected ingrowth of one plot (or stand area) over one period.
#[derive(Debug, Clone, Copy, PartialEq, Serialize)]
pub struct HurdleExpectation {
    /// P(any ingrowth in the period).
    pub p_any: f64,
    /// Mean of the untruncated count distribution, μ = exp(xᵀβ)·area·L.
    pub mu: f64,
    /// P₀ of the untruncated distribution.
    pub p_zero: f64,
    /// E\[N | N > 0\] = μ / (1 − P₀).
    pub mean_given_any: f64,
    /// E\[N\] = P(any)·E\[N | N > 0\].
    pub expected: f64,
    /// E\[N\] / (area·L): new trees per unit area per year.
    pub expected_per_area_per_year: f64,
}

/// The hurdle's expected count for one area and period.
///
/// `eta_any` = x_anyᵀγ (no offset), `eta_count` = x_countᵀβ (without the offset, which is added
/// here as ln(area·L)); `alpha` is ignored for the Poisson.
///
/// # Formula
/// P(any) = 1/(1 + e^(−η_any)); μ = e^(η_count)·area·L; P₀ = (1 + αμ)^(−1/α) (Poisson e^(−μ));
/// E\[N | N > 0\] = μ/(1 − P₀); E\[N\] = P(any)·E\[N | N > 0\].
///
/// # Examples
/// ```
/// use stemcast::model::hurdle::hurdle_expectation;
/// use stemcast::model::truncated::CountFamily;
/// // Derived analytically: η_any = 0 gives P(any) = 1/2; μ = e^0·0.5·4 = 2 with α = 0.5 gives
/// // P₀ = 1/4 and E\[N | N > 0\] = 8/3, so E\[N\] = 4/3.
/// let e = hurdle_expectation(0.0, 0.0, 0.5, 4.0, CountFamily::NegativeBinomial, 0.5);
/// assert!((e.expected - 4.0 / 3.0).abs() < 1e-15);
/// ```
pub fn hurdle_expectation(
    eta_any: f64,
    eta_count: f64,
    area: f64,
    years: f64,
    family: CountFamily,
    alpha: f64,
) -> HurdleExpectation {
    let p_any = Link::Logit.inverse(eta_any);
    let exposure = area * years;
    let mu = eta_count.exp() * exposure;
    let mean_given_any = mean_given_positive(family, mu, alpha);
    let expected = p_any * mean_given_any;
    HurdleExpectation {
        p_any,
        mu,
        p_zero: zero_probability(family, mu, alpha),
        mean_given_any,
        expected,
        expected_per_area_per_year: expected / exposure,
    }
}

/// The log-likelihoods (ℓ_any, ℓ_count) of both parts at given parameters, e.g. to evaluate a
/// stored model on new plot periods. `alpha` is ignored for the Poisson.
///
/// # Formula
/// ℓ_any = Σ [a ln p + (1 − a) ln(1 − p)] with a = 1{N > 0}, p = 1/(1 + e^(−x_anyᵀγ)), computed
/// as ln p = −ln(1 + e^(−η)), ln(1 − p) = −ln(1 + e^η) (without overflow); ℓ_count is the zero-truncated
/// log-likelihood of [`crate::model::truncated_fit::truncated_log_likelihood`] on the rows with
/// N > 0, offset ln(area·L).
///
/// # Errors
/// [`ModelError::Invalid`] for inconsistent lengths.
pub fn hurdle_log_likelihood(
    data: &PlotPeriods,
    family: CountFamily,
    gamma: &[f64],
    beta: &[f64],
    alpha: f64,
) -> Result<(f64, f64), ModelError> {
    let n = data.count.len();
    if data.x_any.dim() != (n, gamma.len()) || data.area.len() != n || data.years.len() != n {
        return Err(ModelError::Invalid(format!(
            "plot periods: {n} counts, a {:?} any-part design for {} coefficients",
            data.x_any.dim(),
            gamma.len()
        )));
    }
    let mut any = 0.0;
    for (row, &c) in data.x_any.rows().into_iter().zip(data.count) {
        let eta: f64 = row.iter().zip(gamma).map(|(x, g)| x * g).sum();
        any -= softplus(if c > 0 { -eta } else { eta });
    }
    let positive: Vec<usize> = (0..n).filter(|&i| data.count[i] > 0).collect();
    let x_count = data.x_count.select(Axis(0), &positive);
    let y: Vec<u64> = positive.iter().map(|&i| data.count[i]).collect();
    let offset: Vec<f64> = positive
        .iter()
        .map(|&i| (data.area[i] * data.years[i]).ln())
        .collect();
    let count = super::truncated_fit::truncated_log_likelihood(
        &CountData {
            x: x_count.view(),
            terms: data.count_terms,
            y: &y,
            offset: &offset,
        },
        family,
        beta,
        alpha,
    )?;
    Ok((any, count))
}

/// ln(1 + eˣ) without overflow.
fn softplus(x: f64) -> f64 {
    x.max(0.0) + (-x.abs()).exp().ln_1p()
}
