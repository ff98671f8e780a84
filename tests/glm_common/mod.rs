//! Shared helpers for the GLM reference tests: read a fixture case (JSON) and its CSV, build
//! the design matrix in the fixture's coefficient order, compare with the README tolerances.
#![allow(dead_code)]

use std::collections::HashMap;
use std::path::PathBuf;

use ndarray::{Array1, Array2};
use serde_json::Value;

/// The fixtures folder.
pub fn fixture(name: &str) -> PathBuf {
    PathBuf::from(env!("CARGO_MANIFEST_DIR"))
        .join("tests/fixtures")
        .join(name)
}

/// A fixture case's JSON.
pub fn case(name: &str) -> Value {
    let text = std::fs::read_to_string(fixture(&format!("{name}.json"))).unwrap();
    serde_json::from_str(&text).unwrap()
}

/// The numeric columns of a fixture CSV.
pub fn columns(file: &str) -> HashMap<String, Vec<f64>> {
    let mut reader = csv::Reader::from_path(fixture(file)).unwrap();
    let headers: Vec<String> = reader.headers().unwrap().iter().map(String::from).collect();
    let mut cols: HashMap<String, Vec<f64>> = headers.iter().map(|h| (h.clone(), vec![])).collect();
    for record in reader.records() {
        let record = record.unwrap();
        for (h, v) in headers.iter().zip(record.iter()) {
            cols.get_mut(h).unwrap().push(v.parse().unwrap());
        }
    }
    cols
}

/// The data of a fixture model: design (intercept first), terms, y, trials, weights, offset.
pub struct CaseData {
    pub x: Array2<f64>,
    pub terms: Vec<String>,
    pub y: Array1<f64>,
    pub trials: Option<Array1<f64>>,
    pub weights: Option<Array1<f64>>,
    pub offset: Option<Array1<f64>>,
}

pub fn design(cols: &HashMap<String, Vec<f64>>, terms: &[&str], intercept: bool) -> CaseData {
    let n = cols.values().next().unwrap().len();
    let mut names = Vec::new();
    if intercept {
        names.push("(Intercept)".to_string());
    }
    names.extend(terms.iter().map(|t| t.to_string()));
    let x = Array2::from_shape_fn((n, names.len()), |(i, j)| {
        if intercept && j == 0 {
            1.0
        } else {
            cols[&names[j]][i]
        }
    });
    CaseData {
        x,
        terms: names,
        y: Array1::zeros(n),
        trials: None,
        weights: None,
        offset: None,
    }
}

/// Builds the data of a fixture case from its `model` block.
pub fn case_data(c: &Value) -> CaseData {
    let cols = columns(c["data"]["file"].as_str().unwrap());
    let m = &c["model"];
    let terms: Vec<&str> = m["terms"]
        .as_array()
        .unwrap()
        .iter()
        .map(|t| t.as_str().unwrap())
        .collect();
    let mut d = design(&cols, &terms, m["intercept"].as_bool().unwrap_or(true));
    let col = |key: &str| m[key].as_str().map(|name| Array1::from(cols[name].clone()));
    d.y = col("response").unwrap();
    d.trials = col("trials");
    d.weights = col("weights");
    d.offset = col("offset");
    d
}

/// The fitting input borrowed from case data.
pub fn glm_data(d: &CaseData) -> stemcast::model::glm::GlmData<'_> {
    stemcast::model::glm::GlmData {
        x: d.x.view(),
        terms: &d.terms,
        y: d.y.view(),
        trials: d.trials.as_ref().map(|a| a.view()),
        weights: d.weights.as_ref().map(|a| a.view()),
        offset: d.offset.as_ref().map(|a| a.view()),
    }
}

pub fn link_of(c: &Value) -> stemcast::model::link::Link {
    c["model"]["link"].as_str().unwrap().parse().unwrap()
}

pub fn f(v: &Value) -> f64 {
    v.as_f64().unwrap()
}

pub fn vec_f(v: &Value) -> Vec<f64> {
    v.as_array().unwrap().iter().map(f).collect()
}

/// |got − exp| ≤ atol + rtol·|exp|, the README's rule.
pub fn close(what: &str, got: f64, exp: f64, rtol: f64, atol: f64) {
    assert!(
        (got - exp).abs() <= atol + rtol * exp.abs(),
        "{what}: got {got:e}, expected {exp:e} (diff {:e})",
        (got - exp).abs()
    );
}

pub fn close_all(what: &str, got: &[f64], exp: &[f64], rtol: f64, atol: f64) {
    assert_eq!(got.len(), exp.len(), "{what}: length");
    for (i, (g, e)) in got.iter().zip(exp).enumerate() {
        close(&format!("{what}[{i}]"), *g, *e, rtol, atol);
    }
}
