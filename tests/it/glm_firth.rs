//! Firth penalised logistic regression against separation_toy_firth.json and
//! endometrial_firth.json (numpy Newton; cross-checked with R brglm2 0.9, brglm 0.7.2 and
//! scipy), and the handbook's intercept-only closed form (handbook-checks.md).

use crate::glm_common::*;
use ndarray::{Array1, Array2};
use stemcast::model::firth::fit_firth;
use stemcast::model::glm::GlmData;

fn check_firth_case(name: &str) {
    let c = case(name);
    let d = case_data(&c);
    let fit = fit_firth(&glm_data(&d)).unwrap();
    let e = &c["expected"];
    // README tolerance table: Firth coefficients and SEs rtol 1e-6, atol 1e-9.
    close_all(
        "coefficients",
        &fit.coefficients,
        &vec_f(&e["coefficients"]),
        1e-6,
        1e-9,
    );
    close_all(
        "std_errors",
        &fit.std_errors,
        &vec_f(&e["std_errors"]),
        1e-6,
        1e-9,
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
    let p = fit.coefficients.len();
    for i in 0..p {
        for j in 0..p {
            let limit = 1e-6 * (f(&cov[i][i]) * f(&cov[j][j])).sqrt();
            assert!(
                (fit.covariance[i][j] - f(&cov[i][j])).abs() <= limit,
                "{name}: cov[{i}][{j}]"
            );
        }
    }
    close(
        "penalized loglik",
        fit.penalized_log_likelihood,
        f(&e["penalized_log_likelihood"]),
        1e-8,
        1e-8,
    );
    close(
        "loglik",
        fit.log_likelihood,
        f(&e["log_likelihood"]),
        1e-8,
        1e-8,
    );
    assert_eq!(fit.n_obs as u64, e["n_obs"].as_u64().unwrap());
    // expected.plr_statistics / plr_p_values: the fixture's Python penalised-likelihood-ratio
    // tests (logistf's default; penalty from the full design), cross-checked there with a
    // second optimiser. README tolerances: LR statistic rtol 1e-8, atol 1e-8; p-values rtol
    // 1e-4, atol 1e-12.
    close_all(
        "plr_statistics",
        &fit.plr_statistics,
        &vec_f(&e["plr_statistics"]),
        1e-8,
        1e-8,
    );
    close_all(
        "plr_p_values",
        &fit.plr_p_values,
        &vec_f(&e["plr_p_values"]),
        1e-4,
        1e-12,
    );
}

// separation_toy_firth.json: complete separation; Firth estimate exists (b0 = −5.5·b1 by symmetry).
#[test]
fn separation_toy_firth() {
    check_firth_case("separation_toy_firth");
    let fit = fit_firth(&glm_data(&case_data(&case("separation_toy_firth")))).unwrap();
    close(
        "symmetry",
        fit.coefficients[0],
        -5.5 * fit.coefficients[1],
        1e-8,
        1e-10,
    );
}

// endometrial_firth.json: quasi-complete separation by nv (Heinze & Schemper 2002).
#[test]
fn endometrial_firth() {
    check_firth_case("endometrial_firth");
}

// handbook-checks.md "Model fit statistics", Firth intercept-only: p̂ = (y + ½)/(n + 1):
// 0 of 20 → 0.0238095, 3 of 20 → 0.1666667, 0 of 100 → 0.0049505 (derived, confirmed numerically).
#[test]
fn intercept_only_closed_form() {
    for (events, n) in [(0usize, 20usize), (3, 20), (0, 100)] {
        let expected = (events as f64 + 0.5) / (n as f64 + 1.0);
        let terms = vec!["(intercept)".to_string()];
        let x = Array2::ones((n, 1));
        let y = Array1::from_iter((0..n).map(|i| f64::from(u8::from(i < events))));
        let data = GlmData {
            x: x.view(),
            terms: &terms,
            y: y.view(),
            trials: None,
            weights: None,
            offset: None,
        };
        let fit = fit_firth(&data).unwrap();
        let p = 1.0 / (1.0 + (-fit.coefficients[0]).exp());
        close("binary form", p, expected, 1e-9, 0.0);
        // The same as one successes/trials row.
        let x1 = Array2::ones((1, 1));
        let (s, t) = (
            Array1::from(vec![events as f64]),
            Array1::from(vec![n as f64]),
        );
        let grouped = GlmData {
            x: x1.view(),
            terms: &terms,
            y: s.view(),
            trials: Some(t.view()),
            weights: None,
            offset: None,
        };
        let fit = fit_firth(&grouped).unwrap();
        let p = 1.0 / (1.0 + (-fit.coefficients[0]).exp());
        close("grouped form", p, expected, 1e-9, 0.0);
    }
}
