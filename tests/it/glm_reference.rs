//! The binomial GLM against the reference fixtures in tests/fixtures (see its README). Every
//! expected value is read at test time from the named fixture JSON, whose `expected` block was
//! computed by statsmodels 0.15.0 GLM and cross-checked with R 4.2.2 `glm`; tolerances are the
//! fixtures' README table.

use crate::glm_common::*;
use stemcast::model::glm::{fit_glm, GlmFit, GlmOptions};
use stemcast::model::separation::{find_separation, SeparationKind};
use stemcast::model::ModelError;

fn fit_case(name: &str) -> (GlmFit, serde_json::Value) {
    let c = case(name);
    let d = case_data(&c);
    let fit = fit_glm(&glm_data(&d), &GlmOptions { link: link_of(&c) }).unwrap();
    (fit, c)
}

/// Compares every GLM quantity of a fixture's `expected` block with the fit.
fn check_against_fixture(name: &str) {
    let (fit, c) = fit_case(name);
    let e = &c["expected"];
    assert!(fit.converged, "{name}: converged");
    assert!(fit.warnings.is_empty(), "{name}: {:?}", fit.warnings);
    let p = fit.coefficients.len();
    assert_eq!(
        p,
        e["n_params"].as_u64().unwrap() as usize,
        "{name}: n_params"
    );
    close_all(
        "coefficients",
        &fit.coefficients,
        &vec_f(&e["coefficients"]),
        1e-6,
        1e-10,
    );
    close_all(
        "std_errors",
        &fit.std_errors,
        &vec_f(&e["std_errors"]),
        1e-6,
        1e-12,
    );
    close_all("z", &fit.z, &vec_f(&e["z_values"]), 1e-6, 1e-9);
    close_all(
        "p_values",
        &fit.p_values,
        &vec_f(&e["p_values"]),
        1e-4,
        1e-12,
    );
    let cov = e["covariance"].as_array().unwrap();
    for i in 0..p {
        let row = vec_f(&cov[i]);
        for j in 0..p {
            let vii = f(&cov[i][i]);
            let vjj = f(&cov[j][j]);
            let limit = 1e-6 * (vii * vjj).sqrt();
            assert!(
                (fit.covariance[i][j] - row[j]).abs() <= limit,
                "{name}: covariance[{i}][{j}] {} vs {}",
                fit.covariance[i][j],
                row[j]
            );
        }
    }
    let rel = 1e-8;
    close(
        "deviance",
        fit.deviance,
        f(&e["residual_deviance"]),
        rel,
        1e-8,
    );
    close(
        "null_deviance",
        fit.null_deviance,
        f(&e["null_deviance"]),
        rel,
        1e-8,
    );
    close(
        "log_likelihood",
        fit.log_likelihood,
        f(&e["log_likelihood"]),
        rel,
        1e-8,
    );
    close("aic", fit.aic, f(&e["aic"]), rel, 1e-8);
    close("bic", fit.bic, f(&e["bic"]), rel, 1e-8);
    assert_eq!(
        fit.df_residual as u64,
        e["df_residual"].as_u64().unwrap(),
        "{name}: df_residual"
    );
    assert_eq!(
        fit.df_null as u64,
        e["df_null"].as_u64().unwrap(),
        "{name}: df_null"
    );
    assert_eq!(
        fit.n_obs as u64,
        e["n_obs"].as_u64().unwrap(),
        "{name}: n_obs"
    );
    assert_eq!(
        fit.terms.len(),
        e["coef_names"].as_array().unwrap().len(),
        "{name}: terms"
    );
}

// bliss_logit_counts.json: statsmodels 0.15.0 GLM, cross-checked with R 4.2.2 glm
// (successes/trials, logit; AIC includes Σ ln C(n, y)).
#[test]
fn bliss_logit_counts() {
    check_against_fixture("bliss_logit_counts");
}

// bliss_probit_counts.json: statsmodels 0.15.0 GLM, cross-checked with R 4.2.2 glm
// (expected-information SEs).
#[test]
fn bliss_probit_counts() {
    check_against_fixture("bliss_probit_counts");
}

// bliss_cloglog_counts.json: statsmodels 0.15.0 GLM, cross-checked with R 4.2.2 glm.
#[test]
fn bliss_cloglog_counts() {
    check_against_fixture("bliss_cloglog_counts");
}

// bliss_logit_weighted.json: statsmodels 0.15.0 GLM, cross-checked with R 4.2.2 glm
// (prior weights, one zero-weight row left out of n_obs, BIC and df).
#[test]
fn bliss_logit_weighted() {
    check_against_fixture("bliss_logit_weighted");
}

// bliss_logit_weighted.json `equivalence_with`: the weighted 0/1 form gives the grouped
// successes/trials coefficients and SEs (bliss_logit_counts.json).
#[test]
fn weighted_binary_matches_grouped_fit() {
    let (weighted, _) = fit_case("bliss_logit_weighted");
    let (grouped, _) = fit_case("bliss_logit_counts");
    close_all(
        "coefficients",
        &weighted.coefficients,
        &grouped.coefficients,
        1e-9,
        0.0,
    );
    close_all(
        "std_errors",
        &weighted.std_errors,
        &grouped.std_errors,
        1e-9,
        0.0,
    );
}

// birthwt_logit.json: statsmodels 0.15.0 GLM, cross-checked with R 4.2.2 glm.
#[test]
fn birthwt_logit() {
    check_against_fixture("birthwt_logit");
}

// lung_cloglog_offset.json: statsmodels 0.15.0 GLM, cross-checked with R 4.2.2 glm
// (cloglog with offset ln exposure; null deviance fitted with the offset).
#[test]
fn lung_cloglog_offset() {
    check_against_fixture("lung_cloglog_offset");
}

// Fitted values and linear predictor of birthwt_logit.json and lung_cloglog_offset.json
// (statsmodels 0.15.0 GLM), recomputed from the fit, which holds no data.
#[test]
fn fitted_values_from_the_fit() {
    for name in ["birthwt_logit", "lung_cloglog_offset"] {
        let (fit, c) = fit_case(name);
        let d = case_data(&c);
        let mu = fit
            .fitted(d.x.view(), d.offset.as_ref().map(|o| o.view()))
            .unwrap();
        close_all(
            "fitted",
            mu.as_slice().unwrap(),
            &vec_f(&c["expected"]["fitted_values"]),
            1e-6,
            1e-10,
        );
        let eta = fit
            .linear_predictor(d.x.view(), d.offset.as_ref().map(|o| o.view()))
            .unwrap();
        close_all(
            "eta",
            eta.as_slice().unwrap(),
            &vec_f(&c["expected"]["linear_predictor"]),
            1e-6,
            1e-10,
        );
    }
}

// separation_toy_firth.json `expected.ordinary_mle.separation` = "complete" (linear programs).
#[test]
fn separation_toy_is_refused_as_complete() {
    let c = case("separation_toy_firth");
    let d = case_data(&c);
    match fit_glm(&glm_data(&d), &GlmOptions::default()) {
        Err(ModelError::Separation { kind, terms }) => {
            assert_eq!(
                kind,
                c["expected"]["ordinary_mle"]["separation"]
                    .as_str()
                    .unwrap()
            );
            assert_eq!(terms, vec!["x".to_string()]);
        }
        other => panic!("expected separation, got {other:?}"),
    }
}

// endometrial_firth.json `expected.ordinary_mle.separation` = "quasi-complete", by `nv`
// (Heinze & Schemper 2002); R's glm reports convergence here, stemcast must refuse.
#[test]
fn endometrial_is_refused_as_quasi_complete_by_nv() {
    let c = case("endometrial_firth");
    let d = case_data(&c);
    match fit_glm(&glm_data(&d), &GlmOptions::default()) {
        Err(ModelError::Separation { kind, terms }) => {
            assert_eq!(
                kind,
                c["expected"]["ordinary_mle"]["separation"]
                    .as_str()
                    .unwrap()
            );
            assert_eq!(terms, vec!["nv".to_string()]);
        }
        other => panic!("expected separation, got {other:?}"),
    }
}

// The public check agrees: endometrial_firth.json (quasi-complete, nv); birthwt_logit.json has
// a maximum-likelihood estimate (statsmodels and R converge to it).
#[test]
fn find_separation_on_fixtures() {
    let d = case_data(&case("endometrial_firth"));
    let s = find_separation(&glm_data(&d)).unwrap().unwrap();
    assert_eq!(s.kind, SeparationKind::QuasiComplete);
    assert_eq!(s.terms, vec!["nv".to_string()]);
    let d = case_data(&case("birthwt_logit"));
    assert_eq!(find_separation(&glm_data(&d)).unwrap(), None);
}
