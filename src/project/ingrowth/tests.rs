//! Unit tests of the ingrowth draws against moments derived analytically.

use super::*;
use crate::model::ingrowth_trees::SpeciesShare;

/// NB2 with α = 0.4 and μ = 2.5: x = αμ = 1, so P₀ = (1 + x)^(−1/α) = 2^(−2.5) (derived
/// analytically from the NB2 zero probability, docs/ingrowth.md).
fn nb_expectation(p_any: f64) -> HurdleExpectation {
    let mu = 2.5;
    let p_zero = 2f64.powf(-2.5);
    let mean_given_any = mu / (1.0 - p_zero);
    HurdleExpectation {
        p_any,
        mu,
        p_zero,
        mean_given_any,
        expected: p_any * mean_given_any,
        expected_per_area_per_year: f64::NAN,
    }
}

fn group() -> TreeGroup {
    TreeGroup {
        level: None,
        records: 10,
        dbh_quantiles: vec![5.5, 6.0, 7.0],
        species: vec![
            SpeciesShare {
                species: "DF".into(),
                share: 0.7,
                records: 7,
                dbh_quantiles: vec![5.2, 6.1, 8.0],
            },
            SpeciesShare {
                species: "WH".into(),
                share: 0.3,
                records: 3,
                dbh_quantiles: vec![5.0, 5.5, 6.5],
            },
        ],
    }
}

fn key(seed: u64, replicate: u64) -> IngrowthKey {
    IngrowthKey {
        seed,
        stand: 0,
        replicate,
        period: 0,
    }
}

/// Mean and standard error of the mean of `values`.
fn mean_se(values: &[f64]) -> (f64, f64) {
    let n = values.len() as f64;
    let mean = values.iter().sum::<f64>() / n;
    let var = values.iter().map(|v| (v - mean).powi(2)).sum::<f64>() / (n - 1.0);
    (mean, (var / n).sqrt())
}

#[test]
fn truncated_poisson_inversion_steps_at_the_first_probability() {
    // Derived analytically: for the zero-truncated Poisson with μ = 1.5,
    // P(N = 1 | N > 0) = μe^(−μ)/(1 − e^(−μ)).
    let mu: f64 = 1.5;
    let t1 = mu * (-mu).exp() / (1.0 - (-mu).exp());
    let n = |u| draw_count(1.0, mu, CountFamily::Poisson, 0.0, 0.5, u);
    assert_eq!(n(t1 - 1e-9), 1);
    assert_eq!(n(t1 + 1e-9), 2);
    // No ingrowth when the hurdle's uniform is at or above P(any).
    assert_eq!(draw_count(0.3, mu, CountFamily::Poisson, 0.0, 0.3, 0.99), 0);
}

#[test]
fn monte_carlo_mean_matches_the_hurdle_expectation_within_four_se() {
    // Check value: E[N]/area = P(any)·μ/(1 − P₀)/area (derived analytically, see
    // nb_expectation), per hectare on a 0.1 ha plot.
    let area = 0.1;
    let e = nb_expectation(0.6);
    let truth = 0.6 * 2.5 / (1.0 - 2f64.powf(-2.5)) / area;
    let g = group();
    let (mut stems, mut ba) = (Vec::new(), Vec::new());
    for r in 0..40_000 {
        let t = draw_new_trees(&e, CountFamily::NegativeBinomial, 0.4, &g, area, key(11, r));
        stems.push(t.stems());
        ba.push(
            t.dbh
                .iter()
                .zip(&t.stems_per_area)
                .map(|(d, s)| d * d * s)
                .sum(),
        );
    }
    let (m, se) = mean_se(&stems);
    assert!((m - truth).abs() < 4.0 * se, "{m} vs {truth} (se {se})");
    // The expected driver's trees: stems exactly E[N]/area, and Σ d²·stems equal to the Monte
    // Carlo mean within 4 SE (the same diameter distribution: species by share, quantiles
    // equally likely).
    let x = expected_new_trees(&e, &g, area, 0);
    assert!((x.stems() - truth).abs() < 1e-12 * truth);
    let x_ba: f64 = x
        .dbh
        .iter()
        .zip(&x.stems_per_area)
        .map(|(d, s)| d * d * s)
        .sum();
    let (mb, seb) = mean_se(&ba);
    assert!((mb - x_ba).abs() < 4.0 * seb, "{mb} vs {x_ba} (se {seb})");
}

#[test]
fn poisson_monte_carlo_mean_within_four_se() {
    // Derived analytically: zero-truncated Poisson mean μ/(1 − e^(−μ)), μ = 0.8, P(any) = 0.35.
    let mu: f64 = 0.8;
    let p0 = (-mu).exp();
    let e = HurdleExpectation {
        p_any: 0.35,
        mu,
        p_zero: p0,
        mean_given_any: mu / (1.0 - p0),
        expected: 0.35 * mu / (1.0 - p0),
        expected_per_area_per_year: f64::NAN,
    };
    let truth = 0.35 * mu / (1.0 - p0) / 0.04;
    let g = group();
    let stems: Vec<f64> = (0..40_000)
        .map(|r| draw_new_trees(&e, CountFamily::Poisson, 0.0, &g, 0.04, key(5, r)).stems())
        .collect();
    let (m, se) = mean_se(&stems);
    assert!((m - truth).abs() < 4.0 * se, "{m} vs {truth} (se {se})");
}

#[test]
fn ids_are_deterministic_so_two_seeds_pair_their_new_trees() {
    let e = nb_expectation(0.9);
    let g = group();
    let draw = |seed, r| {
        draw_new_trees(
            &e,
            CountFamily::NegativeBinomial,
            0.4,
            &g,
            0.1,
            key(seed, r),
        )
    };
    let mut paired = 0;
    for r in 0..20 {
        let (a, b) = (draw(1, r), draw(2, r));
        assert_eq!(a, draw(1, r), "the same key draws the same trees");
        let n = a.id.len().min(b.id.len());
        // The first n new trees of both seeds carry the same ids i0-0, i0-1, ….
        assert_eq!(a.id[..n], b.id[..n]);
        if n > 0 {
            assert_eq!(a.id[0], "i0-0");
            paired += 1;
        }
    }
    // P(any) = 0.9 for both seeds: at least one of 20 replicates has trees in both.
    assert!(paired > 0);
    let later = draw_new_trees(
        &e,
        CountFamily::NegativeBinomial,
        0.4,
        &g,
        0.1,
        IngrowthKey {
            period: 3,
            ..key(1, 0)
        },
    );
    assert!(later.id.iter().all(|id| id.starts_with("i3-")));
}
