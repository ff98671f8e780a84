//! Growth-model OLS against outside references: statsmodels 0.15.0 OLS / R 4.2.2 `lm`
//! (tests/fixtures/ols/*.json), Longley also NIST StRD certified.

use ndarray::{Array1, Array2};
use serde_json::Value;
use stemcast::model::growth::fit_ols;

fn load(case: &str) -> (Array2<f64>, Array1<f64>, Vec<String>, Value) {
    let dir = std::path::Path::new("tests/fixtures/ols");
    let json: Value =
        serde_json::from_str(&std::fs::read_to_string(dir.join(format!("{case}.json"))).unwrap())
            .unwrap();
    let mut rdr = csv::Reader::from_path(dir.join(json["data"]["file"].as_str().unwrap())).unwrap();
    let headers = rdr.headers().unwrap().clone();
    let col = |name: &str| headers.iter().position(|h| h == name).unwrap();
    let response = col(json["model"]["response"].as_str().unwrap());
    let terms: Vec<String> = json["model"]["terms"]
        .as_array()
        .unwrap()
        .iter()
        .map(|t| t.as_str().unwrap().to_string())
        .collect();
    let idx: Vec<usize> = terms.iter().map(|t| col(t)).collect();
    let mut rows = Vec::new();
    let mut y = Vec::new();
    for rec in rdr.records() {
        let rec = rec.unwrap();
        y.push(rec[response].parse::<f64>().unwrap());
        rows.push(1.0);
        for &j in &idx {
            rows.push(rec[j].parse::<f64>().unwrap());
        }
    }
    let p = terms.len() + 1;
    let x = Array2::from_shape_vec((y.len(), p), rows).unwrap();
    let mut names = vec!["(intercept)".to_string()];
    names.extend(terms);
    (x, Array1::from(y), names, json)
}

fn close(got: f64, exp: f64, rtol: f64, atol: f64) -> bool {
    (got - exp).abs() <= atol + rtol * exp.abs()
}

fn check(case: &str, rtol: f64) {
    let (x, y, names, json) = load(case);
    let e = &json["expected"];
    let fit = fit_ols(x.view(), y.view(), &names, true).unwrap();
    let v = |k: &str| -> Vec<f64> {
        e[k].as_array()
            .unwrap()
            .iter()
            .map(|v| v.as_f64().unwrap())
            .collect()
    };
    for (what, got, exp) in [
        ("coefficients", &fit.coefficients, v("coefficients")),
        ("std_errors", &fit.std_errors, v("std_errors")),
        ("t_values", &fit.t_values, v("t_values")),
    ] {
        for (g, x) in got.iter().zip(&exp) {
            assert!(close(*g, *x, rtol, 1e-12), "{case} {what}: {g} vs {x}");
        }
    }
    for (g, x) in fit.p_values.iter().zip(v("p_values")) {
        assert!(close(*g, x, 1e-4, 1e-12), "{case} p: {g} vs {x}");
    }
    let scalar = |k: &str| e[k].as_f64().unwrap();
    for (what, got) in [
        ("residual_std_error", fit.residual_sd),
        ("r_squared", fit.r_squared),
        ("adj_r_squared", fit.adj_r_squared),
        ("rss", fit.rss),
        ("log_likelihood", fit.log_likelihood),
        ("aic", fit.aic),
        ("bic", fit.bic),
    ] {
        assert!(
            close(got, scalar(what), rtol, 1e-12),
            "{case} {what}: {got} vs {}",
            scalar(what)
        );
    }
    assert_eq!(fit.df_residual as u64, e["df_residual"].as_u64().unwrap());
    assert_eq!(fit.records as u64, e["n_obs"].as_u64().unwrap());
}

#[test]
fn longley_matches_nist_certified_and_r_lm() {
    // longley_ols.json: statsmodels 0.15.0 OLS = R 4.2.2 lm = NIST StRD certified (1.3e-11);
    // tolerance 1e-7 relative per the reference README (ill-conditioned).
    check("longley_ols", 1e-7);
}

#[test]
fn trees_loglog_matches_r_lm() {
    // trees_loglog_ols.json: statsmodels 0.15.0 OLS, cross-checked with R 4.2.2 lm; 1e-9.
    check("trees_loglog_ols", 1e-9);
}

#[test]
fn collinear_column_is_named() {
    // A column equal to 2 × another is aliased (derived analytically).
    let (x, y, mut names, _) = load("trees_loglog_ols");
    let mut x2 = Array2::zeros((x.nrows(), 4));
    x2.slice_mut(ndarray::s![.., 0..3]).assign(&x);
    let doubled = x.column(1).mapv(|v| 2.0 * v);
    x2.column_mut(3).assign(&doubled);
    names.push("twice".into());
    let e = fit_ols(x2.view(), y.view(), &names, true).unwrap_err();
    assert!(e.to_string().contains("`twice`"), "{e}");
}
