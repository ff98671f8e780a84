//! Mixed models with a random plot intercept: the binomial GLMM of survival (maximum
//! likelihood by adaptive Gauss–Hermite quadrature) and the linear mixed model of growth
//! (REML or ML). The maths, the conventions of the standard errors and of the
//! likelihood-ratio test are in docs/mixed-models.md.

pub mod entry;
pub mod family;
pub mod glmm;
pub mod glmm_data;
pub mod glmm_fit;
pub(crate) mod kernels;
pub mod lmm;
mod lmm_profile;
pub mod normal;
pub mod optimize;
pub mod quadrature;
pub mod simulate;

use serde::Serialize;
use statrs::distribution::{ChiSquared, ContinuousCDF};

pub use family::Family;
pub use glmm_data::{GlmmColumns, GlmmData};
pub use glmm_fit::{fit_glmm, GlmmFit, GlmmOptions};
pub use lmm::{fit_lmm, LmmFit, LmmMethod};
pub use quadrature::{marginal_probability, GaussHermite};

use crate::model::link::Link;

/// How a plot effect was estimated.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize)]
#[serde(rename_all = "lowercase")]
pub enum PlotEffectMethod {
    /// GLMM, Laplace approximation (one quadrature node).
    Laplace,
    /// GLMM, adaptive Gauss–Hermite quadrature.
    Agq,
    /// LMM, restricted maximum likelihood.
    Reml,
    /// LMM, maximum likelihood.
    Ml,
}

impl PlotEffectMethod {
    /// The lowercase name used in summaries and model files.
    pub fn name(self) -> &'static str {
        match self {
            PlotEffectMethod::Laplace => "laplace",
            PlotEffectMethod::Agq => "agq",
            PlotEffectMethod::Reml => "reml",
            PlotEffectMethod::Ml => "ml",
        }
    }
}

/// One plot's conditional mode and conditional SD.
#[derive(Debug, Clone, Copy, PartialEq, Serialize)]
pub struct PlotMode {
    /// The plot's code in the caller's numbering.
    pub code: u32,
    /// Conditional mode û_j (for the LMM, the BLUP).
    pub mode: f64,
    /// Conditional SD.
    pub sd: f64,
}

/// The likelihood-ratio test of σ_u > 0 against the model without a plot effect.
#[derive(Debug, Clone, Copy, PartialEq, Serialize)]
pub struct BoundaryLrTest {
    /// 2(ℓ_mixed − ℓ_without), 0 when negative.
    pub statistic: f64,
    /// The p-value of the ½χ²₀ + ½χ²₁ mixture.
    pub p_value: f64,
}

/// The boundary-corrected likelihood-ratio test of σ_u = 0 (Self & Liang 1987).
///
/// # Formula
/// T = 2(ℓ₁ − ℓ₀); p = ½ P(χ²₁ > T) for T > 0; a T ≤ 0 counts as 0 with p = 1.
pub fn boundary_lr_test(ll_mixed: f64, ll_without: f64) -> BoundaryLrTest {
    let t = 2.0 * (ll_mixed - ll_without);
    if t.is_nan() || t <= 0.0 {
        return BoundaryLrTest {
            statistic: 0.0,
            p_value: 1.0,
        };
    }
    let p = ChiSquared::new(1.0).map_or(f64::NAN, |c| 0.5 * c.sf(t));
    BoundaryLrTest {
        statistic: t,
        p_value: p,
    }
}

/// The variance of the standard latent error of a binary model's link: π²/3 (logistic, also
/// the annualised model), 1 (probit), π²/6 (complementary log-log: the Gumbel).
pub fn latent_variance(family: Family) -> f64 {
    let pi2 = std::f64::consts::PI * std::f64::consts::PI;
    match family {
        Family::Binomial(Link::Logit) | Family::Annualized => pi2 / 3.0,
        Family::Binomial(Link::Probit) => 1.0,
        Family::Binomial(Link::Cloglog) => pi2 / 6.0,
    }
}

/// The intraclass correlation σ_u² / (σ_u² + residual variance).
pub fn intraclass_correlation(sd: f64, residual_variance: f64) -> f64 {
    let v = sd * sd;
    v / (v + residual_variance)
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn boundary_test_halves_the_chi_square_tail() {
        // R 4.2.2: 0.5 * pchisq(2.705543, 1, lower.tail = FALSE) = 0.05 (the 90 % point of χ²₁).
        let t = boundary_lr_test(1.3527715, 0.0);
        assert!((t.statistic - 2.705543).abs() < 1e-12);
        assert!((t.p_value - 0.05).abs() < 1e-7);
        let neg = boundary_lr_test(-3.0, -2.0);
        assert_eq!((neg.statistic, neg.p_value), (0.0, 1.0));
        assert_eq!(boundary_lr_test(1.0, 1.0).p_value, 1.0);
    }

    #[test]
    fn latent_scale_icc() {
        // Derived analytically: σ² = π²/3 gives ICC ½ for logit; σ = 1 gives ½ for probit.
        let pi2 = std::f64::consts::PI.powi(2);
        let logit = latent_variance(Family::Binomial(Link::Logit));
        assert!((intraclass_correlation((pi2 / 3.0).sqrt(), logit) - 0.5).abs() < 1e-15);
        let probit = latent_variance(Family::Binomial(Link::Probit));
        assert!((intraclass_correlation(1.0, probit) - 0.5).abs() < 1e-15);
        assert!((latent_variance(Family::Binomial(Link::Cloglog)) - pi2 / 6.0).abs() < 1e-15);
    }
}
