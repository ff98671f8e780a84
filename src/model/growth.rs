//! The diameter-growth model: ordinary least squares (Householder QR) on a transformed
//! increment, with the statistics R's `lm` reports.

use ndarray::{ArrayView1, ArrayView2};
use statrs::distribution::{ContinuousCDF, StudentsT};

use super::linalg::least_squares_qr;
use super::ModelError;
use crate::model::file::GrowthResponse;

/// The additive log-scale term of the lognormal back-transform (Baskerville 1972): the mean of
/// exp(ε) for ε ~ N(0, σ²) is exp(σ²/2), so an expected increment from a model of ln(increment)
/// adds σ²/2 to the linear predictor (docs/maths.md#baskerville-correction).
///
/// # Formula
/// c = σ² / 2.
#[inline]
pub fn baskerville_log_term(sigma: f64) -> f64 {
    0.5 * sigma * sigma
}

/// A fitted OLS regression. Holds no data.
#[derive(Debug, Clone, PartialEq)]
pub struct OlsFit {
    /// Coefficient names (term labels).
    pub names: Vec<String>,
    /// Estimates.
    pub coefficients: Vec<f64>,
    /// Standard errors √(σ² (XᵀX)⁻¹)ⱼⱼ.
    pub std_errors: Vec<f64>,
    /// t statistics.
    pub t_values: Vec<f64>,
    /// Two-sided p-values from the t distribution with `df_residual` degrees of freedom.
    pub p_values: Vec<f64>,
    /// Covariance σ² (XᵀX)⁻¹, row by row.
    pub covariance: Vec<Vec<f64>>,
    /// Residual standard error √(RSS / df).
    pub residual_sd: f64,
    /// Coefficient of determination (centred when the model has an intercept, as R does).
    pub r_squared: f64,
    /// Adjusted R².
    pub adj_r_squared: f64,
    /// Records in the fit.
    pub records: usize,
    /// n − p.
    pub df_residual: usize,
    /// Residual sum of squares.
    pub rss: f64,
    /// Gaussian log-likelihood at the MLE of σ (as R `logLik.lm`).
    pub log_likelihood: f64,
    /// AIC counting σ as a parameter (R).
    pub aic: f64,
    /// BIC counting σ as a parameter (R).
    pub bic: f64,
}

/// Fit y = Xβ + ε by least squares.
///
/// `intercept` says whether column 0 of `x` is the intercept (R² is then centred).
///
/// # Formula
/// β̂ = R⁻¹Qᵀy; σ̂² = RSS/(n − p); Cov = σ̂² (RᵀR)⁻¹; R² = 1 − RSS/TSS;
/// adj. R² = 1 − (1 − R²)(n − i)/(n − p) with i = 1 with an intercept, else 0;
/// ℓ = −n/2 (ln 2π + ln(RSS/n) + 1); AIC = −2ℓ + 2(p + 1); BIC = −2ℓ + ln(n)(p + 1).
///
/// # Errors
/// [`ModelError::Invalid`] with fewer records than coefficients + 1;
/// [`ModelError::RankDeficient`] naming the first aliased column.
pub fn fit_ols(
    x: ArrayView2<f64>,
    y: ArrayView1<f64>,
    names: &[String],
    intercept: bool,
) -> Result<OlsFit, ModelError> {
    let (n, p) = x.dim();
    if n <= p {
        return Err(ModelError::Invalid(format!(
            "{n} records cannot estimate {p} coefficients and a residual variance"
        )));
    }
    let ls = least_squares_qr(x, y, names)?;
    let df = n - p;
    let fitted = x.dot(&ndarray::ArrayView1::from(&ls.coefficients));
    let rss: f64 = y
        .iter()
        .zip(fitted.iter())
        .map(|(a, b)| (a - b) * (a - b))
        .sum();
    let sigma2 = rss / df as f64;
    let tss: f64 = if intercept {
        let mean = y.sum() / n as f64;
        y.iter().map(|v| (v - mean) * (v - mean)).sum()
    } else {
        y.iter().map(|v| v * v).sum()
    };
    let r_squared = 1.0 - rss / tss;
    let adj_r_squared = 1.0 - (1.0 - r_squared) * (n - usize::from(intercept)) as f64 / df as f64;
    let covariance: Vec<Vec<f64>> = ls
        .unscaled_covariance
        .iter()
        .map(|row| row.iter().map(|v| v * sigma2).collect())
        .collect();
    let std_errors: Vec<f64> = (0..p).map(|j| covariance[j][j].sqrt()).collect();
    let t_values: Vec<f64> = ls
        .coefficients
        .iter()
        .zip(&std_errors)
        .map(|(b, s)| b / s)
        .collect();
    let t_dist = StudentsT::new(0.0, 1.0, df as f64)
        .map_err(|e| ModelError::Invalid(format!("t distribution: {e}")))?;
    let p_values = t_values.iter().map(|t| 2.0 * t_dist.sf(t.abs())).collect();
    let nf = n as f64;
    let log_likelihood = -0.5 * nf * ((2.0 * std::f64::consts::PI).ln() + (rss / nf).ln() + 1.0);
    let k = (p + 1) as f64;
    Ok(OlsFit {
        names: names.to_vec(),
        coefficients: ls.coefficients,
        std_errors,
        t_values,
        p_values,
        covariance,
        residual_sd: sigma2.sqrt(),
        r_squared,
        adj_r_squared,
        records: n,
        df_residual: df,
        rss,
        log_likelihood,
        aic: -2.0 * log_likelihood + 2.0 * k,
        bic: -2.0 * log_likelihood + nf.ln() * k,
    })
}

/// Why a record was left out of a growth fit.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum GrowthExclusion {
    /// Basal-area increment ≤ 0 (a `ln_bai` response cannot be formed).
    NonPositiveIncrement,
}

/// The growth response of one record, or why it cannot be formed.
///
/// # Formula
/// `ln_bai`: BAI = π/4 · (d₂² − d₁²) cm² over the interval; with `annualize`, divided by the
/// interval in years (the model then describes one year); response ln(BAI).
/// `annual_increment`: (d₂ − d₁) / years.
pub fn growth_response(
    response: GrowthResponse,
    dbh1: f64,
    dbh2: f64,
    years: f64,
    annualize: bool,
) -> Result<f64, GrowthExclusion> {
    match response {
        GrowthResponse::LnBai => {
            let mut bai = std::f64::consts::FRAC_PI_4 * (dbh2 * dbh2 - dbh1 * dbh1);
            if annualize {
                bai /= years;
            }
            if bai > 0.0 {
                Ok(bai.ln())
            } else {
                Err(GrowthExclusion::NonPositiveIncrement)
            }
        }
        GrowthResponse::AnnualIncrement | GrowthResponse::Column => Ok((dbh2 - dbh1) / years),
    }
}
