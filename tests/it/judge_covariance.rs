//! Cluster-robust covariance and the exposure interval through the command line, against the
//! lung fixtures.

use crate::common::fixtures::{close, expected, fixture, numbers};
use crate::common::{stderr, stdout, Sandbox};
use serde_json::Value;

#[test]
fn cluster_robust_standard_errors_match_lung_cloglog_cluster() {
    let sb = Sandbox::new();
    let data = fixture("lung_intervals.csv");
    let model = sb.path("m.toml");
    // The command of /work/shared/checks/conformance.py check_judge, plus --out.
    let out = sb.run(&[
        "fit",
        "survival",
        data.to_str().unwrap(),
        "--predictors",
        "int2, int3, age, female",
        "--link",
        "cloglog",
        "--status",
        "dead",
        "--offset",
        "log_exposure",
        "--cluster",
        "id",
        "--format",
        "json",
        "--out",
        model.to_str().unwrap(),
    ]);
    assert!(out.status.success(), "{}", stderr(&out));
    let j: Value = serde_json::from_str(&stdout(&out)).unwrap();
    // lung_cloglog_cluster.json expected.std_errors_cr1 (R sandwich::vcovCL type HC1; NumPy),
    // rtol 1e-5 as conformance.py.
    let e = expected("lung_cloglog_cluster");
    let want = numbers(&e["std_errors_cr1"]);
    let got: Vec<f64> = j["coefficients"]
        .as_array()
        .unwrap()
        .iter()
        .map(|c| c["std_error"].as_f64().unwrap())
        .collect();
    assert_eq!(got.len(), want.len());
    for (g, w) in got.iter().zip(&want) {
        assert!(close(*g, *w, 1e-5, 1e-12), "{g} vs {w}");
    }
    assert_eq!(j["covariance_kind"], "cluster_robust");
    // lung_cloglog_cluster.json expected.n_clusters.
    assert_eq!(j["n_clusters"], e["n_clusters"]);
    // covariance rule of the reference README: |Δij| ≤ 1e-6·√(Vii·Vjj), against covariance_cr1.
    let cov = j["covariance"].as_array().unwrap();
    let ecov = e["covariance_cr1"].as_array().unwrap();
    for i in 0..want.len() {
        let (row, erow) = (numbers(&cov[i]), numbers(&ecov[i]));
        for k in 0..want.len() {
            assert!(
                (row[k] - erow[k]).abs() <= 1e-5 * want[i] * want[k],
                "V[{i}][{k}]"
            );
        }
    }
    let text = std::fs::read_to_string(&model).unwrap();
    let m: toml::Value = toml::from_str(&text).unwrap();
    assert_eq!(m["covariance"]["kind"].as_str(), Some("cluster_robust"));
    let se0 = m["coefficients"][0]["std_error"].as_float().unwrap();
    assert!(close(se0, want[0], 1e-5, 1e-12));

    let text_out = sb.run(&[
        "fit",
        "survival",
        data.to_str().unwrap(),
        "-p",
        "int2, int3, age, female",
        "--link",
        "cloglog",
        "--status",
        "dead",
        "--offset",
        "log_exposure",
        "--cluster",
        "id",
    ]);
    assert!(stdout(&text_out).contains("cluster-robust (CR1 sandwich, 228 clusters)"));
}

#[test]
fn exposure_interval_reproduces_lung_cloglog_offset() {
    // lung_intervals.csv holds log_exposure = ln(years at risk); give the years themselves
    // (exp of that column) and let --interval exposure add ln(years) as the offset.
    let sb = Sandbox::new();
    let text = std::fs::read_to_string(fixture("lung_intervals.csv")).unwrap();
    let mut lines = text.lines();
    let header: Vec<&str> = lines.next().unwrap().split(',').collect();
    let col = header.iter().position(|h| *h == "log_exposure").unwrap();
    let mut csv = format!("{},years_at_risk\n", header.join(","));
    for line in lines.filter(|l| !l.is_empty()) {
        let cells: Vec<&str> = line.split(',').collect();
        let years = cells[col].parse::<f64>().unwrap().exp();
        csv.push_str(&format!("{line},{years:?}\n"));
    }
    let data = sb.write("lung_years.csv", &csv);
    let model = sb.path("m.toml");
    let out = sb.run(&[
        "fit",
        "survival",
        data.to_str().unwrap(),
        "-p",
        "int2, int3, age, female",
        "--status",
        "dead",
        "--outcome",
        "dead",
        "--link",
        "cloglog",
        "--interval",
        "exposure",
        "--years-col",
        "years_at_risk",
        "--format",
        "json",
        "--out",
        model.to_str().unwrap(),
    ]);
    assert!(out.status.success(), "{}", stderr(&out));
    let j: Value = serde_json::from_str(&stdout(&out)).unwrap();
    // lung_cloglog_offset.json expected (statsmodels GLM; R glm): coefficients and SEs rtol
    // 1e-6; deviance and AIC rtol 1e-8 (exp then ln of the offset moves it by ~1e-16).
    let e = expected("lung_cloglog_offset");
    let coefs = j["coefficients"].as_array().unwrap();
    for (c, (b, s)) in coefs.iter().zip(
        numbers(&e["coefficients"])
            .iter()
            .zip(numbers(&e["std_errors"])),
    ) {
        assert!(close(c["estimate"].as_f64().unwrap(), *b, 1e-6, 1e-10));
        assert!(close(c["std_error"].as_f64().unwrap(), s, 1e-6, 1e-10));
    }
    let dev = j["deviance"].as_f64().unwrap();
    assert!(close(
        dev,
        e["residual_deviance"].as_f64().unwrap(),
        1e-8,
        1e-8
    ));
    assert!(close(
        j["aic"].as_f64().unwrap(),
        e["aic"].as_f64().unwrap(),
        1e-8,
        1e-8
    ));
    let m: toml::Value = toml::from_str(&std::fs::read_to_string(&model).unwrap()).unwrap();
    assert_eq!(m["interval"].as_str(), Some("exposure"));
    assert_eq!(m["outcome"].as_str(), Some("dead"));
    assert_eq!(m["period_years"].as_float(), Some(1.0));
}
