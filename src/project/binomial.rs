//! Binomial draws by inversion: the number of deaths among `n` stems, each dying with
//! probability `q`, from one uniform (so each record always consumes exactly one draw).

use statrs::distribution::{Binomial, DiscreteCDF};

/// The smallest k with P(K ≤ k) ≥ u for K ~ Binomial(n, q).
///
/// # Formula
/// Walks the probability mass function upward from k = 0 with
/// `f(k+1) = f(k) · (n−k)/(k+1) · q/(1−q)`, starting from `f(0) = (1−q)^n` in log space;
/// when `f(0)` underflows, falls back to the distribution function of `statrs`.
pub(crate) fn inverse_cdf(n: u64, q: f64, u: f64) -> u64 {
    if q <= 0.0 || n == 0 {
        return 0;
    }
    if q >= 1.0 {
        return n;
    }
    let ln_f0 = n as f64 * (-q).ln_1p();
    if ln_f0 < -600.0 {
        return match Binomial::new(q, n) {
            Ok(b) => b.inverse_cdf(u),
            Err(_) => (n as f64 * q).round() as u64,
        };
    }
    let ratio = q / (1.0 - q);
    let mut f = ln_f0.exp();
    let mut cdf = f;
    let mut k = 0;
    while cdf < u && k < n {
        f *= (n - k) as f64 / (k + 1) as f64 * ratio;
        k += 1;
        cdf += f;
    }
    // Rounding in the running sum can leave cdf just short of 1 at the upper tail.
    k.min(n)
}

/// ln P(K = k), used by tests.
#[cfg(test)]
fn ln_pmf(n: u64, q: f64, k: u64) -> f64 {
    use statrs::function::gamma::ln_gamma;
    ln_gamma(n as f64 + 1.0) - ln_gamma(k as f64 + 1.0) - ln_gamma((n - k) as f64 + 1.0)
        + k as f64 * q.ln()
        + (n - k) as f64 * (-q).ln_1p()
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn inversion_matches_the_cdf() {
        // Derived analytically: the k returned is the first whose CDF reaches u.
        for &(n, q) in &[(1u64, 0.3), (10, 0.05), (40, 0.5), (200, 0.9)] {
            for &u in &[1e-6, 0.1, 0.5, 0.93, 0.999999] {
                let k = inverse_cdf(n, q, u);
                let cdf = |k: u64| (0..=k).map(|j| ln_pmf(n, q, j).exp()).sum::<f64>();
                assert!(cdf(k) >= u - 1e-12, "n {n} q {q} u {u} k {k}");
                if k > 0 {
                    assert!(cdf(k - 1) < u + 1e-12);
                }
            }
        }
    }

    #[test]
    fn bernoulli_case_survives_when_u_at_most_p() {
        // n = 1: no death iff u ≤ 1 − q.
        assert_eq!(inverse_cdf(1, 0.2, 0.79), 0);
        assert_eq!(inverse_cdf(1, 0.2, 0.81), 1);
    }
}
