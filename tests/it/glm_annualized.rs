//! The annualised survival model P = p^L (`docs/maths.md#annualised-survival`).

use crate::glm_common::*;
use ndarray::{Array1, Array2};
use stemcast::model::annualized::fit_annualized;
use stemcast::model::glm::GlmData;

// With every interval L = 1 the model is the logistic regression: birthwt_logit.json
// (statsmodels 0.15.0 GLM, cross-checked with R 4.2.2 glm); observed = expected information
// for the logit link, so the SEs agree too.
#[test]
fn unit_intervals_reproduce_the_logit_fit() {
    let c = case("birthwt_logit");
    let d = case_data(&c);
    let years = Array1::ones(d.y.len());
    let fit = fit_annualized(&glm_data(&d), years.view()).unwrap();
    let e = &c["expected"];
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
    close(
        "loglik",
        fit.log_likelihood,
        f(&e["log_likelihood"]),
        1e-8,
        1e-8,
    );
    close("aic", fit.aic, f(&e["aic"]), 1e-8, 1e-8);
    close("bic", fit.bic, f(&e["bic"]), 1e-8, 1e-8);
}

fn one_column(n: usize) -> (Array2<f64>, Vec<String>) {
    (Array2::ones((n, 1)), vec!["(intercept)".to_string()])
}

// Derived analytically: intercept only, every L = 5, 19 of 20 survive → by invariance the MLE
// of P₅ is 19/20, so the annual p̂ = 0.95^(1/5); handbook-checks.md: p = 0.99 ↔ P₅ = 0.950990.
#[test]
fn intercept_only_closed_form() {
    let (x, terms) = one_column(20);
    let y = Array1::from_iter((0..20).map(|i| f64::from(u8::from(i > 0))));
    let years = Array1::from_elem(20, 5.0);
    let data = GlmData {
        x: x.view(),
        terms: &terms,
        y: y.view(),
        trials: None,
        weights: None,
        offset: None,
    };
    let fit = fit_annualized(&data, years.view()).unwrap();
    let p = 1.0 / (1.0 + (-fit.coefficients[0]).exp());
    close("annual p", p, 0.95f64.powf(0.2), 1e-9, 0.0);
    close(
        "handbook P5 of p = 0.99",
        0.99f64.powi(5),
        0.950990,
        0.0,
        5e-7,
    );
}

// handbook-checks.md "Survival over intervals": ℓ = Σ [y·L·ln p + (1 − y)·ln(1 − p^L)],
// evaluated directly at the estimate on unequal intervals.
#[test]
fn log_likelihood_is_the_handbook_formula() {
    let n = 12;
    let dbh: Vec<f64> = (0..n).map(|i| 5.0 + 2.0 * i as f64).collect();
    let y = Array1::from(vec![
        0.0, 1.0, 0.0, 1.0, 1.0, 0.0, 1.0, 1.0, 1.0, 0.0, 1.0, 1.0,
    ]);
    let years = Array1::from(vec![
        3.0, 5.0, 7.0, 5.0, 4.0, 10.0, 5.0, 6.0, 5.0, 8.0, 5.0, 3.0,
    ]);
    let x = Array2::from_shape_fn((n, 2), |(i, j)| if j == 0 { 1.0 } else { dbh[i] });
    let terms = vec!["(intercept)".to_string(), "dbh".to_string()];
    let data = GlmData {
        x: x.view(),
        terms: &terms,
        y: y.view(),
        trials: None,
        weights: None,
        offset: None,
    };
    let fit = fit_annualized(&data, years.view()).unwrap();
    let direct: f64 = (0..n)
        .map(|i| {
            let eta = fit.coefficients[0] + fit.coefficients[1] * dbh[i];
            let p = 1.0 / (1.0 + (-eta).exp());
            y[i] * years[i] * p.ln() + (1.0 - y[i]) * (1.0 - p.powf(years[i])).ln()
        })
        .sum();
    close("loglik", fit.log_likelihood, direct, 1e-12, 1e-12);
    assert!(fit.std_errors.iter().all(|s| s.is_finite() && *s > 0.0));
    let bad = Array1::from_elem(n, 0.0);
    assert!(fit_annualized(&data, bad.view()).is_err());

    // Derived analytically: prior weight 2 on every record doubles ℓ and leaves the estimate;
    // a column-major copy of the design is the same data.
    let twos = Array1::from_elem(n, 2.0);
    let xt = x.t().to_owned();
    let weighted = GlmData {
        x: xt.t(),
        weights: Some(twos.view()),
        ..data.clone()
    };
    let fit2 = fit_annualized(&weighted, years.view()).unwrap();
    close_all(
        "weighted",
        &fit2.coefficients,
        &fit.coefficients,
        1e-7,
        1e-9,
    );
    close(
        "weighted loglik",
        fit2.log_likelihood,
        2.0 * direct,
        1e-10,
        1e-10,
    );
}
