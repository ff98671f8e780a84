//! Reading the reference fixtures (tests/fixtures/*.json, copied from the shared reference set
//! with their sources) and comparing against them with the reference README's tolerance rule
//! |got − exp| ≤ atol + rtol·|exp|.

#![allow(dead_code)]

use std::path::PathBuf;

use serde_json::Value;

/// Path of a fixture file.
pub fn fixture(name: &str) -> PathBuf {
    PathBuf::from(env!("CARGO_MANIFEST_DIR"))
        .join("tests/fixtures")
        .join(name)
}

/// The `expected` block of a fixture case.
pub fn expected(case: &str) -> Value {
    let text = std::fs::read_to_string(fixture(&format!("{case}.json"))).expect("fixture");
    serde_json::from_str::<Value>(&text).expect("fixture JSON")["expected"].clone()
}

/// The reference README's comparison rule.
pub fn close(got: f64, want: f64, rtol: f64, atol: f64) -> bool {
    (got - want).abs() <= atol + rtol * want.abs()
}

/// [`close`] with a named tolerance pair from [`tol`].
pub fn within(got: f64, want: f64, (rtol, atol): (f64, f64)) -> bool {
    close(got, want, rtol, atol)
}

/// A JSON array of numbers.
pub fn numbers(v: &Value) -> Vec<f64> {
    v.as_array()
        .expect("array")
        .iter()
        .map(|x| x.as_f64().expect("number"))
        .collect()
}

/// Tolerances of the shared reference README, as (rtol, atol).
pub mod tol {
    /// Coefficients, standard errors, z.
    pub const COEF: (f64, f64) = (1e-6, 1e-10);
    /// p-values.
    pub const P_VALUE: (f64, f64) = (1e-4, 1e-12);
    /// Deviance, log-likelihood, AIC, BIC, LR statistic.
    pub const LIKELIHOOD: (f64, f64) = (1e-8, 1e-8);
    /// AUC (absolute).
    pub const AUC: (f64, f64) = (0.0, 1e-12);
    /// Hosmer–Lemeshow statistic.
    pub const HOSMER_LEMESHOW: (f64, f64) = (1e-6, 1e-9);
    /// Firth coefficients and standard errors.
    pub const FIRTH: (f64, f64) = (1e-6, 1e-9);
}
