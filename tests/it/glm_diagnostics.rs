//! Diagnostics against the reference fixtures (tests/fixtures, see its README) and the
//! handbook check values (tests/fixtures/handbook-checks.md).

use crate::glm_common::*;
use stemcast::model::diagnostics::{
    calibration_by_class, hosmer_lemeshow, lr_test, lr_test_vs_null, require_unit_binary, roc_auc,
};
use stemcast::model::glm::{fit_glm, GlmOptions};

fn fitted_case(
    name: &str,
) -> (
    Vec<f64>,
    Vec<f64>,
    serde_json::Value,
    stemcast::model::glm::GlmFit,
) {
    let c = case(name);
    let d = case_data(&c);
    let fit = fit_glm(&glm_data(&d), &GlmOptions { link: link_of(&c) }).unwrap();
    let mu = fit
        .fitted(d.x.view(), d.offset.as_ref().map(|o| o.view()))
        .unwrap();
    (d.y.to_vec(), mu.to_vec(), c, fit)
}

fn check_auc_and_hl(name: &str) {
    let (y, mu, c, _) = fitted_case(name);
    let e = &c["expected"];
    let auc = roc_auc(&y, &mu).unwrap();
    assert_eq!(
        auc.twice_u as u64,
        e["auc_detail"]["twice_u"].as_u64().unwrap(),
        "{name}: twice_u"
    );
    assert_eq!(auc.n_events, e["auc_detail"]["n_events"].as_u64().unwrap());
    assert_eq!(
        auc.n_nonevents,
        e["auc_detail"]["n_nonevents"].as_u64().unwrap()
    );
    close("auc", auc.auc, f(&e["auc"]), 0.0, 1e-12);
    let hl = hosmer_lemeshow(&y, &mu).unwrap();
    let h = &e["hosmer_lemeshow"];
    close("HL statistic", hl.statistic, f(&h["statistic"]), 1e-6, 1e-9);
    close("HL p", hl.p_value, f(&h["p_value"]), 1e-4, 1e-12);
    assert_eq!(hl.df as u64, h["df"].as_u64().unwrap());
    assert_eq!(hl.n_groups as u64, h["n_groups"].as_u64().unwrap());
    let sizes: Vec<u64> = hl.group_sizes.iter().map(|&s| s as u64).collect();
    let exp_sizes: Vec<u64> = h["group_sizes"]
        .as_array()
        .unwrap()
        .iter()
        .map(|v| v.as_u64().unwrap())
        .collect();
    assert_eq!(sizes, exp_sizes, "{name}: HL group sizes");
    let exp_obs: Vec<u64> = h["observed_events"]
        .as_array()
        .unwrap()
        .iter()
        .map(|v| v.as_u64().unwrap())
        .collect();
    assert_eq!(hl.observed_events, exp_obs, "{name}: HL observed");
    close_all(
        "HL expected",
        &hl.expected_events,
        &vec_f(&h["expected_events"]),
        1e-6,
        1e-9,
    );
    close_all("HL breaks", &hl.breaks, &vec_f(&h["breaks"]), 1e-6, 1e-12);
}

// birthwt_logit.json: AUC (statsmodels 0.15.0 fit; R pROC 1.18.0, ROCR, sklearn agree) and
// Hosmer–Lemeshow by the fixture's `expected.hosmer_lemeshow.algorithm` (R and Python
// re-implementations of ResourceSelection::hoslem.test).
#[test]
fn birthwt_auc_and_hosmer_lemeshow() {
    check_auc_and_hl("birthwt_logit");
}

// lung_cloglog_offset.json: same sources; tied fitted values must share an HL group.
#[test]
fn lung_auc_and_hosmer_lemeshow() {
    check_auc_and_hl("lung_cloglog_offset");
}

// birthwt_logit.json and lung_cloglog_offset.json `expected.lr_test_vs_null`
// (statsmodels 0.15.0; R 4.2.2 anova).
#[test]
fn lr_test_against_null() {
    for name in [
        "birthwt_logit",
        "lung_cloglog_offset",
        "bliss_probit_counts",
    ] {
        let (_, _, c, fit) = fitted_case(name);
        let e = &c["expected"]["lr_test_vs_null"];
        let t = lr_test_vs_null(&fit);
        close("LR statistic", t.statistic, f(&e["statistic"]), 1e-8, 1e-8);
        assert_eq!(t.df as u64, e["df"].as_u64().unwrap());
        close("LR p", t.p_value, f(&e["p_value"]), 1e-4, 1e-12);
    }
}

// birthwt_lrt_race.json: statsmodels 0.15.0 GLM, cross-checked with R 4.2.2 anova(test = "Chisq").
#[test]
fn birthwt_lr_test_for_race() {
    let c = case("birthwt_lrt_race");
    let cols = columns("birthwt.csv");
    let names = |key: &str| -> Vec<String> {
        c["model"][key]
            .as_array()
            .unwrap()
            .iter()
            .map(|t| t.as_str().unwrap().to_string())
            .collect()
    };
    let fit_terms = |terms: Vec<String>| {
        let refs: Vec<&str> = terms.iter().map(String::as_str).collect();
        let mut d = design(&cols, &refs, true);
        d.y = ndarray::Array1::from(cols["low"].clone());
        fit_glm(&glm_data(&d), &GlmOptions::default()).unwrap()
    };
    let full = fit_terms(names("full_terms"));
    let reduced = fit_terms(names("reduced_terms"));
    let e = &c["expected"];
    close(
        "reduced loglik",
        reduced.log_likelihood,
        f(&e["reduced"]["log_likelihood"]),
        1e-8,
        1e-8,
    );
    let t = lr_test(&reduced, &full).unwrap();
    close("LR statistic", t.statistic, f(&e["statistic"]), 1e-8, 1e-8);
    assert_eq!(t.df as u64, e["df"].as_u64().unwrap());
    close("LR p", t.p_value, f(&e["p_value"]), 1e-4, 1e-12);
    assert!(lr_test(&full, &reduced).is_err());
}

// handbook-checks.md "Model fit statistics": dead scored 0.9 and 0.4 against survivors 0.8,
// 0.3, 0.2 → AUC 5/6 (derived).
#[test]
fn handbook_auc_five_sixths() {
    let auc = roc_auc(&[1.0, 1.0, 0.0, 0.0, 0.0], &[0.9, 0.4, 0.8, 0.3, 0.2]).unwrap();
    assert_eq!(auc.twice_u, 10);
    close("auc", auc.auc, 5.0 / 6.0, 0.0, 1e-15);
    // Ties count ½, derived: one event and one non-event at the same score → 0.5.
    assert_eq!(roc_auc(&[1.0, 0.0], &[0.3, 0.3]).unwrap().auc, 0.5);
}

#[test]
fn undefined_diagnostics_give_a_reason() {
    assert!(roc_auc(&[2.0, 0.0], &[0.5, 0.5]).is_err());
    assert!(hosmer_lemeshow(&[0.5, 1.0], &[0.5, 0.5]).is_err());
    assert!(roc_auc(&[1.0, 1.0], &[0.5, 0.6]).is_err());
    assert!(require_unit_binary(true, None).is_err());
    assert!(require_unit_binary(false, Some(&[1.0, 2.0])).is_err());
    assert!(require_unit_binary(false, Some(&[1.0, 1.0])).is_ok());
}

// Derived by hand: classes [0, 10), [10, 20), [20, ∞) of diameters 5, 8, 12, 25, 30 (and −1
// left out) with outcomes 1, 0, 1, 1, 1 and fitted 0.4, 0.6, 0.7, 0.9, 0.8.
#[test]
fn calibration_table_by_diameter_class() {
    let dbh = [5.0, 8.0, 12.0, 25.0, 30.0, -1.0];
    let y = [1.0, 0.0, 1.0, 1.0, 1.0, 0.0];
    let p = [0.4, 0.6, 0.7, 0.9, 0.8, 0.5];
    let t = calibration_by_class(&dbh, &y, &p, &[0.0, 10.0, 20.0]).unwrap();
    assert_eq!(t.len(), 3);
    assert_eq!((t[0].records, t[1].records, t[2].records), (2, 1, 2));
    close("observed 0", t[0].observed, 0.5, 0.0, 1e-15);
    close("predicted 0", t[0].mean_predicted, 0.5, 0.0, 1e-15);
    close("predicted 2", t[2].mean_predicted, 0.85, 0.0, 1e-15);
    assert_eq!(t[1].upper, Some(20.0));
    assert_eq!(t[2].upper, None);
    assert!(calibration_by_class(&dbh, &y, &p, &[10.0, 0.0]).is_err());
}
