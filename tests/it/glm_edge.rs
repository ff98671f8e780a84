//! Refusals and edge cases of the GLM fit: rank deficiency, invalid input, no intercept,
//! separation on large data, and recovery of the FIT-1M generating coefficients.

use ndarray::{Array1, Array2};
use stemcast::model::glm::{fit_glm, GlmData, GlmOptions};
use stemcast::model::link::Link;
use stemcast::model::ModelError;

fn names(v: &[&str]) -> Vec<String> {
    v.iter().map(|s| s.to_string()).collect()
}

fn data<'a>(x: &'a Array2<f64>, terms: &'a [String], y: &'a Array1<f64>) -> GlmData<'a> {
    GlmData {
        x: x.view(),
        terms,
        y: y.view(),
        trials: None,
        weights: None,
        offset: None,
    }
}

/// 40 rows: intercept, x = i mod 7, and an overlapping 0/1 outcome.
fn base(extra: impl Fn(usize, f64) -> f64) -> (Array2<f64>, Array1<f64>) {
    let x = Array2::from_shape_fn((40, 3), |(i, j)| {
        let xi = (i % 7) as f64;
        match j {
            0 => 1.0,
            1 => xi,
            _ => extra(i, xi),
        }
    });
    let y = Array1::from_iter((0..40).map(|i| f64::from(u8::from((i * 5 + 3) % 11 < 5))));
    (x, y)
}

#[test]
fn constant_term_is_named() {
    let (x, y) = base(|_, _| 3.0);
    let terms = names(&["(intercept)", "x", "plot_area"]);
    match fit_glm(&data(&x, &terms, &y), &GlmOptions::default()) {
        Err(ModelError::RankDeficient { term, message }) => {
            assert_eq!(term, "plot_area");
            assert!(message.contains("`plot_area` is constant (3)"), "{message}");
        }
        other => panic!("expected rank deficiency, got {other:?}"),
    }
}

#[test]
fn zero_term_is_named() {
    let (x, y) = base(|_, _| 0.0);
    let terms = names(&["(intercept)", "x", "removed_stems"]);
    let err = fit_glm(&data(&x, &terms, &y), &GlmOptions::default()).unwrap_err();
    assert!(
        err.to_string()
            .contains("`removed_stems` is zero for every record"),
        "{err}"
    );
}

#[test]
fn collinear_term_is_named() {
    let (x, y) = base(|_, xi| 2.0 * xi + 1.0);
    let terms = names(&["(intercept)", "x", "x2"]);
    match fit_glm(&data(&x, &terms, &y), &GlmOptions::default()) {
        Err(ModelError::RankDeficient { term, message }) => {
            assert_eq!(term, "x2");
            assert!(message.contains("linear combination"), "{message}");
        }
        other => panic!("expected rank deficiency, got {other:?}"),
    }
}

#[test]
fn invalid_input_is_refused_with_the_row() {
    let (x, mut y) = base(|i, _| (i % 3) as f64);
    let terms = names(&["(intercept)", "x", "z"]);
    y[4] = 2.0;
    let err = fit_glm(&data(&x, &terms, &y), &GlmOptions::default()).unwrap_err();
    assert!(err.to_string().contains("row 5"), "{err}");
    let short = names(&["(intercept)", "x"]);
    assert!(matches!(
        fit_glm(&data(&x, &short, &y), &GlmOptions::default()),
        Err(ModelError::Invalid(_))
    ));
    let (mut x, y) = base(|i, _| (i % 3) as f64);
    x[[2, 1]] = f64::NAN;
    let err = fit_glm(&data(&x, &terms, &y), &GlmOptions::default()).unwrap_err();
    assert!(err.to_string().contains("term `x`"), "{err}");
    let (x, y) = base(|i, _| (i % 3) as f64);
    let w = Array1::from_elem(40, -1.0);
    let d = GlmData {
        weights: Some(w.view()),
        ..data(&x, &terms, &y)
    };
    assert!(fit_glm(&d, &GlmOptions::default()).is_err());
}

// Derived analytically: without an intercept column and without an offset the null model is
// η = 0, μ = ½, so the null deviance is 2n ln 2 and df_null = n (R glm's convention).
#[test]
fn no_intercept_null_model_is_eta_zero() {
    let (x, y) = base(|i, _| (i % 3) as f64);
    let x = x.slice(ndarray::s![.., 1..]).to_owned();
    let terms = names(&["x", "z"]);
    let fit = fit_glm(&data(&x, &terms, &y), &GlmOptions { link: Link::Probit }).unwrap();
    assert_eq!(fit.df_null, 40);
    assert_eq!(fit.df_residual, 38);
    assert!((fit.null_deviance - 80.0 * 2f64.ln()).abs() < 1e-10);
}

// Derived: y = 1 exactly when x = 2 on 30,000 rows (x in {0, 1, 2}): quasi-complete
// separation by x, above the always-check size, so it must be caught after IRLS.
#[test]
fn separation_is_caught_on_large_data() {
    let n = 30_000;
    let x = Array2::from_shape_fn((n, 2), |(i, j)| if j == 0 { 1.0 } else { (i % 3) as f64 });
    let y = Array1::from_iter(
        (0..n).map(|i| f64::from(u8::from(i % 3 == 2 || (i % 3 == 1 && i % 2 == 0)))),
    );
    let terms = names(&["(intercept)", "x"]);
    match fit_glm(&data(&x, &terms, &y), &GlmOptions::default()) {
        Err(ModelError::Separation { kind, terms }) => {
            assert_eq!(kind, "quasi-complete");
            assert_eq!(terms, vec!["x".to_string()]);
        }
        other => panic!("expected separation, got {other:?}"),
    }
}

// docs/performance.md#targets: the fit recovers the FIT-1M generating coefficients within 3 SE
// (here on the first 200,000 rows to keep debug-build tests fast).
#[test]
fn fit_1m_workload_recovers_generating_coefficients() {
    let (x, y) = crate::fit1m::generate(200_000, 20_240_501);
    let terms = crate::fit1m::terms();
    let fit = fit_glm(&data(&x, &terms, &y), &GlmOptions::default()).unwrap();
    assert!(
        fit.converged && fit.iterations <= 10,
        "{} iterations",
        fit.iterations
    );
    for (j, term) in terms.iter().enumerate() {
        let z = (fit.coefficients[j] - crate::fit1m::TRUE_BETA[j]) / fit.std_errors[j];
        let truth = crate::fit1m::TRUE_BETA[j];
        assert!(
            z.abs() < 3.0,
            "{term}: {} vs {truth} (z = {z})",
            fit.coefficients[j]
        );
    }
}
