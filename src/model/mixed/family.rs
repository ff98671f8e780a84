//! The conditional log-likelihood of one record as a function of its linear predictor η, with
//! its first three derivatives: what the plot-level integrals of the GLMM need (the mode needs
//! ℓ′ and ℓ″, the curvature's derivative ℓ‴, the quadrature nodes ℓ and ℓ′).
//! See docs/mixed-models.md, "The record likelihood".
//!
//! Binomial constants ln C(n, y) are left out here and added once per fit.

pub(crate) use super::normal::ln_phi_and_mills;
use crate::model::link::Link;

/// |η| beyond which the linear predictor is clamped; far outside any fitted value, it keeps
/// exponentials finite.
const ETA_MAX: f64 = 700.0;

/// Below this t = e^η the cloglog ratio t/(e^t − 1) and its derivatives use their series.
const CLOGLOG_SERIES_T: f64 = 0.1;

/// How a record's response depends on η.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Family {
    /// Binomial y of n with μ = g⁻¹(η).
    Binomial(Link),
    /// One 0/1 survival outcome over L years with P = logistic(η)^L.
    Annualized,
}

/// One record: successes `y` of `n` trials (0/1 with n = 1 for a status) and, for the
/// annualised family, the interval in years.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Record {
    /// Successes (the outcome 1 for a status).
    pub y: f64,
    /// Trials (1 for a status).
    pub n: f64,
    /// Interval in years (annualised family only).
    pub years: f64,
}

impl Family {
    /// ℓ(η) and ℓ′(η) (the quadrature nodes' hot path).
    #[inline]
    pub fn value_d1(self, eta: f64, r: Record) -> (f64, f64) {
        let eta = eta.clamp(-ETA_MAX, ETA_MAX);
        match self {
            Family::Binomial(Link::Logit) => {
                let e = (-eta.abs()).exp();
                let softplus = eta.max(0.0) + e.ln_1p();
                let mu = if eta >= 0.0 {
                    1.0 / (1.0 + e)
                } else {
                    e / (1.0 + e)
                };
                (r.y * eta - r.n * softplus, r.y - r.n * mu)
            }
            _ => {
                let d = self.derivatives(eta, r);
                (d[0], d[1])
            }
        }
    }

    /// [ℓ, ℓ′, ℓ″, ℓ‴] at η.
    ///
    /// # Formula
    /// logit: ℓ = yη − n ln(1 + e^η), ℓ′ = y − nμ, ℓ″ = −nμ(1 − μ), ℓ‴ = −nμ(1 − μ)(1 − 2μ).
    /// probit: ℓ = y ln Φ(η) + (n − y) ln Φ(−η), with λ = φ/Φ, λ′ = −λ(x + λ),
    /// λ″ = −λ′(x + λ) − λ(1 + λ′). cloglog: with t = e^η, ℓ = y ln(1 − e^−t) − (n − y)t and
    /// r(t) = t/(e^t − 1), ℓ′ = y r − (n − y)t, ℓ″ = y t r_t − (n − y)t,
    /// ℓ‴ = y(t r_t + t² r_tt) − (n − y)t. annualised: a = L ln p(η), outcome 1: ℓ = a;
    /// outcome 0: ℓ = ln(1 − e^a) composed by the chain rule.
    pub fn derivatives(self, eta: f64, r: Record) -> [f64; 4] {
        let eta = eta.clamp(-ETA_MAX, ETA_MAX);
        match self {
            Family::Binomial(Link::Logit) => logit(eta, r.y, r.n),
            Family::Binomial(Link::Probit) => probit(eta, r.y, r.n),
            Family::Binomial(Link::Cloglog) => cloglog(eta, r.y, r.n),
            Family::Annualized => annualized(eta, r.y, r.years),
        }
    }

    /// The probability of a response of 1 at η (for the annualised family, over `years`);
    /// probit uses ln Φ of `normal.rs`, which is more precise than the link's `Φ`.
    pub fn probability(self, eta: f64, years: f64) -> f64 {
        match self {
            Family::Binomial(Link::Probit) => ln_phi_and_mills(eta).0.exp(),
            Family::Binomial(link) => link.inverse(eta),
            Family::Annualized => {
                let eta = eta.clamp(-ETA_MAX, ETA_MAX);
                (-years * softplus(-eta)).exp()
            }
        }
    }
}

/// ln(1 + e^x) without overflow.
#[inline]
fn softplus(x: f64) -> f64 {
    x.max(0.0) + (-x.abs()).exp().ln_1p()
}

/// logistic(x) and 1 − logistic(x), each to full relative precision.
#[inline]
fn logistic_pair(x: f64) -> (f64, f64) {
    let e = (-x.abs()).exp();
    let (big, small) = (1.0 / (1.0 + e), e / (1.0 + e));
    if x >= 0.0 {
        (big, small)
    } else {
        (small, big)
    }
}

fn logit(eta: f64, y: f64, n: f64) -> [f64; 4] {
    let (mu, q) = logistic_pair(eta);
    let v = mu * q;
    [
        y * eta - n * softplus(eta),
        y - n * mu,
        -n * v,
        -n * v * (q - mu),
    ]
}

/// λ, λ′, λ″ of the inverse Mills ratio at x, with ln Φ(x).
fn mills_derivatives(x: f64) -> (f64, f64, f64, f64) {
    let (ln_cdf, l) = ln_phi_and_mills(x);
    let l1 = -l * (x + l);
    let l2 = -l1 * (x + l) - l * (1.0 + l1);
    (ln_cdf, l, l1, l2)
}

fn probit(eta: f64, y: f64, n: f64) -> [f64; 4] {
    let mut out = [0.0; 4];
    if y > 0.0 {
        let (lc, l, l1, l2) = mills_derivatives(eta);
        out = [y * lc, y * l, y * l1, y * l2];
    }
    let f = n - y;
    if f > 0.0 {
        // d/dη ln Φ(−η) = −λ(−η), then λ′(−η), then −λ″(−η).
        let (lc, l, l1, l2) = mills_derivatives(-eta);
        out[0] += f * lc;
        out[1] -= f * l;
        out[2] += f * l1;
        out[3] -= f * l2;
    }
    out
}

/// r(t) = t/(e^t − 1), r_t and r_tt.
///
/// # Formula
/// Series for small t: r = 1 − t/2 + t²/12 − t⁴/720 + t⁶/30240 − t⁸/1209600 (Bernoulli numbers),
/// differentiated term by term. Otherwise with q = e^−t: r = tq/(1 − q),
/// r_t = q(1 − q − t)/(1 − q)², r_tt = q[(t − 2) + (t + 2)q]/(1 − q)³.
fn cloglog_ratio(t: f64) -> (f64, f64, f64) {
    if t < CLOGLOG_SERIES_T {
        let t2 = t * t;
        let r = 1.0 - t / 2.0 + t2 / 12.0 - t2 * t2 / 720.0 + t2 * t2 * t2 / 30240.0
            - t2 * t2 * t2 * t2 / 1_209_600.0;
        let rt =
            -0.5 + t / 6.0 - t2 * t / 180.0 + t2 * t2 * t / 5040.0 - t2 * t2 * t2 * t / 151_200.0;
        let rtt = 1.0 / 6.0 - t2 / 60.0 + t2 * t2 / 1008.0 - t2 * t2 * t2 / 21600.0;
        return (r, rt, rtt);
    }
    let q = (-t).exp();
    let one_q = -(-t).exp_m1();
    (
        t * q / one_q,
        q * (one_q - t) / (one_q * one_q),
        q * ((t - 2.0) + (t + 2.0) * q) / (one_q * one_q * one_q),
    )
}

fn cloglog(eta: f64, y: f64, n: f64) -> [f64; 4] {
    let t = eta.exp();
    let f = n - y;
    let mut out = [-f * t, -f * t, -f * t, -f * t];
    if y > 0.0 {
        // ln(1 − e^−t) = ln t + ln(r e^t)... computed directly unless t is tiny.
        let ln_mu = if t < 1e-8 {
            eta - t / 2.0
        } else {
            (-(-t).exp_m1()).ln()
        };
        let (r, rt, rtt) = cloglog_ratio(t);
        out[0] += y * ln_mu;
        out[1] += y * r;
        out[2] += y * t * rt;
        out[3] += y * (t * rt + t * t * rtt);
    }
    out
}

fn annualized(eta: f64, y: f64, years: f64) -> [f64; 4] {
    let (p, q) = logistic_pair(eta);
    let a = -years * softplus(-eta);
    let g = years * q;
    let g1 = -years * p * q;
    let g2 = g1 * (q - p);
    if y == 1.0 {
        return [a, g, g1, g2];
    }
    // φ(a) = ln(1 − e^a): φ_a = −P/Q, φ_aa = −P/Q², φ_aaa = −P(1 + P)/Q³.
    let big_p = a.exp();
    let big_q = -a.exp_m1();
    let fa = -big_p / big_q;
    let faa = fa / big_q;
    let faaa = faa * (1.0 + big_p) / big_q;
    [
        big_q.ln(),
        fa * g,
        faa * g * g + fa * g1,
        faaa * g * g * g + 3.0 * faa * g * g1 + fa * g2,
    ]
}

#[cfg(test)]
mod tests {
    use super::*;

    const FAMILIES: [Family; 4] = [
        Family::Binomial(Link::Logit),
        Family::Binomial(Link::Probit),
        Family::Binomial(Link::Cloglog),
        Family::Annualized,
    ];

    fn records(f: Family) -> Vec<Record> {
        match f {
            Family::Annualized => vec![
                Record {
                    y: 1.0,
                    n: 1.0,
                    years: 3.0,
                },
                Record {
                    y: 0.0,
                    n: 1.0,
                    years: 7.5,
                },
                Record {
                    y: 0.0,
                    n: 1.0,
                    years: 1.0,
                },
            ],
            _ => vec![
                Record {
                    y: 1.0,
                    n: 1.0,
                    years: 1.0,
                },
                Record {
                    y: 0.0,
                    n: 1.0,
                    years: 1.0,
                },
                Record {
                    y: 3.0,
                    n: 11.0,
                    years: 1.0,
                },
            ],
        }
    }

    /// ln μ and ln(1 − μ) by the closed forms of each family (derived analytically):
    /// logit −ln(1 + e^∓η); probit ln Φ(±η); cloglog ln(1 − exp(−e^η)) and −e^η;
    /// annualised ln P = −L ln(1 + e^−η) and ln(1 − P).
    fn ln_mu_pair(f: Family, eta: f64, years: f64) -> (f64, f64) {
        match f {
            Family::Binomial(Link::Logit) => (-(-eta).exp().ln_1p(), -eta.exp().ln_1p()),
            Family::Binomial(Link::Probit) => (ln_phi_and_mills(eta).0, ln_phi_and_mills(-eta).0),
            Family::Binomial(Link::Cloglog) => ((-(-eta.exp()).exp_m1()).ln(), -eta.exp()),
            Family::Annualized => {
                let ln_p = -years * (-eta).exp().ln_1p();
                (ln_p, (-ln_p.exp_m1()).ln())
            }
        }
    }

    #[test]
    fn value_matches_the_binomial_log_likelihood() {
        // ℓ = y ln μ + (n − y) ln(1 − μ) (derived analytically).
        for f in FAMILIES {
            for r in records(f) {
                for eta in [-3.0, -0.4, 0.0, 1.3, 4.0] {
                    let (a, b) = ln_mu_pair(f, eta, r.years);
                    let want = r.y * a + (r.n - r.y) * b;
                    let got = f.derivatives(eta, r)[0];
                    assert!(
                        (got - want).abs() < 1e-12 * want.abs().max(1.0),
                        "{f:?} {eta}"
                    );
                    assert_eq!(f.value_d1(eta, r).0.to_bits(), got.to_bits());
                    assert!((f.probability(eta, r.years).ln() - a).abs() < 1e-13);
                }
            }
        }
    }

    #[test]
    fn derivatives_match_central_differences() {
        // Each derivative against a central difference of the one below it (step 1e-5,
        // truncation error ~1e-10 relative).
        let h = 1e-5;
        for f in FAMILIES {
            for r in records(f) {
                for eta in [-6.0, -2.0, -0.4, 0.0, 0.9, 2.5, 5.0] {
                    let d = f.derivatives(eta, r);
                    let up = f.derivatives(eta + h, r);
                    let dn = f.derivatives(eta - h, r);
                    for k in 1..4 {
                        let numeric = (up[k - 1] - dn[k - 1]) / (2.0 * h);
                        assert!(
                            (numeric - d[k]).abs() < 2e-7 * d[k].abs().max(1e-3),
                            "{f:?} {r:?} η {eta} order {k}: {numeric} vs {}",
                            d[k]
                        );
                    }
                    assert!((f.value_d1(eta, r).1 - d[1]).abs() <= 1e-15 * d[1].abs().max(1.0));
                }
            }
        }
    }

    #[test]
    fn cloglog_series_meets_the_direct_form() {
        // Derived analytically: both forms describe t/(e^t − 1); at the switch they agree.
        let t = CLOGLOG_SERIES_T;
        let a = cloglog_ratio(t * (1.0 - 1e-12));
        let q = (-t).exp();
        let one_q = -(-t).exp_m1();
        let direct = (
            t * q / one_q,
            q * (one_q - t) / (one_q * one_q),
            q * ((t - 2.0) + (t + 2.0) * q) / (one_q * one_q * one_q),
        );
        assert!((a.0 - direct.0).abs() < 1e-13);
        assert!((a.1 - direct.1).abs() < 1e-12);
        assert!((a.2 - direct.2).abs() < 1e-10);
    }
}
