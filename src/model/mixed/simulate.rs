//! Seeded simulation of survival data with a random plot intercept, with stated true values:
//! the workload of the GLMM benchmark, the recovery test and the coverage study
//! (`examples/glmm_coverage.rs`).

use ndarray::Array2;
use rand::{RngExt, SeedableRng};
use rand_chacha::ChaCha8Rng;
use rand_distr::{Distribution, LogNormal, Normal};

use super::family::Family;

/// What to simulate: `plots` plots of `trees` trees, η = β₀ + β₁ dbh + β₂ bal + u_plot,
/// u ~ N(0, `sd`²), one 0/1 outcome per tree drawn from the family's probability.
#[derive(Debug, Clone, PartialEq)]
pub struct GlmmSimulation {
    /// Number of plots.
    pub plots: usize,
    /// Trees per plot.
    pub trees: usize,
    /// True (intercept, dbh, bal) coefficients.
    pub beta: [f64; 3],
    /// True σ_u.
    pub sd: f64,
    /// How the outcome depends on η.
    pub family: Family,
}

impl Default for GlmmSimulation {
    /// 60 plots of 35 trees, β = (1.5, 0.04, −0.03), σ_u = 0.6, logit.
    fn default() -> Self {
        GlmmSimulation {
            plots: 60,
            trees: 35,
            beta: [1.5, 0.04, -0.03],
            sd: 0.6,
            family: Family::Binomial(crate::model::link::Link::Logit),
        }
    }
}

/// Simulated records: the design (intercept, dbh, bal), outcomes and plot codes.
#[derive(Debug, Clone, PartialEq)]
pub struct SimulatedGlmm {
    /// n×3 design.
    pub x: Array2<f64>,
    /// 0/1 outcomes.
    pub y: Vec<f64>,
    /// Plot code per record.
    pub plots: Vec<u32>,
}

/// Simulate `spec` with `seed` (ChaCha8): dbh lognormal with median 20 cm and geometric SD
/// 1.5, redrawn outside 5–80 cm; bal uniform on 0–30 m²/ha per plot level plus ±5 per tree.
///
/// # Errors
/// A negative or non-finite σ_u.
pub fn simulate_glmm(spec: &GlmmSimulation, seed: u64) -> Result<SimulatedGlmm, String> {
    let mut rng = ChaCha8Rng::seed_from_u64(seed);
    let plot_effect = Normal::new(0.0, spec.sd).map_err(|e| format!("σ_u {}: {e}", spec.sd))?;
    let dbh_dist = LogNormal::new(20f64.ln(), 1.5f64.ln()).map_err(|e| e.to_string())?;
    let n = spec.plots * spec.trees;
    let mut x = Array2::zeros((n, 3));
    let mut y = Vec::with_capacity(n);
    let mut plots = Vec::with_capacity(n);
    for j in 0..spec.plots {
        let u = plot_effect.sample(&mut rng);
        let level: f64 = 30.0 * rng.random::<f64>();
        for t in 0..spec.trees {
            let i = j * spec.trees + t;
            let dbh = loop {
                let d: f64 = dbh_dist.sample(&mut rng);
                if (5.0..=80.0).contains(&d) {
                    break d;
                }
            };
            let bal = (level + 10.0 * (rng.random::<f64>() - 0.5)).max(0.0);
            let eta = spec.beta[0] + spec.beta[1] * dbh + spec.beta[2] * bal + u;
            let p = spec.family.probability(eta, 1.0);
            y.push(f64::from(u8::from(rng.random::<f64>() < p)));
            x[[i, 0]] = 1.0;
            x[[i, 1]] = dbh;
            x[[i, 2]] = bal;
            plots.push(j as u32);
        }
    }
    Ok(SimulatedGlmm { x, y, plots })
}
