//! The iteration limit of `FitControl`: a fit that needs more iterations than allowed is
//! refused as not converged (a runtime failure), naming the iteration count.

use crate::glm_common::*;
use ndarray::{Array1, Array2};
use stemcast::model::annualized::{fit_annualized, fit_annualized_with};
use stemcast::model::firth::{fit_firth, fit_firth_with};
use stemcast::model::glm::{fit_glm, fit_glm_with, FitControl, GlmData, GlmOptions};
use stemcast::model::ModelError;

fn assert_not_converged_in(result: Result<impl std::fmt::Debug, ModelError>, limit: usize) {
    match result {
        Err(e @ ModelError::NotConverged { iterations, .. }) => {
            assert_eq!(iterations, limit);
            assert!(e.is_runtime());
            let message = e.to_string();
            assert!(
                message.contains(&format!("did not converge in {limit} iterations")),
                "{message}"
            );
        }
        other => panic!("expected NotConverged, got {other:?}"),
    }
}

// bliss_logit_counts.json (Bliss 1935; statsmodels 0.15.0 / R 4.2.2): IRLS from the usual
// start needs more than 2 iterations, so a limit of 2 must refuse the fit.
#[test]
fn glm_refused_at_the_iteration_limit() {
    let c = case("bliss_logit_counts");
    let d = case_data(&c);
    let opts = GlmOptions { link: link_of(&c) };
    let full = fit_glm(&glm_data(&d), &opts).unwrap();
    assert!(full.iterations > 2, "needs {} iterations", full.iterations);
    let control = FitControl::default().max_iterations(2);
    let result = fit_glm_with(&glm_data(&d), &opts, &control);
    if let Err(ModelError::NotConverged { hint, .. }) = &result {
        assert!(hint.contains("limit of 2 iterations"), "{hint}");
    }
    assert_not_converged_in(result, 2);
    // The limit that the fit needs is enough (the same estimate).
    let control = FitControl::default().max_iterations(full.iterations);
    let again = fit_glm_with(&glm_data(&d), &opts, &control).unwrap();
    assert_eq!(again.coefficients, full.coefficients);
}

// endometrial_firth.json (Heinze & Schemper 2002): the Firth fit needs more than 2 steps.
#[test]
fn firth_refused_at_the_iteration_limit() {
    let d = case_data(&case("endometrial_firth"));
    let full = fit_firth(&glm_data(&d)).unwrap();
    assert!(full.iterations > 2, "needs {} iterations", full.iterations);
    let control = FitControl::default().max_iterations(2);
    assert_not_converged_in(fit_firth_with(&glm_data(&d), &control), 2);
}

// birthwt_logit.json with every interval 1 (the annualised model is then the logit fit).
#[test]
fn annualized_refused_at_the_iteration_limit() {
    let d = case_data(&case("birthwt_logit"));
    let years = Array1::ones(d.y.len());
    let full = fit_annualized(&glm_data(&d), years.view()).unwrap();
    assert!(full.iterations > 2, "needs {} iterations", full.iterations);
    let control = FitControl::default().max_iterations(2);
    assert_not_converged_in(
        fit_annualized_with(&glm_data(&d), years.view(), &control),
        2,
    );
}

// Separation explains non-convergence: separation_toy_firth.json (complete separation) is
// refused as Separation even with a limit of 1 iteration.
#[test]
fn separation_wins_over_the_iteration_limit() {
    let d = case_data(&case("separation_toy_firth"));
    let control = FitControl::default().max_iterations(1);
    match fit_glm_with(&glm_data(&d), &GlmOptions::default(), &control) {
        Err(ModelError::Separation { kind, .. }) => assert_eq!(kind, "complete"),
        other => panic!("expected Separation, got {other:?}"),
    }
}

fn unweighted<'a>(x: &'a Array2<f64>, terms: &'a [String], y: &'a Array1<f64>) -> GlmData<'a> {
    GlmData {
        x: x.view(),
        terms,
        y: y.view(),
        trials: None,
        weights: None,
        offset: None,
    }
}

// Above separation::ALWAYS_CHECK_MAX_ROWS (20,000) separation is only checked after IRLS
// stops; on 30,000 rows of the FIT-1M workload (docs/performance.md#fit-1m, generating
// coefficients known, no separation) a limit of 2 iterations must end as NotConverged, not as
// Separation.
#[test]
fn large_data_stopped_at_the_limit_is_not_converged() {
    let (x, y) = crate::fit1m::generate(30_000, 20_240_501);
    let terms = crate::fit1m::terms();
    let control = FitControl::default().max_iterations(2);
    let result = fit_glm_with(
        &unweighted(&x, &terms, &y),
        &GlmOptions::default(),
        &control,
    );
    assert_not_converged_in(result, 2);
}

// Derived: y = 1 exactly when x = 2 on 30,000 rows (x in {0, 1, 2}) is quasi-complete
// separation by x; stopped at 3 iterations, the post-IRLS check must still name it.
#[test]
fn large_data_separation_explains_the_limit() {
    let n = 30_000;
    let x = Array2::from_shape_fn((n, 2), |(i, j)| if j == 0 { 1.0 } else { (i % 3) as f64 });
    let y = Array1::from_iter(
        (0..n).map(|i| f64::from(u8::from(i % 3 == 2 || (i % 3 == 1 && i % 2 == 0)))),
    );
    let terms = vec!["(intercept)".to_string(), "x".to_string()];
    let control = FitControl::default().max_iterations(3);
    match fit_glm_with(
        &unweighted(&x, &terms, &y),
        &GlmOptions::default(),
        &control,
    ) {
        Err(ModelError::Separation { kind, terms }) => {
            assert_eq!(kind, "quasi-complete");
            assert_eq!(terms, vec!["x".to_string()]);
        }
        other => panic!("expected Separation, got {other:?}"),
    }
}
