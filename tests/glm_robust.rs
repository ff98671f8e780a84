//! Cluster-robust covariance against lung_cloglog_cluster.json (NumPy at the converged
//! estimate; cross-checked with R 4.2.2 sandwich 3.0.2 vcovCL type HC1 to 2.8e-6 relative).

mod glm_common;

use glm_common::*;
use stemcast::model::glm::{fit_glm, GlmOptions};
use stemcast::model::robust::cluster_robust;

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
