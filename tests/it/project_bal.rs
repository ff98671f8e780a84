//! Basal area in larger trees against a brute-force sum (property test). Diameters are rounded to
//! 0.1 cm so that ties are common: equal diameters are not larger
//! (`docs/data.md#derived-covariates`).

use proptest::prelude::*;
use stemcast::project::basal_area_larger;

/// Brute force, straight from the definition (`docs/data.md#derived-covariates`): Σ over trees
/// strictly larger.
fn brute_force(dbh: &[f64], e: &[f64]) -> Vec<f64> {
    dbh.iter()
        .map(|&di| {
            dbh.iter()
                .zip(e)
                .filter(|(&dj, _)| dj > di)
                .map(|(&dj, &ej)| ej * std::f64::consts::PI / 40_000.0 * dj * dj)
                .sum()
        })
        .collect()
}

proptest! {
    #[test]
    fn bal_equals_the_brute_force_sum(
        trees in prop::collection::vec((10u32..600, 1u32..100), 1..80)
    ) {
        let dbh: Vec<f64> = trees.iter().map(|t| t.0 as f64 / 10.0).collect();
        let e: Vec<f64> = trees.iter().map(|t| t.1 as f64 * 0.5).collect();
        let got = basal_area_larger(&dbh, &e);
        let want = brute_force(&dbh, &e);
        for (g, w) in got.iter().zip(&want) {
            prop_assert!((g - w).abs() <= 1e-12 * (1.0 + w.abs()), "{g} vs {w}");
        }
    }
}

#[test]
fn handbook_three_tree_example() {
    // handbook-checks.md "Basal area, QMD, BAL": d = 10, 20, 30 cm at 100 trees/ha each →
    // BAL = 10.21018, 7.06858, 0 (derived).
    let bal = basal_area_larger(&[10.0, 20.0, 30.0], &[100.0; 3]);
    for (b, w) in bal.iter().zip([10.21018, 7.06858, 0.0]) {
        assert!((b - w).abs() < 1e-5, "{b} vs {w}");
    }
    // Ties: two trees of 20 cm do not count each other.
    let bal = basal_area_larger(&[20.0, 20.0], &[100.0, 100.0]);
    assert_eq!(bal, vec![0.0, 0.0]);
}
