//! Stand metrics and derived covariates against handbook values
//! (/work/shared/reference/handbook-checks.md), plus a BAL property test.

use proptest::prelude::*;
use stemcast::data::{
    qmd_from_basal_area, reineke_sdi, stand_covariates, DerivedCovariate, Units, HA_PER_ACRE,
};

/// Handbook values are printed to 6–7 significant digits.
const PRINTED_7: f64 = 5e-7;
/// Values printed to 4 decimals.
const PRINTED_4: f64 = 5e-5;
/// Values printed to 3 decimals.
const PRINTED_3: f64 = 5e-4;
/// Exact arithmetic up to rounding.
const ROUNDING: f64 = 1e-9;

fn close(actual: f64, expected: f64, tol: f64) {
    assert!(
        (actual - expected).abs() <= tol,
        "expected {expected}, got {actual} (tolerance {tol})"
    );
}

#[test]
fn tree_basal_area_34_cm() {
    // Standard mensuration formula g = π/40000·d² (Husch, Beers & Kershaw, Forest Mensuration).
    close(Units::Metric.tree_basal_area(34.0), 0.0907920, PRINTED_7);
    // Imperial constant 0.005454154 = π/576 (same source).
    close(Units::Imperial.basal_area_constant(), 0.005454154, 5e-10);
}

#[test]
fn stand_basal_area_seven_trees() {
    // D. R. Larsen's forest-function worked examples ("basal area"), values re-derived.
    let d = [8.0, 6.0, 8.0, 5.0, 4.0, 6.0, 7.0];
    let metric = stand_covariates(&d, &[25.0; 7], Units::Metric);
    close(metric.ba, 0.5694137, PRINTED_7);
    close(metric.stems, 175.0, ROUNDING);
    let imperial = stand_covariates(&d, &[10.0; 7], Units::Imperial);
    close(imperial.ba, 15.8170, PRINTED_4);
    close(imperial.stems, 70.0, ROUNDING);
    // Derived: QMD = √(Σd²/n) = √(290/7).
    close(metric.qmd, (290.0f64 / 7.0).sqrt(), ROUNDING);
    close(imperial.qmd, (290.0f64 / 7.0).sqrt(), ROUNDING);
}

#[test]
fn bal_three_trees() {
    // Handbook "BAL" example, derived: d = 10, 20, 30 cm at 100 trees/ha each.
    let c = stand_covariates(&[10.0, 20.0, 30.0], &[100.0; 3], Units::Metric);
    close(c.ba, 10.99557, 5e-6);
    close(c.bal[0], 10.21018, 5e-6);
    close(c.bal[1], 7.06858, 5e-6);
    assert_eq!(c.bal[2], 0.0);
    // Derived: rel_dbh = d / QMD with QMD = √(1400/3).
    let qmd = (1400.0f64 / 3.0).sqrt();
    close(c.qmd, qmd, ROUNDING);
    close(c.rel_dbh[0], 10.0 / qmd, ROUNDING);
}

#[test]
fn bal_ties_are_not_larger() {
    // Derived: d = 20, 10, 30, 20 cm at 100/ha; g·e = π/400·d². The two 20 cm trees do not
    // count each other: BAL(20) = π/400·900 = 7.068583; BAL(10) = π/400·(900 + 2·400).
    let c = stand_covariates(&[20.0, 10.0, 30.0, 20.0], &[100.0; 4], Units::Metric);
    let k = std::f64::consts::PI / 400.0;
    close(c.bal[0], 7.068583, 5e-7);
    close(c.bal[3], k * 900.0, ROUNDING);
    close(c.bal[1], k * 1700.0, ROUNDING);
    assert_eq!(c.bal[2], 0.0);
    close(c.ba, k * 1800.0, ROUNDING);
}

#[test]
fn empty_stand_has_no_qmd() {
    let c = stand_covariates(&[], &[], Units::Metric);
    assert_eq!(c.stems, 0.0);
    assert_eq!(c.ba, 0.0);
    assert!(c.qmd.is_nan());
    assert!(c.bal.is_empty());
}

#[test]
fn qmd_from_basal_area_examples() {
    // Larsen's worked examples ("quadratic mean diameter"), printed to 2 and 1 decimals.
    close(
        qmd_from_basal_area(80.0, 200.0, Units::Imperial),
        8.56,
        0.005,
    );
    close(qmd_from_basal_area(18.3, 494.1, Units::Metric), 21.7, 0.05);
}

#[test]
fn reineke_sdi_examples() {
    // Reineke 1933 (J. Agric. Res. 46:627–638); handbook values derived.
    close(
        reineke_sdi(200.0, 12.3, Units::Imperial),
        278.822,
        PRINTED_3,
    );
    close(reineke_sdi(494.1, 31.0, Units::Metric), 680.287, PRINTED_3);
    // Derived: 300/ha at 20 cm plus 100/ha at 40 cm → QMD 26.4575 cm, SDI 427.064.
    let c = stand_covariates(&[20.0, 40.0], &[300.0, 100.0], Units::Metric);
    close(c.qmd, 26.4575, PRINTED_4);
    close(
        reineke_sdi(c.stems, c.qmd, Units::Metric),
        427.064,
        PRINTED_3,
    );
}

#[test]
fn unit_constants() {
    // Exact definitions: 1 in = 2.54 cm; trees/acre × 2.4710538 = trees/ha.
    assert_eq!(Units::Imperial.cm_per_diameter_unit(), 2.54);
    close(1.0 / HA_PER_ACRE, 2.4710538, 5e-8);
    assert_eq!(Units::Metric.sdi_reference_diameter(), 25.4);
    assert_eq!(Units::Imperial.sdi_reference_diameter(), 10.0);
    assert_eq!(Units::Metric.stems_name(), "stems_per_ha");
    assert_eq!(Units::Imperial.stems_name(), "stems_per_ac");
    assert_eq!(Units::Imperial.basal_area_suffix(), "_ft2_ac");
    assert_eq!(Units::Metric.diameter_suffix(), "_cm");
    assert_eq!("Imperial".parse::<Units>(), Ok(Units::Imperial));
    assert!("furlongs".parse::<Units>().is_err());
    let json = serde_json::to_string(&Units::Metric).unwrap();
    assert_eq!(json, "\"metric\"");
}

#[test]
fn derived_names_round_trip() {
    for d in DerivedCovariate::ALL {
        assert_eq!(d.name().parse::<DerivedCovariate>(), Ok(d));
    }
    assert!("height".parse::<DerivedCovariate>().is_err());
}

proptest! {
    /// BAL from the sort-and-prefix-sum equals the O(n²) definition; diameters are rounded to
    /// 0.1 cm so ties occur.
    #[test]
    fn bal_matches_brute_force(
        trees in prop::collection::vec((1.0f64..60.0, 1.0f64..100.0), 0..80),
        imperial in any::<bool>(),
    ) {
        let units = if imperial { Units::Imperial } else { Units::Metric };
        let dbh: Vec<f64> = trees.iter().map(|t| (t.0 * 10.0).round() / 10.0).collect();
        let e: Vec<f64> = trees.iter().map(|t| t.1).collect();
        let c = stand_covariates(&dbh, &e, units);
        let k = units.basal_area_constant();
        for i in 0..dbh.len() {
            let brute: f64 = (0..dbh.len())
                .filter(|&j| dbh[j] > dbh[i])
                .map(|j| k * e[j] * dbh[j] * dbh[j])
                .sum();
            prop_assert!((c.bal[i] - brute).abs() <= 1e-9 * (1.0 + brute), "tree {i}: {} vs {brute}", c.bal[i]);
        }
        let ba: f64 = (0..dbh.len()).map(|j| k * e[j] * dbh[j] * dbh[j]).sum();
        prop_assert!((c.ba - ba).abs() <= 1e-9 * (1.0 + ba));
        let stems: f64 = e.iter().sum();
        prop_assert!((c.stems - stems).abs() <= 1e-9 * (1.0 + stems));
    }
}
