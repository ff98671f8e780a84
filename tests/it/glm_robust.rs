//! Cluster-robust covariance against lung_cloglog_cluster.json (NumPy at the converged
//! estimate; cross-checked with R 4.2.2 sandwich 3.0.2 vcovCL type HC1 to 2.8e-6 relative), and
//! the observed-information covariance against `std_errors_observed_information` /
//! `covariance_observed_information` of the probit and cloglog cases (statsmodels 0.15.0,
//! cross-checked with R 4.2.2; fixture README "Conventions (GLM)").

use crate::glm_common::*;
use stemcast::model::glm::{fit_glm, GlmOptions};
use stemcast::model::robust::{cluster_robust, observed_information};

// lung_cloglog_cluster.json: CR1 by patient id; tolerance "relative 1e-5 on the CR1 standard
// errors" (the fixture's own rule), covariance within 1e-5·√(Vii·Vjj).
#[test]
fn lung_cr1_by_patient() {
    let c = case("lung_cloglog_cluster");
    let d = case_data(&c);
    let fit = fit_glm(&glm_data(&d), &GlmOptions { link: link_of(&c) }).unwrap();
    let ids: Vec<u64> = columns("lung_intervals.csv")["id"]
        .iter()
        .map(|&v| v as u64)
        .collect();
    let r = cluster_robust(&fit, &glm_data(&d), &ids).unwrap();
    let e = &c["expected"];
    assert_eq!(r.n_clusters as u64, e["n_clusters"].as_u64().unwrap());
    close_all(
        "CR1 SE",
        &r.std_errors,
        &vec_f(&e["std_errors_cr1"]),
        1e-5,
        0.0,
    );
    let cov = e["covariance_cr1"].as_array().unwrap();
    for i in 0..5 {
        for j in 0..5 {
            let limit = 1e-5 * (f(&cov[i][i]) * f(&cov[j][j])).sqrt();
            assert!(
                (r.covariance[i][j] - f(&cov[i][j])).abs() <= limit,
                "CR1[{i}][{j}]"
            );
        }
    }
    assert!(cluster_robust(&fit, &glm_data(&d), &ids[1..]).is_err());
}

fn check_observed_information(name: &str) {
    let c = case(name);
    let d = case_data(&c);
    let fit = fit_glm(&glm_data(&d), &GlmOptions { link: link_of(&c) }).unwrap();
    let o = observed_information(&fit, &glm_data(&d)).unwrap();
    let e = &c["expected"];
    // README tolerance table: SEs rtol 1e-6, atol 1e-10; covariance |Δij| ≤ 1e-6·√(Vii·Vjj).
    close_all(
        &format!("{name}: observed-information SE"),
        &o.std_errors,
        &vec_f(&e["std_errors_observed_information"]),
        1e-6,
        1e-10,
    );
    let cov = e["covariance_observed_information"].as_array().unwrap();
    let k = o.std_errors.len();
    for i in 0..k {
        for j in 0..k {
            let limit = 1e-6 * (f(&cov[i][i]) * f(&cov[j][j])).sqrt();
            assert!(
                (o.covariance[i][j] - f(&cov[i][j])).abs() <= limit,
                "{name}: observed covariance[{i}][{j}]"
            );
        }
    }
}

// bliss_probit_counts.json: Bliss (1935) successes/trials, probit.
#[test]
fn bliss_probit_observed_information() {
    check_observed_information("bliss_probit_counts");
}

// bliss_cloglog_counts.json: Bliss (1935) successes/trials, cloglog.
#[test]
fn bliss_cloglog_observed_information() {
    check_observed_information("bliss_cloglog_counts");
}

// lung_cloglog_offset.json: cloglog with an exposure offset.
#[test]
fn lung_cloglog_observed_information() {
    check_observed_information("lung_cloglog_offset");
}

// Derived analytically: for the canonical logit link the observed and expected information
// coincide (μ″ = μ′(1 − 2μ) cancels the residual term), so on bliss_logit_counts.json the
// observed-information covariance is the fit's own.
#[test]
fn logit_observed_information_is_the_expected() {
    let c = case("bliss_logit_counts");
    let d = case_data(&c);
    let fit = fit_glm(&glm_data(&d), &GlmOptions { link: link_of(&c) }).unwrap();
    let o = observed_information(&fit, &glm_data(&d)).unwrap();
    close_all("logit SE", &o.std_errors, &fit.std_errors, 1e-12, 0.0);
}
