//! Link functions (interim minimal version; the full one lands from the GLM work).

use serde::{Deserialize, Serialize};

/// Binomial link function.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize, Deserialize)]
#[serde(rename_all = "lowercase")]
pub enum Link {
    /// Logistic.
    Logit,
    /// Normal CDF.
    Probit,
    /// Complementary log-log.
    Cloglog,
}

impl Link {
    /// Inverse link μ = g⁻¹(η).
    pub fn inverse(self, eta: f64) -> f64 {
        use statrs::distribution::{ContinuousCDF, Normal};
        match self {
            Link::Logit => 1.0 / (1.0 + (-eta).exp()),
            Link::Probit => Normal::standard().cdf(eta),
            Link::Cloglog => -(-eta.exp()).exp_m1(),
        }
    }
    /// Name as written in model files.
    pub fn name(self) -> &'static str {
        match self {
            Link::Logit => "logit",
            Link::Probit => "probit",
            Link::Cloglog => "cloglog",
        }
    }
}

impl std::str::FromStr for Link {
    type Err = String;
    fn from_str(s: &str) -> Result<Self, Self::Err> {
        match s {
            "logit" => Ok(Link::Logit),
            "probit" => Ok(Link::Probit),
            "cloglog" => Ok(Link::Cloglog),
            _ => Err(format!("unknown link `{s}` (logit, probit or cloglog)")),
        }
    }
}
