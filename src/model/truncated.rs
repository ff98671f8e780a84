//! Zero-truncated count distributions for the count part of the ingrowth hurdle: the
//! negative binomial NB2 (Var = μ + αμ² before truncation) and the Poisson, each with the exact
//! first and second derivatives of one row's log-likelihood in (η, α). The formulas and their
//! derivation are in `docs/ingrowth.md` ("The count part"). The Newton fit that uses them is
//! [`crate::model::truncated_fit`].

use serde::{Deserialize, Serialize};
use statrs::function::factorial::ln_factorial;

/// The distribution of the count given that it is positive.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Default, Serialize, Deserialize)]
#[serde(rename_all = "snake_case")]
pub enum CountFamily {
    /// Zero-truncated negative binomial NB2 with dispersion α (Var = μ + αμ² before truncation).
    #[default]
    NegativeBinomial,
    /// Zero-truncated Poisson.
    Poisson,
}

impl CountFamily {
    /// The name used in model files and summaries: `negative_binomial` or `poisson`.
    pub fn as_str(self) -> &'static str {
        match self {
            CountFamily::NegativeBinomial => "negative_binomial",
            CountFamily::Poisson => "poisson",
        }
    }

    /// Whether the family has the dispersion parameter α.
    pub fn has_alpha(self) -> bool {
        self == CountFamily::NegativeBinomial
    }
}

/// The probability of a zero count under the untruncated distribution with mean `mu`.
///
/// # Formula
/// NB2: P₀ = (1 + αμ)^(−1/α) = exp(−ln(1 + αμ)/α); Poisson (or α = 0): P₀ = e^(−μ).
///
/// # Examples
/// ```
/// use stemcast::model::truncated::{zero_probability, CountFamily};
/// // Derived analytically: (1 + 0.5·2)^(−2) = 1/4, and e^(−2).
/// assert!((zero_probability(CountFamily::NegativeBinomial, 2.0, 0.5) - 0.25).abs() < 1e-15);
/// assert!((zero_probability(CountFamily::Poisson, 2.0, 0.0) - (-2f64).exp()).abs() < 1e-15);
/// ```
pub fn zero_probability(family: CountFamily, mu: f64, alpha: f64) -> f64 {
    ln_zero_probability(family, mu, alpha).exp()
}

/// ln P₀ (see [`zero_probability`]).
fn ln_zero_probability(family: CountFamily, mu: f64, alpha: f64) -> f64 {
    match family {
        CountFamily::NegativeBinomial if alpha > 0.0 => -(alpha * mu).ln_1p() / alpha,
        _ => -mu,
    }
}

/// The mean of the count given that it is positive, E\[N | N > 0\].
///
/// # Formula
/// E\[N | N > 0\] = μ / (1 − P₀), with 1 − P₀ = −expm1(ln P₀) so that small μ keeps its digits
/// (the limit as μ → 0 is 1).
///
/// # Examples
/// ```
/// use stemcast::model::truncated::{mean_given_positive, CountFamily};
/// // Derived analytically: μ = 2, α = 0.5 gives P₀ = 1/4 and 2 / (3/4) = 8/3.
/// let m = mean_given_positive(CountFamily::NegativeBinomial, 2.0, 0.5);
/// assert!((m - 8.0 / 3.0).abs() < 1e-15);
/// ```
pub fn mean_given_positive(family: CountFamily, mu: f64, alpha: f64) -> f64 {
    let not_zero = -ln_zero_probability(family, mu, alpha).exp_m1();
    if not_zero > 0.0 {
        mu / not_zero
    } else {
        1.0
    }
}

/// One row's log-likelihood and its exact derivatives in η = xᵀβ + offset and α.
#[derive(Debug, Clone, Copy, PartialEq, Default)]
pub(crate) struct RowTerms {
    /// ℓ.
    pub ll: f64,
    /// ∂ℓ/∂η.
    pub d_eta: f64,
    /// ∂ℓ/∂α (0 for the Poisson).
    pub d_alpha: f64,
    /// ∂²ℓ/∂η².
    pub d_eta_eta: f64,
    /// ∂²ℓ/∂η∂α.
    pub d_eta_alpha: f64,
    /// ∂²ℓ/∂α².
    pub d_alpha_alpha: f64,
}

/// ln y! for a count y ≥ 0 (exact table below 171, Stirling series above).
pub(crate) fn ln_count_factorial(y: u64) -> f64 {
    ln_factorial(y)
}

/// f(x) = ln(1 + x) − x/(1 + x), by its series for small x where the difference cancels.
///
/// # Formula
/// f(x) = Σ_{k≥2} (−1)^k (k − 1)/k · x^k for 0 ≤ x < 0.1.
fn log_minus_ratio(x: f64) -> f64 {
    if x >= 0.1 {
        return x.ln_1p() - x / (1.0 + x);
    }
    series(x, 2, |k| (k - 1.0) / k)
}

/// c(x) = −2 ln(1 + x) + 2x/(1 + x) + x²/(1 + x)², by its series for small x.
///
/// # Formula
/// c(x) = Σ_{k≥3} (−1)^k (k − 1)(k − 2)/k · x^k for 0 ≤ x < 0.1.
fn second_log_term(x: f64) -> f64 {
    if x >= 0.1 {
        let r = x / (1.0 + x);
        return -2.0 * x.ln_1p() + 2.0 * r + r * r;
    }
    series(x, 3, |k| (k - 1.0) * (k - 2.0) / k)
}

/// Σ_{k ≥ first} (−1)^k coef(k) x^k for 0 ≤ x < 0.1, to full double precision.
fn series(x: f64, first: i32, coef: impl Fn(f64) -> f64) -> f64 {
    let mut power = x.powi(first);
    let mut sum = 0.0;
    for k in first..first + 40 {
        let sign = if k % 2 == 0 { 1.0 } else { -1.0 };
        let term = sign * coef(f64::from(k)) * power;
        sum += term;
        if term.abs() <= 1e-18 * sum.abs() {
            break;
        }
        power *= x;
    }
    sum
}

/// Adds the zero-truncation correction −ln(1 − P₀) to the untruncated row terms.
///
/// # Formula
/// With L = ln P₀ and h = P₀/(1 − P₀) = 1/expm1(−L): ℓ = ℓ_u − ln(−expm1(L)),
/// ∂ℓ/∂θ = ∂ℓ_u/∂θ + h L_θ and ∂²ℓ/∂θ∂φ = ∂²ℓ_u/∂θ∂φ + h L_θφ + h(1 + h) L_θ L_φ.
fn truncate(untruncated: RowTerms, l: [f64; 6]) -> RowTerms {
    let [ln_p0, l_e, l_a, l_ee, l_ea, l_aa] = l;
    let h = 1.0 / (-ln_p0).exp_m1();
    let hh = h * (1.0 + h);
    RowTerms {
        ll: untruncated.ll - (-ln_p0.exp_m1()).ln(),
        d_eta: untruncated.d_eta + h * l_e,
        d_alpha: untruncated.d_alpha + h * l_a,
        d_eta_eta: untruncated.d_eta_eta + h * l_ee + hh * l_e * l_e,
        d_eta_alpha: untruncated.d_eta_alpha + h * l_ea + hh * l_e * l_a,
        d_alpha_alpha: untruncated.d_alpha_alpha + h * l_aa + hh * l_a * l_a,
    }
}

/// Row terms of the zero-truncated NB2 at count `y ≥ 1`, linear predictor `eta`
/// (offset included) and dispersion `alpha > 0`; `ln_y_fact` = ln y!.
///
/// # Formula
/// μ = e^η, x = αμ, r = 1/α. Untruncated:
/// ℓ_u = Σ_{j<y} ln(1 + jα) − ln y! + yη − (y + r) ln(1 + x);
/// ∂ℓ_u/∂η = (y − μ)/(1 + x), ∂²ℓ_u/∂η² = −μ(1 + αy)/(1 + x)²,
/// ∂ℓ_u/∂α = Σ_{j<y} j/(1 + jα) + r² f(x) − yμ/(1 + x),
/// ∂²ℓ_u/∂α² = −Σ_{j<y} j²/(1 + jα)² + r³ c(x) + yμ²/(1 + x)²,
/// ∂²ℓ_u/∂η∂α = −(y − μ)μ/(1 + x)².
/// ln P₀ = L = −r ln(1 + x): L_η = −μ/(1 + x), L_ηη = −μ/(1 + x)², L_α = r² f(x),
/// L_αα = r³ c(x), L_ηα = μ²/(1 + x)²; f and c as in `docs/ingrowth.md`.
pub(crate) fn nb_row(y: u64, eta: f64, alpha: f64, ln_y_fact: f64) -> RowTerms {
    let mu = eta.exp();
    let yf = y as f64;
    let x = alpha * mu;
    let r = 1.0 / alpha;
    let l1p = x.ln_1p();
    let (mut s0, mut s1, mut s2) = (0.0, 0.0, 0.0);
    for j in 1..y {
        let ja = j as f64 * alpha;
        s0 += ja.ln_1p();
        let t = j as f64 / (1.0 + ja);
        s1 += t;
        s2 += t * t;
    }
    let one_x = 1.0 + x;
    let one_x2 = one_x * one_x;
    let f = log_minus_ratio(x);
    let c = second_log_term(x);
    let untruncated = RowTerms {
        ll: s0 - ln_y_fact + yf * eta - (yf + r) * l1p,
        d_eta: (yf - mu) / one_x,
        d_alpha: s1 + r * r * f - yf * mu / one_x,
        d_eta_eta: -mu * (1.0 + alpha * yf) / one_x2,
        d_eta_alpha: -(yf - mu) * mu / one_x2,
        d_alpha_alpha: -s2 + r * r * r * c + yf * mu * mu / one_x2,
    };
    truncate(
        untruncated,
        [
            -r * l1p,
            -mu / one_x,
            r * r * f,
            -mu / one_x2,
            mu * mu / one_x2,
            r * r * r * c,
        ],
    )
}

/// Row terms of the zero-truncated Poisson at count `y ≥ 1` and linear predictor `eta`.
///
/// # Formula
/// μ = e^η: ℓ_u = yη − μ − ln y!, ∂ℓ_u/∂η = y − μ, ∂²ℓ_u/∂η² = −μ; L = ln P₀ = −μ with
/// L_η = L_ηη = −μ; the α terms are 0.
pub(crate) fn poisson_row(y: u64, eta: f64, ln_y_fact: f64) -> RowTerms {
    let mu = eta.exp();
    let yf = y as f64;
    let untruncated = RowTerms {
        ll: yf * eta - mu - ln_y_fact,
        d_eta: yf - mu,
        d_eta_eta: -mu,
        ..RowTerms::default()
    };
    truncate(untruncated, [-mu, -mu, 0.0, -mu, 0.0, 0.0])
}

#[cfg(test)]
mod tests {
    use super::*;

    /// Central differences of `f` at `x` with step `h`.
    fn diff(f: impl Fn(f64) -> f64, x: f64, h: f64) -> f64 {
        (f(x + h) - f(x - h)) / (2.0 * h)
    }

    #[test]
    fn series_match_the_closed_forms_where_both_are_accurate() {
        // Derived analytically: the series are the Taylor expansions of the closed forms; at
        // x = 0.09 the closed forms lose only about two digits to cancellation.
        let x: f64 = 0.09;
        let r = x / (1.0 + x);
        assert!((log_minus_ratio(x) - (x.ln_1p() - r)).abs() < 1e-15);
        assert!((second_log_term(x) - (-2.0 * x.ln_1p() + 2.0 * r + r * r)).abs() < 1e-15);
    }

    #[test]
    fn nb_log_likelihood_is_the_truncated_nb2_probability() {
        // Derived analytically: y = 2, μ = 2, α = 0.5 (size 2): NB(2) = C(3, 2) (1/2)² (1/2)²
        // = 3/16, P₀ = (1/2)² = 1/4, so the truncated probability is (3/16)/(3/4) = 1/4.
        let t = nb_row(2, 2f64.ln(), 0.5, 2f64.ln());
        assert!((t.ll - 0.25f64.ln()).abs() < 1e-14, "{}", t.ll);
        // Poisson: y = 1, μ = 1: e^−1 / (1 − e^−1) = 1/(e − 1).
        let t = poisson_row(1, 0.0, 0.0);
        assert!((t.ll + (1f64.exp() - 1.0).ln()).abs() < 1e-15);
    }

    #[test]
    fn nb_derivatives_match_central_differences() {
        // Derived analytically: each derivative is the limit of the difference quotient of the
        // lower-order term; the step 1e-5 leaves an error of order 1e-10 relative.
        for &(y, eta, alpha) in &[
            (1u64, -1.5, 0.6),
            (3, 1.2, 0.05),
            (12, 2.5, 2.0),
            (2, 0.3, 1e-3),
        ] {
            let lf = ln_count_factorial(y);
            let at = |e: f64, a: f64| nb_row(y, e, a, lf);
            let t = at(eta, alpha);
            let h = 1e-5;
            let checks = [
                (t.d_eta, diff(|e| at(e, alpha).ll, eta, h)),
                (t.d_alpha, diff(|a| at(eta, a).ll, alpha, h * alpha)),
                (t.d_eta_eta, diff(|e| at(e, alpha).d_eta, eta, h)),
                (t.d_eta_alpha, diff(|a| at(eta, a).d_eta, alpha, h * alpha)),
                (
                    t.d_alpha_alpha,
                    diff(|a| at(eta, a).d_alpha, alpha, h * alpha),
                ),
            ];
            for (k, (exact, numeric)) in checks.iter().enumerate() {
                let tol = 1e-6 * (1.0 + numeric.abs());
                assert!(
                    (exact - numeric).abs() < tol,
                    "y={y} η={eta} α={alpha} #{k}: {exact} vs {numeric}"
                );
            }
        }
    }

    #[test]
    fn poisson_derivatives_match_central_differences() {
        // Derived analytically as above.
        for &(y, eta) in &[(1u64, -3.0), (4, 1.0), (30, 3.4)] {
            let lf = ln_count_factorial(y);
            let t = poisson_row(y, eta, lf);
            let d1 = diff(|e| poisson_row(y, e, lf).ll, eta, 1e-5);
            let d2 = diff(|e| poisson_row(y, e, lf).d_eta, eta, 1e-5);
            assert!((t.d_eta - d1).abs() < 1e-6 * (1.0 + d1.abs()));
            assert!((t.d_eta_eta - d2).abs() < 1e-6 * (1.0 + d2.abs()));
        }
    }

    #[test]
    fn small_alpha_approaches_the_poisson() {
        // Derived analytically: NB2 tends to the Poisson as α → 0, with ℓ_NB − ℓ_P = O(α).
        let nb = nb_row(5, 1.0, 1e-9, ln_count_factorial(5));
        let p = poisson_row(5, 1.0, ln_count_factorial(5));
        assert!((nb.ll - p.ll).abs() < 1e-7);
        assert!((nb.d_eta - p.d_eta).abs() < 1e-7);
        assert!(nb.d_alpha.is_finite() && nb.d_alpha_alpha.is_finite());
    }
}
