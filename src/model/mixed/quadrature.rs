//! Gauss–Hermite quadrature: the k-point rule for ∫ f(z) e^(−z²) dz, and the marginal
//! (population-averaged) probability ∫ g⁻¹(η + u) N(u; 0, σ²) du that it serves.
//! See docs/mixed-models.md, "Adaptive Gauss–Hermite quadrature".

use super::family::Family;

/// The largest number of nodes a rule may have; beyond it the weights underflow.
pub const MAX_NODES: usize = 100;

/// Nodes of the marginal-probability rule.
pub const MARGINAL_NODES: usize = 100;

/// A k-point Gauss–Hermite rule: ∫ f(z) e^(−z²) dz ≈ Σ ωₘ f(zₘ).
#[derive(Debug, Clone, PartialEq)]
pub struct GaussHermite {
    /// Nodes zₘ in increasing order.
    pub nodes: Vec<f64>,
    /// Weights ωₘ.
    pub weights: Vec<f64>,
}

impl GaussHermite {
    /// The k-point rule, 1 ≤ k ≤ [`MAX_NODES`].
    ///
    /// # Formula
    /// The nodes are the roots of the Hermite polynomial H_k, found by Newton's method on the
    /// orthonormal recurrence p_j = z √(2/j) p_{j−1} − √((j−1)/j) p_{j−2}, p_0 = π^(−1/4),
    /// from the asymptotic first guesses of Numerical Recipes (§4.6); the weight of a root is
    /// 2 / p_k′(z)², p_k′ = √(2k) p_{k−1}.
    ///
    /// # Errors
    /// `k` outside 1..=[`MAX_NODES`], or a root that does not converge.
    pub fn new(k: usize) -> Result<Self, String> {
        if !(1..=MAX_NODES).contains(&k) {
            return Err(format!(
                "a Gauss–Hermite rule needs 1 to {MAX_NODES} nodes, not {k}"
            ));
        }
        let n = k as f64;
        let mut x = vec![0.0; k];
        let mut w = vec![0.0; k];
        let pim4 = std::f64::consts::PI.powf(-0.25);
        let mut z: f64 = 0.0;
        for i in 0..k.div_ceil(2) {
            z = match i {
                0 => (2.0 * n + 1.0).sqrt() - 1.85575 * (2.0 * n + 1.0).powf(-1.0 / 6.0),
                1 => z - 1.14 * n.powf(0.426) / z,
                2 => 1.86 * z - 0.86 * x[0],
                3 => 1.91 * z - 0.91 * x[1],
                _ => 2.0 * z - x[i - 2],
            };
            let mut derivative = 0.0;
            let mut converged = false;
            for _ in 0..100 {
                let (mut p1, mut p2) = (pim4, 0.0);
                for j in 1..=k {
                    let p3 = p2;
                    p2 = p1;
                    let jf = j as f64;
                    p1 = z * (2.0 / jf).sqrt() * p2 - ((jf - 1.0) / jf).sqrt() * p3;
                }
                derivative = (2.0 * n).sqrt() * p2;
                let step = p1 / derivative;
                z -= step;
                if step.abs() <= 1e-15 * z.abs().max(1.0) {
                    converged = true;
                    break;
                }
            }
            if !converged {
                return Err(format!("Gauss–Hermite root {i} of {k} did not converge"));
            }
            x[i] = z;
            x[k - 1 - i] = -z;
            w[i] = 2.0 / (derivative * derivative);
            w[k - 1 - i] = w[i];
        }
        if k % 2 == 1 {
            x[k / 2] = 0.0;
        }
        x.reverse();
        w.reverse();
        Ok(GaussHermite {
            nodes: x,
            weights: w,
        })
    }

    /// Number of nodes.
    pub fn len(&self) -> usize {
        self.nodes.len()
    }

    /// Always false: a rule has at least one node.
    pub fn is_empty(&self) -> bool {
        self.nodes.is_empty()
    }
}

/// The marginal probability of a response of 1 at linear predictor `eta` (offset included)
/// for a plot drawn from N(0, σ²): ∫ F(η + u) N(u; 0, σ²) du, with F the family's
/// probability over `years` (only the annualised family uses it).
///
/// # Formula
/// Σₘ ωₘ F(η + √2 σ zₘ) / √π with the [`MARGINAL_NODES`]-point Gauss–Hermite rule.
pub fn marginal_probability(family: Family, eta: f64, sd: f64, years: f64) -> f64 {
    if sd == 0.0 {
        return family.probability(eta, years);
    }
    let rule = marginal_rule();
    let total: f64 = rule
        .nodes
        .iter()
        .zip(&rule.weights)
        .map(|(z, w)| w * family.probability(eta + std::f64::consts::SQRT_2 * sd * z, years))
        .sum();
    total / std::f64::consts::PI.sqrt()
}

fn marginal_rule() -> &'static GaussHermite {
    static RULE: std::sync::OnceLock<GaussHermite> = std::sync::OnceLock::new();
    RULE.get_or_init(|| {
        GaussHermite::new(MARGINAL_NODES).unwrap_or_else(|_| GaussHermite {
            nodes: vec![0.0],
            weights: vec![std::f64::consts::PI.sqrt()],
        })
    })
}

#[cfg(test)]
mod tests {
    use super::*;
    use statrs::function::gamma::gamma;

    #[test]
    fn small_rules_match_their_closed_forms() {
        // Derived analytically: H_1 = 2z (node 0, weight √π); H_3 = 8z³ − 12z (nodes 0, ±√(3/2),
        // weights 2√π/3 and √π/6).
        let sp = std::f64::consts::PI.sqrt();
        let r1 = GaussHermite::new(1).unwrap();
        assert_eq!(r1.nodes, vec![0.0]);
        assert!((r1.weights[0] - sp).abs() < 1e-15);
        let r3 = GaussHermite::new(3).unwrap();
        let z = 1.5f64.sqrt();
        for (got, want) in r3.nodes.iter().zip([-z, 0.0, z]) {
            assert!((got - want).abs() < 1e-15);
        }
        for (got, want) in r3.weights.iter().zip([sp / 6.0, 2.0 * sp / 3.0, sp / 6.0]) {
            assert!((got - want).abs() < 1e-15);
        }
    }

    #[test]
    fn rules_integrate_even_moments_exactly() {
        // Derived analytically: ∫ z^(2j) e^(−z²) dz = Γ(j + ½), exact for 2j ≤ 2k − 1.
        for k in [2, 7, 15, 25, 50, 100] {
            let r = GaussHermite::new(k).unwrap();
            for j in 0..k.min(12) {
                let got: f64 = r
                    .nodes
                    .iter()
                    .zip(&r.weights)
                    .map(|(z, w)| w * z.powi(2 * j as i32))
                    .sum();
                let want = gamma(j as f64 + 0.5);
                assert!(
                    (got - want).abs() < 1e-12 * want,
                    "k {k} j {j}: {got} vs {want}"
                );
            }
            assert!(r.nodes.windows(2).all(|p| p[0] < p[1]));
        }
        assert!(GaussHermite::new(0).is_err());
        assert!(GaussHermite::new(MAX_NODES + 1).is_err());
    }

    #[test]
    fn probit_marginal_probability_has_a_closed_form() {
        // Derived analytically: ∫ Φ(η + u) N(u; 0, σ²) du = Φ(η / √(1 + σ²)); the values are
        // mpmath 1.3.0 ncdf(η/√(1 + σ²)) at 30 digits.
        use crate::model::link::Link;
        for (eta, sd, want) in [
            (-1.3, 0.8, 0.1550220619382622),
            (0.4, 2.0, 0.5709861715062394),
            (2.0, 0.1, 0.9767086287384923),
        ] {
            let got = marginal_probability(Family::Binomial(Link::Probit), eta, sd, 1.0);
            assert!((got - want).abs() < 1e-14, "{got} vs {want}");
        }
    }
}
