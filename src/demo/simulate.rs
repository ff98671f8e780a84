//! The invented remeasurement data of the demo: a documented, seeded simulation of a fictional
//! planting trial with stated true coefficients (also written out in scenarios/README.md).
//!
//! The trial: 12 plots of 0.1 ha (each tree stands for 10 stems/ha), planted at six densities,
//! half of the plots kept free of competing vegetation (`released`), half not (`unreleased`).
//! Trees were measured at stand age 12 and again 5 years later. Between the measurements some
//! trees died, a few were cut for an access line (status `cut`), and a few trees reached
//! measurable size (ingrowth, no first diameter).

use rand::{RngExt, SeedableRng};
use rand_chacha::ChaCha8Rng;
use rand_distr::{Distribution, Normal};

/// Seed of the bundled data set.
pub const TRIAL_SEED: u64 = 20_261_202;

/// True 5-year survival model: logit P(alive) = η with
/// η = 0.6 + 0.22·dbh − 0.08·bal + 0.5·[treatment = released].
pub const TRUE_SURVIVAL: [(&str, f64); 4] = [
    ("(intercept)", 0.6),
    ("dbh", 0.22),
    ("bal", -0.08),
    ("treatment=released", 0.5),
];

/// True 5-year growth model: ln(BAI cm²) = 1.3 + 1.05·ln(dbh) − 0.035·bal
/// + 0.3·[treatment = released] + ε, ε ~ N(0, 0.4²).
pub const TRUE_GROWTH: [(&str, f64); 4] = [
    ("(intercept)", 1.3),
    ("ln(dbh)", 1.05),
    ("bal", -0.035),
    ("treatment=released", 0.3),
];

/// Residual SD of the true growth model (log scale).
pub const TRUE_GROWTH_SD: f64 = 0.4;

/// Stems per hectare one tree of a 0.1 ha plot stands for.
pub const EXPANSION: f64 = 10.0;

/// Planting densities (stems/ha) of plot pairs 1–2, 3–4, … 11–12.
const DENSITIES: [f64; 6] = [1000.0, 1400.0, 1800.0, 2200.0, 2600.0, 3000.0];

/// Probability that a tree was cut for the access line.
const CUT_PROBABILITY: f64 = 0.02;

fn round1(x: f64) -> f64 {
    (x * 10.0).round() / 10.0
}

/// Basal area per hectare in trees strictly larger than each tree, by direct summation
/// (deliberately independent of the library's sorted-prefix implementation).
fn bal_brute_force(dbh: &[f64]) -> Vec<f64> {
    let g = |d: f64| std::f64::consts::PI / 40_000.0 * d * d * EXPANSION;
    dbh.iter()
        .map(|&d| dbh.iter().filter(|&&o| o > d).map(|&o| g(o)).sum())
        .collect()
}

/// Generate the trial as CSV text with columns
/// `stand,tree,treatment,dbh,dbh2,alive,years,expansion`.
pub fn simulate_trial(seed: u64) -> String {
    let mut rng = ChaCha8Rng::seed_from_u64(seed);
    let mut out = String::from("stand,tree,treatment,dbh,dbh2,alive,years,expansion\n");
    let Ok(noise) = Normal::<f64>::new(0.0, TRUE_GROWTH_SD) else {
        return out;
    };
    let Ok(z) = Normal::<f64>::new(0.0, 1.0) else {
        return out;
    };
    for plot in 1..=12u32 {
        let released = plot % 2 == 1;
        let treatment = if released { "released" } else { "unreleased" };
        let density = DENSITIES[((plot - 1) / 2) as usize];
        // About 8 % of planted trees died before the first measurement.
        let n = ((density * 0.1) * (0.88 + 0.08 * rng.random::<f64>())).round() as usize;
        let median = if released { 10.0 } else { 8.0 } * (1600.0 / density).powf(0.15);
        let dbh: Vec<f64> = (0..n)
            .map(|_| round1((median * (0.35 * z.sample(&mut rng)).exp()).max(0.5)))
            .collect();
        let bal = bal_brute_force(&dbh);
        let r = f64::from(u8::from(released));
        for (i, (&d, &b)) in dbh.iter().zip(&bal).enumerate() {
            let tree = i + 1;
            if rng.random::<f64>() < CUT_PROBABILITY {
                out.push_str(&format!("{plot},{tree},{treatment},{d},,cut,5,10\n"));
                // Keep the random stream aligned whether or not a tree is cut.
                let _ = (rng.random::<f64>(), noise.sample(&mut rng));
                continue;
            }
            let eta = TRUE_SURVIVAL[0].1
                + TRUE_SURVIVAL[1].1 * d
                + TRUE_SURVIVAL[2].1 * b
                + TRUE_SURVIVAL[3].1 * r;
            let alive = rng.random::<f64>() < 1.0 / (1.0 + (-eta).exp());
            let ln_bai = TRUE_GROWTH[0].1
                + TRUE_GROWTH[1].1 * d.ln()
                + TRUE_GROWTH[2].1 * b
                + TRUE_GROWTH[3].1 * r
                + noise.sample(&mut rng);
            if alive {
                let d2 = round1((d * d + 4.0 * ln_bai.exp() / std::f64::consts::PI).sqrt());
                out.push_str(&format!("{plot},{tree},{treatment},{d},{d2},alive,5,10\n"));
            } else {
                out.push_str(&format!("{plot},{tree},{treatment},{d},,dead,5,10\n"));
            }
        }
        // Ingrowth: a tree or two that reached measurable size since the first measurement.
        if plot % 4 == 0 {
            let d2 = round1(1.0 + rng.random::<f64>());
            out.push_str(&format!("{plot},{},{treatment},,{d2},alive,5,10\n", n + 1));
        }
    }
    out
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn bundled_trial_is_the_documented_simulation() {
        // The committed data must be exactly what the documented simulation produces.
        assert_eq!(simulate_trial(TRIAL_SEED), super::super::TRIAL_CSV);
    }

    #[test]
    fn brute_force_bal_matches_the_handbook_example() {
        // handbook-checks.md: d = 10, 20, 30 cm at 100 trees/ha → BAL 10.21018, 7.06858, 0;
        // here each tree stands for 10/ha, so the values are a tenth of those.
        let b = bal_brute_force(&[10.0, 20.0, 30.0]);
        assert!((b[0] - 10.21018 / 10.0).abs() < 1e-6);
        assert!((b[1] - 7.06858 / 10.0).abs() < 1e-6);
        assert_eq!(b[2], 0.0);
    }
}
