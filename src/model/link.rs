//! Link functions of the binomial GLM: the link g(μ) = η, its inverse μ = g⁻¹(η) and the
//! derivative dμ/dη, each computed with care near μ = 0 and μ = 1.

use std::fmt;
use std::str::FromStr;

use serde::{Deserialize, Serialize};
use statrs::distribution::{Continuous, ContinuousCDF, Normal};

/// Fitted probabilities are kept inside [`MU_EPS`, 1 − `MU_EPS`], as R's `binomial()` family
/// does, so that logarithms and variances stay finite.
pub const MU_EPS: f64 = f64::EPSILON;

/// |η| beyond which the logit inverse is clamped (R's `binomial()` uses the same bound).
const LOGIT_ETA_MAX: f64 = 30.0;
/// η beyond which the cloglog inverse is clamped: exp(700) is still finite.
const CLOGLOG_ETA_MAX: f64 = 700.0;

/// The link between the linear predictor η and the probability μ.
#[derive(Debug, Clone, Copy, Default, PartialEq, Eq, Hash, Serialize, Deserialize)]
#[serde(rename_all = "lowercase")]
pub enum Link {
    /// g(μ) = ln(μ / (1 − μ)) (the default).
    #[default]
    Logit,
    /// g(μ) = Φ⁻¹(μ), Φ the standard normal distribution function.
    Probit,
    /// g(μ) = ln(−ln(1 − μ)), the complementary log-log link.
    Cloglog,
}

/// A link name that is not one of `logit`, `probit`, `cloglog`.
#[derive(Debug, Clone, PartialEq, Eq, thiserror::Error)]
#[error("unknown link `{0}`; expected logit, probit or cloglog")]
pub struct UnknownLink(pub String);

impl FromStr for Link {
    type Err = UnknownLink;

    fn from_str(s: &str) -> Result<Self, Self::Err> {
        match s.trim().to_ascii_lowercase().as_str() {
            "logit" => Ok(Link::Logit),
            "probit" => Ok(Link::Probit),
            "cloglog" => Ok(Link::Cloglog),
            _ => Err(UnknownLink(s.to_string())),
        }
    }
}

impl fmt::Display for Link {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        f.write_str(self.name())
    }
}

/// The probit threshold: |η| beyond which Φ(η) is within `MU_EPS` of 0 or 1, −Φ⁻¹(ε).
fn probit_eta_max() -> f64 {
    -Normal::standard().inverse_cdf(MU_EPS)
}

impl Link {
    /// The lowercase name used in model files and on the command line.
    pub fn name(self) -> &'static str {
        match self {
            Link::Logit => "logit",
            Link::Probit => "probit",
            Link::Cloglog => "cloglog",
        }
    }

    /// The inverse link μ = g⁻¹(η), clamped to [ε, 1 − ε] with ε = [`MU_EPS`].
    ///
    /// # Formula
    /// logit: μ = 1 / (1 + e^−η); probit: μ = Φ(η); cloglog: μ = 1 − exp(−e^η), computed as
    /// `−expm1(−exp(η))` so that small μ keep full precision.
    pub fn inverse(self, eta: f64) -> f64 {
        let mu = match self {
            Link::Logit => logistic(eta.clamp(-LOGIT_ETA_MAX, LOGIT_ETA_MAX)),
            Link::Probit => {
                let t = probit_eta_max();
                Normal::standard().cdf(eta.clamp(-t, t))
            }
            Link::Cloglog => -(-eta.min(CLOGLOG_ETA_MAX).exp()).exp_m1(),
        };
        mu.clamp(MU_EPS, 1.0 - MU_EPS)
    }

    /// The link η = g(μ), for μ in (0, 1).
    ///
    /// # Formula
    /// logit: ln(μ / (1 − μ)); probit: Φ⁻¹(μ); cloglog: ln(−ln(1 − μ)), computed with `ln_1p`.
    pub fn link(self, mu: f64) -> f64 {
        match self {
            Link::Logit => (mu / (1.0 - mu)).ln(),
            Link::Probit => Normal::standard().inverse_cdf(mu),
            Link::Cloglog => (-(-mu).ln_1p()).ln(),
        }
    }

    /// The derivative dμ/dη at η, bounded below by ε so that IRLS weights stay positive.
    ///
    /// # Formula
    /// logit: e^−|η| / (1 + e^−|η|)²; probit: φ(η); cloglog: e^η · exp(−e^η).
    pub fn mu_eta(self, eta: f64) -> f64 {
        let d = match self {
            Link::Logit => {
                let e = (-eta.abs()).exp();
                e / ((1.0 + e) * (1.0 + e))
            }
            Link::Probit => Normal::standard().pdf(eta),
            Link::Cloglog => {
                let e = eta.min(CLOGLOG_ETA_MAX).exp();
                (eta.min(CLOGLOG_ETA_MAX) - e).exp()
            }
        };
        d.max(MU_EPS)
    }

    /// The second derivative d²μ/dη² at η (no lower bound), for the observed information.
    ///
    /// # Formula
    /// logit: μ′(1 − 2μ); probit: −η φ(η); cloglog: μ′(1 − e^η) with μ′ = exp(η − e^η).
    pub fn mu_eta_derivative(self, eta: f64) -> f64 {
        match self {
            Link::Logit => {
                let e = (-eta.abs()).exp();
                // 1 − 2μ = (1 − e^η)/(1 + e^η) = −sign(η)(1 − e^−|η|)/(1 + e^−|η|).
                let d = e / ((1.0 + e) * (1.0 + e));
                -eta.signum() * d * (1.0 - e) / (1.0 + e)
            }
            Link::Probit => -eta * Normal::standard().pdf(eta),
            Link::Cloglog => {
                let eta = eta.min(CLOGLOG_ETA_MAX);
                let e = eta.exp();
                (eta - e).exp() * (1.0 - e)
            }
        }
    }

    /// The μ and dμ/dη at η in one call (one exponential for logit, the hot path of IRLS).
    #[inline]
    pub fn inverse_and_derivative(self, eta: f64) -> (f64, f64) {
        match self {
            Link::Logit => {
                let mu = logistic(eta.clamp(-LOGIT_ETA_MAX, LOGIT_ETA_MAX));
                let mu = mu.clamp(MU_EPS, 1.0 - MU_EPS);
                (mu, (mu * (1.0 - mu)).max(MU_EPS))
            }
            _ => (self.inverse(eta), self.mu_eta(eta)),
        }
    }
}

/// The binomial variance function V(μ) = μ(1 − μ).
#[inline]
pub fn variance(mu: f64) -> f64 {
    mu * (1.0 - mu)
}

/// The IRLS working weight of a binomial GLM record (docs/maths.md#irls).
///
/// # Formula
/// w = a · (dμ/dη)² / V(μ), with prior weight a and V(μ) = μ(1 − μ).
#[inline]
pub fn working_weight(prior: f64, mu: f64, dmu_deta: f64) -> f64 {
    prior * dmu_deta * dmu_deta / variance(mu)
}

/// The logistic function 1 / (1 + e^−x), without overflow for large |x|.
#[inline]
fn logistic(x: f64) -> f64 {
    if x >= 0.0 {
        1.0 / (1.0 + (-x).exp())
    } else {
        let e = x.exp();
        e / (1.0 + e)
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    const LINKS: [Link; 3] = [Link::Logit, Link::Probit, Link::Cloglog];

    #[test]
    fn round_trip_eta_mu_eta() {
        for link in LINKS {
            // Beyond η ≈ 2.5 the cloglog μ is within 1e-5 of 1 and the round trip loses
            // digits to conditioning, not to the code.
            for eta in [-6.0, -2.5, -0.3, 0.0, 0.7, 2.0, 2.5] {
                let back = link.link(link.inverse(eta));
                assert!((back - eta).abs() < 1e-9, "{link}: {eta} -> {back}");
            }
        }
    }

    #[test]
    fn round_trip_mu_eta_mu() {
        for link in LINKS {
            for mu in [1e-6, 0.01, 0.3, 0.5, 0.77, 0.99] {
                let back = link.inverse(link.link(mu));
                // statrs' normal quantile is accurate to about 1e-8 relative (4e-9 at 0.01).
                assert!((back - mu).abs() < 1e-8 * mu, "{link}: {mu} -> {back}");
            }
        }
    }

    #[test]
    fn derivative_matches_central_difference() {
        let h = 1e-5;
        for link in LINKS {
            for eta in [-4.0, -1.2, 0.0, 0.4, 1.9, 3.0] {
                let numeric = (link.inverse(eta + h) - link.inverse(eta - h)) / (2.0 * h);
                let analytic = link.mu_eta(eta);
                assert!(
                    (numeric - analytic).abs() < 1e-8 * analytic.max(1e-3),
                    "{link} at {eta}: {numeric} vs {analytic}"
                );
                let (mu, d) = link.inverse_and_derivative(eta);
                assert!((mu - link.inverse(eta)).abs() < 1e-15);
                assert!((d - analytic).abs() < 1e-15);
            }
        }
    }

    #[test]
    fn second_derivative_matches_central_difference() {
        let h = 1e-5;
        for link in LINKS {
            for eta in [-4.0, -1.2, 0.0, 0.4, 1.9, 3.0] {
                let numeric = (link.mu_eta(eta + h) - link.mu_eta(eta - h)) / (2.0 * h);
                let analytic = link.mu_eta_derivative(eta);
                assert!(
                    (numeric - analytic).abs() < 1e-8 * analytic.abs().max(1e-3),
                    "{link} at {eta}: {numeric} vs {analytic}"
                );
            }
        }
    }

    #[test]
    fn inverse_is_clamped_and_precise_in_tails() {
        for link in LINKS {
            for eta in [-1e3, -40.0, 40.0, 1e3] {
                let mu = link.inverse(eta);
                assert!(
                    (MU_EPS..=1.0 - MU_EPS).contains(&mu),
                    "{link} at {eta}: {mu}"
                );
            }
        }
        // Derived analytically: 1 − exp(−e^η) = e^η − e^{2η}/2 + … ≈ 1e-20 at η = ln 1e-20.
        let small = Link::Cloglog.inverse((1e-20f64).ln()).max(0.0);
        assert!(small >= MU_EPS);
        let mu = -(-(1e-12f64)).exp_m1();
        assert!((Link::Cloglog.inverse((1e-12f64).ln()) - mu).abs() < 1e-24);
    }

    #[test]
    fn names_parse_and_serialise() {
        for link in LINKS {
            assert_eq!(link.name().parse::<Link>(), Ok(link));
            assert_eq!(
                serde_json::to_string(&link).unwrap(),
                format!("\"{}\"", link.name())
            );
        }
        assert!("logistic".parse::<Link>().is_err());
    }
}
