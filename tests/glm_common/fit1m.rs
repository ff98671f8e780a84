//! The FIT-1M workload (`docs/performance.md#fit-1m`), generated from a seed: dbh lognormal
//! (median 15 cm, geometric SD 1.8, redrawn outside 1–120 cm), bal uniform on 0–40 m²/ha,
//! treatment a/b alternating, alive ~ Bernoulli(logistic(1.2 + 0.15·dbh − 0.0012·dbh² −
//! 0.04·bal − 0.6·[treatment = b])). Shared by the criterion bench and the recovery test.

use ndarray::{Array1, Array2};
use rand::{RngExt, SeedableRng};
use rand_chacha::ChaCha8Rng;
use rand_distr::{Distribution, LogNormal};

/// The generating coefficients, in the design's column order.
pub const TRUE_BETA: [f64; 5] = [1.2, 0.15, -0.0012, -0.04, -0.6];

/// The design's term names.
pub fn terms() -> Vec<String> {
    ["(intercept)", "dbh", "dbh^2", "bal", "treatment=b"]
        .iter()
        .map(|s| s.to_string())
        .collect()
}

/// n rows of the workload: the row-major design (intercept, dbh, dbh², bal, treatment=b) and
/// the 0/1 survival outcome.
pub fn generate(n: usize, seed: u64) -> (Array2<f64>, Array1<f64>) {
    let mut rng = ChaCha8Rng::seed_from_u64(seed);
    let dbh_dist = LogNormal::new(15f64.ln(), 1.8f64.ln()).unwrap();
    let mut x = Array2::zeros((n, 5));
    let mut y = Array1::zeros(n);
    for i in 0..n {
        let dbh = loop {
            let d: f64 = dbh_dist.sample(&mut rng);
            if (1.0..=120.0).contains(&d) {
                break d;
            }
        };
        let bal = 40.0 * rng.random::<f64>();
        let b = (i % 2) as f64;
        let row = [1.0, dbh, dbh * dbh, bal, b];
        let eta: f64 = row.iter().zip(TRUE_BETA).map(|(v, c)| v * c).sum();
        let p = 1.0 / (1.0 + (-eta).exp());
        y[i] = f64::from(u8::from(rng.random::<f64>() < p));
        for (j, v) in row.into_iter().enumerate() {
            x[[i, j]] = v;
        }
    }
    (x, y)
}
