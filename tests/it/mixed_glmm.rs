//! The binomial GLMM against the reference fixtures (tests/fixtures/glmm, see its README):
//! the shared cbpp and tree-survival cases (Laplace and AGQ; every quantity within the case
//! file's stated tolerance) and the project's lme4 cases (cloglog exposure with weights and
//! offset; probit successes/trials).

use ndarray::{Array2, ArrayView1};
use serde_json::Value;
use stemcast::model::glm::{fit_glm, GlmData, GlmOptions};
use stemcast::model::link::Link;
use stemcast::model::mixed::glmm::Evaluator;
use stemcast::model::mixed::{
    fit_glmm, marginal_probability, Family, GaussHermite, GlmmColumns, GlmmData, GlmmFit,
    GlmmOptions,
};

use crate::mixed_support::{assert_close, codes, columns, design, nums, tol};

/// A case's data in the GLMM's form.
struct Case {
    x: Array2<f64>,
    y: Vec<f64>,
    trials: Option<Vec<f64>>,
    weights: Option<Vec<f64>>,
    offset: Option<Vec<f64>>,
    plots: Vec<u32>,
    family: Family,
}

impl Case {
    fn data(&self) -> GlmmData {
        GlmmData::new(
            self.family,
            &GlmmColumns {
                x: self.x.view(),
                y: &self.y,
                trials: self.trials.as_deref(),
                weights: self.weights.as_deref(),
                offset: self.offset.as_deref(),
                years: &[],
                plots: &self.plots,
            },
        )
        .expect("GLMM data")
    }

    /// The GLMM from the GLM start, as `fit survival --plot-effect` runs it.
    fn fit(&self, nodes: usize) -> GlmmFit {
        let Family::Binomial(link) = self.family else {
            panic!("binomial cases only")
        };
        let names: Vec<String> = (0..self.x.ncols()).map(|c| format!("x{c}")).collect();
        let glm = fit_glm(
            &GlmData {
                x: self.x.view(),
                terms: &names,
                y: ArrayView1::from(&self.y),
                trials: self.trials.as_deref().map(ArrayView1::from),
                weights: self.weights.as_deref().map(ArrayView1::from),
                offset: self.offset.as_deref().map(ArrayView1::from),
            },
            &GlmOptions { link },
        )
        .expect("GLM");
        fit_glmm(
            &self.data(),
            &glm.coefficients,
            &glm.covariance,
            &GlmmOptions {
                nodes,
                ..GlmmOptions::default()
            },
        )
        .expect("GLMM")
    }
}

/// A shared case file and its data.
fn shared(case: &str) -> (Value, Case) {
    let text = std::fs::read_to_string(crate::common::fixtures::fixture(&format!(
        "glmm/{case}.json"
    )))
    .expect("case");
    let c: Value = serde_json::from_str(&text).expect("json");
    let m = &c["model"];
    let cols = columns(&format!(
        "glmm/{}",
        c["data"]["file"].as_str().expect("file")
    ));
    let terms: Vec<&str> = m["terms"]
        .as_array()
        .expect("terms")
        .iter()
        .map(|t| t.as_str().expect("term"))
        .collect();
    let group = m["random_intercept"].as_str().expect("group");
    let case = Case {
        x: design(&cols, &terms),
        y: cols[m["response"].as_str().expect("response")].clone(),
        trials: m["trials"].as_str().map(|t| cols[t].clone()),
        weights: None,
        offset: None,
        plots: codes(&cols[group]).0,
        family: Family::Binomial(Link::Logit),
    };
    (c, case)
}

/// Every quantity of one method block within the case file's tolerances.
fn check_method(c: &Value, case: &Case, method: &str) {
    let e = &c["expected"][method];
    let t = &c["tolerance"];
    let k = e["n_agq"].as_u64().expect("n_agq") as usize;
    let fit = case.fit(k);
    let what = |q: &str| format!("{} {method} {q}", c["case"]);
    let (r, a) = tol(t, "coefficients");
    assert_close(
        &what("coefficients"),
        &fit.coefficients,
        &nums(&e["coefficients"]),
        r,
        a,
    );
    let (r, a) = tol(t, "std_errors");
    assert_close(
        &what("std_errors"),
        &fit.std_errors,
        &nums(&e["std_errors"]),
        r,
        a,
    );
    // Covariance rule of the case file: |got − exp| ≤ 2e-5 √(V_ii V_jj).
    let cov = e["covariance"].as_array().expect("covariance");
    for (i, row) in cov.iter().enumerate() {
        let row = nums(row);
        for (j, want) in row.iter().enumerate() {
            let scale = (nums(&cov[i])[i] * nums(&cov[j])[j]).sqrt();
            assert!(
                (fit.covariance[i][j] - want).abs() <= 2e-5 * scale,
                "{}: covariance[{i}][{j}] {} vs {want}",
                what("covariance"),
                fit.covariance[i][j]
            );
        }
    }
    let (r, a) = tol(t, "sigma");
    assert_close(
        &what("sigma"),
        &[fit.sd],
        &[e["sigma"].as_f64().expect("sigma")],
        r,
        a,
    );
    let (r, a) = tol(t, "std_error_sigma");
    let se_sigma = fit.std_error_sd.expect("interior σ has an SE");
    assert_close(
        &what("SE σ"),
        &[se_sigma],
        &[e["std_error_sigma"].as_f64().expect("se")],
        r,
        a,
    );
    let (r, a) = tol(t, "log_likelihood");
    assert_close(
        &what("ℓ"),
        &[fit.log_likelihood],
        &[e["log_likelihood"].as_f64().expect("ℓ")],
        r,
        a,
    );
    let (r, a) = tol(t, "aic");
    assert_close(
        &what("AIC"),
        &[fit.aic],
        &[e["aic"].as_f64().expect("aic")],
        r,
        a,
    );
    let re = &e["random_effects"];
    let modes: Vec<f64> = fit.plots.iter().map(|p| p.mode).collect();
    let sds: Vec<f64> = fit.plots.iter().map(|p| p.sd).collect();
    let (r, a) = tol(t, "conditional_modes");
    assert_close(
        &what("modes"),
        &modes,
        &nums(&re["conditional_modes"]),
        r,
        a,
    );
    let (r, a) = tol(t, "conditional_sd");
    assert_close(
        &what("conditional SDs"),
        &sds,
        &nums(&re["conditional_sd"]),
        r,
        a,
    );
    // Marginal probabilities at the stated covariates with our estimates.
    let (r, a) = tol(t, "marginal_probabilities");
    let terms = &c["model"]["terms"];
    for mp in e["marginal_probabilities"].as_array().expect("marginals") {
        let mut eta = fit.coefficients[0];
        for (j, term) in terms.as_array().expect("terms").iter().enumerate() {
            eta += fit.coefficients[j + 1]
                * mp["covariates"][term.as_str().expect("t")]
                    .as_f64()
                    .expect("x");
        }
        let got = marginal_probability(case.family, eta, fit.sd, 1.0);
        let want = mp["marginal_probability"].as_f64().expect("p");
        assert_close(&what("marginal probability"), &[got], &[want], r, a);
    }
    // The objective at the stated test point, without an optimiser.
    let tp = &e["log_likelihood_at_test_point"];
    let data = case.data();
    let rule = GaussHermite::new(k).expect("rule");
    let mut ev = Evaluator::new(&data, &rule);
    let mut theta = nums(&tp["coefficients"]);
    theta.push(tp["sigma"].as_f64().expect("sigma"));
    let got = ev.evaluate(&theta, false).expect("evaluate").value;
    let (r, a) = tol(t, "log_likelihood_at_test_point");
    assert_close(
        &what("ℓ at the test point"),
        &[got],
        &[tp["log_likelihood"].as_f64().expect("ℓ")],
        r,
        a,
    );
}

#[test]
fn cbpp_logit_laplace_matches_the_reference() {
    // Reference: tests/fixtures/glmm/cbpp_logit.json, block `laplace` (NumPy/SciPy primary,
    // lme4 1.1-31 glmer nAGQ = 1 with a tight control as cross-check).
    let (c, case) = shared("cbpp_logit");
    check_method(&c, &case, "laplace");
}

#[test]
fn cbpp_logit_agq25_matches_the_reference() {
    // Reference: tests/fixtures/glmm/cbpp_logit.json, block `agq25` (lme4 glmer nAGQ = 25).
    let (c, case) = shared("cbpp_logit");
    check_method(&c, &case, "agq25");
}

#[test]
fn tree_survival_logit_laplace_matches_the_reference() {
    // Reference: tests/fixtures/glmm/tree_survival_logit.json, block `laplace`.
    let (c, case) = shared("tree_survival_logit");
    check_method(&c, &case, "laplace");
}

#[test]
fn tree_survival_logit_agq15_matches_the_reference() {
    // Reference: tests/fixtures/glmm/tree_survival_logit.json, block `agq15`.
    let (c, case) = shared("tree_survival_logit");
    check_method(&c, &case, "agq15");
}

fn extra(case: &str) -> Value {
    let text = std::fs::read_to_string(crate::common::fixtures::fixture(
        "glmm/extra_reference.json",
    ))
    .expect("extra");
    serde_json::from_str::<Value>(&text).expect("json")[case].clone()
}

/// The project's lme4 cases: tolerances of tests/fixtures/glmm/README.md.
fn check_extra(fit: &GlmmFit, e: &Value) {
    let name = e["r_call"].as_str().expect("call");
    assert_close(
        name,
        &fit.coefficients,
        &nums(&e["coefficients"]),
        1e-5,
        0.0,
    );
    assert_close(name, &fit.std_errors, &nums(&e["std_errors"]), 1e-5, 0.0);
    assert_close(
        name,
        &[fit.sd],
        &[e["sigma"].as_f64().expect("σ")],
        1e-5,
        0.0,
    );
    let ll = e["log_likelihood_full"].as_f64().expect("ℓ");
    assert_close(name, &[fit.log_likelihood], &[ll], 0.0, 1e-6);
    let modes: Vec<f64> = fit.plots.iter().map(|p| p.mode).collect();
    let sds: Vec<f64> = fit.plots.iter().map(|p| p.sd).collect();
    assert_close(name, &modes, &nums(&e["conditional_modes"]), 0.0, 1e-5);
    assert_close(name, &sds, &nums(&e["conditional_sd_observed"]), 1e-5, 0.0);
}

#[test]
fn cloglog_exposure_with_weights_and_offset_matches_lme4() {
    // Reference: tests/fixtures/glmm/extra_reference.json `exposure_cloglog` (R 4.2.2, lme4
    // 1.1-31 glmer(dead ~ dbh + bal + offset(log(years)) + (1 | plot), cloglog, weights = w,
    // nAGQ = 15, tight control); conditional SDs by the observed curvature (same file).
    let cols = columns("glmm/exposure_cloglog.csv");
    let case = Case {
        x: design(&cols, &["dbh", "bal"]),
        y: cols["dead"].clone(),
        trials: None,
        weights: Some(cols["w"].clone()),
        offset: Some(cols["years"].iter().map(|l| l.ln()).collect()),
        plots: codes(&cols["plot"]).0,
        family: Family::Binomial(Link::Cloglog),
    };
    check_extra(&case.fit(15), &extra("exposure_cloglog"));
}

#[test]
fn probit_successes_of_trials_matches_lme4() {
    // Reference: tests/fixtures/glmm/extra_reference.json `cbpp_probit` (R 4.2.2, lme4 1.1-31
    // glmer(cbind(incidence, size − incidence) ~ period + (1 | herd), probit, nAGQ = 25)).
    let (_, mut case) = shared("cbpp_logit");
    case.family = Family::Binomial(Link::Probit);
    check_extra(&case.fit(25), &extra("cbpp_probit"));
}
