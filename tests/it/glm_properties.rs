//! Property tests: the O(n log n) AUC against the pairwise definition, HL groups covering every
//! record, and a GLM fit that does not depend on the order of the rows.

use ndarray::{Array1, Array2};
use proptest::prelude::*;
use stemcast::model::diagnostics::{hosmer_lemeshow, roc_auc};
use stemcast::model::glm::{fit_glm, GlmData, GlmOptions};
use stemcast::model::link::Link;

/// The definition: 2·#{event scored above non-event} + #{tied pairs}.
fn pairwise_twice_u(y: &[f64], p: &[f64]) -> u128 {
    let mut total = 0;
    for i in (0..y.len()).filter(|&i| y[i] == 1.0) {
        for j in (0..y.len()).filter(|&j| y[j] == 0.0) {
            total += match p[i].partial_cmp(&p[j]) {
                Some(std::cmp::Ordering::Greater) => 2,
                Some(std::cmp::Ordering::Equal) => 1,
                _ => 0,
            };
        }
    }
    total
}

proptest! {
    #[test]
    fn auc_matches_the_pairwise_definition(
        rows in proptest::collection::vec((any::<bool>(), 0u8..12), 2..80)
    ) {
        let y: Vec<f64> = rows.iter().map(|r| f64::from(u8::from(r.0))).collect();
        // Scores from a small set, so that ties are common.
        let p: Vec<f64> = rows.iter().map(|r| f64::from(r.1) / 12.0).collect();
        match roc_auc(&y, &p) {
            Ok(auc) => {
                prop_assert_eq!(auc.twice_u, pairwise_twice_u(&y, &p));
                let flipped: Vec<f64> = y.iter().map(|v| 1.0 - v).collect();
                let other = roc_auc(&flipped, &p).unwrap();
                prop_assert!((auc.auc + other.auc - 1.0).abs() < 1e-12);
            }
            Err(_) => prop_assert!(y.iter().all(|&v| v == y[0])),
        }
    }

    #[test]
    fn hosmer_lemeshow_groups_cover_every_record(
        rows in proptest::collection::vec((any::<bool>(), 1u8..99), 10..200)
    ) {
        let y: Vec<f64> = rows.iter().map(|r| f64::from(u8::from(r.0))).collect();
        let p: Vec<f64> = rows.iter().map(|r| f64::from(r.1) / 100.0).collect();
        let hl = hosmer_lemeshow(&y, &p).unwrap();
        prop_assert_eq!(hl.group_sizes.iter().sum::<usize>(), y.len());
        prop_assert_eq!(hl.observed_events.iter().sum::<u64>() as f64, y.iter().sum::<f64>());
        prop_assert!(hl.n_groups <= 10 && hl.df == 8);
        prop_assert!(hl.breaks.windows(2).all(|w| w[0] < w[1]));
    }

    #[test]
    fn fit_does_not_depend_on_row_order(seed in 0u64..1000, rotate in 1usize..59) {
        let n = 60;
        let x1: Vec<f64> = (0..n).map(|i| ((i as u64 * 37 + seed) % 17) as f64 / 4.0).collect();
        let y: Vec<f64> = (0..n).map(|i| f64::from(u8::from((i as u64 * 13 + seed) % 7 < 3))).collect();
        let terms = vec!["(intercept)".to_string(), "x".to_string()];
        let fit = |order: &[usize]| {
            let x = Array2::from_shape_fn((n, 2), |(r, j)| if j == 0 { 1.0 } else { x1[order[r]] });
            let yy = Array1::from_iter(order.iter().map(|&r| y[r]));
            let data = GlmData { x: x.view(), terms: &terms, y: yy.view(), trials: None, weights: None, offset: None };
            fit_glm(&data, &GlmOptions { link: Link::Cloglog })
        };
        let straight: Vec<usize> = (0..n).collect();
        let rotated: Vec<usize> = (0..n).map(|i| (i + rotate) % n).collect();
        match (fit(&straight), fit(&rotated)) {
            (Ok(a), Ok(b)) => {
                for (u, v) in a.coefficients.iter().zip(&b.coefficients) {
                    prop_assert!((u - v).abs() <= 1e-9 * u.abs().max(1.0));
                }
                prop_assert!((a.deviance - b.deviance).abs() <= 1e-9 * a.deviance);
            }
            (Err(a), Err(b)) => prop_assert_eq!(a.to_string(), b.to_string()),
            (a, b) => prop_assert!(false, "{:?} vs {:?}", a.is_ok(), b.is_ok()),
        }
    }
}
