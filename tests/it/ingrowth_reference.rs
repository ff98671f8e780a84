//! The ingrowth hurdle against the shared reference cases ingrowth_hurdle_nb and
//! ingrowth_hurdle_poisson (tests/fixtures/ingrowth, copied from the shared reference set;
//! primary reference: statsmodels 0.15.0 Logit for the any part, a NumPy/SciPy exact-derivative
//! Newton fit for the count part, cross-checked with an R symbolic-Hessian Newton fit). Each
//! comparison uses the tolerance block of the case file: |got − exp| ≤ atol + rtol·|exp|.

use std::collections::BTreeMap;
use std::path::PathBuf;

use ndarray::Array2;
use serde_json::Value;
use stemcast::data::{read_table, TableOptions, Units};
use stemcast::fit::ingrowth::{fit_ingrowth, IngrowthFit, IngrowthSpec};
use stemcast::model::hurdle::{hurdle_log_likelihood, PlotPeriods};
use stemcast::model::ingrowth::{CovariateValue, IngrowthModel};
use stemcast::model::ingrowth_file::IngrowthModelFile;
use stemcast::model::truncated::CountFamily;

use crate::common::fixtures::{close, fixture, numbers};

/// A whole case file.
pub fn case(name: &str) -> Value {
    let text = std::fs::read_to_string(fixture(&format!("ingrowth/{name}.json"))).unwrap();
    serde_json::from_str(&text).unwrap()
}

/// (rtol, atol) of a named entry of the case's tolerance block.
pub fn tol(c: &Value, key: &str) -> (f64, f64) {
    let t = &c["tolerance"][key];
    (t["rtol"].as_f64().unwrap(), t["atol"].as_f64().unwrap())
}

/// Assert every element of `got` is within (rtol, atol) of `want`.
pub fn check_all(what: &str, got: &[f64], want: &[f64], (rtol, atol): (f64, f64)) {
    assert_eq!(got.len(), want.len(), "{what}: lengths");
    for (i, (g, w)) in got.iter().zip(want).enumerate() {
        assert!(
            close(*g, *w, rtol, atol),
            "{what}[{i}]: got {g:e}, expected {w:e}"
        );
    }
}

/// The case files' covariance rule: |got_ij − exp_ij| ≤ rtol·√(exp_ii·exp_jj).
pub fn check_covariance(what: &str, got: &[Vec<f64>], want: &Value, rtol: f64) {
    let want: Vec<Vec<f64>> = want.as_array().unwrap().iter().map(numbers).collect();
    assert_eq!(got.len(), want.len(), "{what}: size");
    for i in 0..want.len() {
        for j in 0..want.len() {
            let scale = (want[i][i] * want[j][j]).sqrt();
            let (g, w) = (got[i][j], want[i][j]);
            assert!(
                (g - w).abs() <= rtol * scale,
                "{what}[{i}][{j}]: got {g:e}, expected {w:e}"
            );
        }
    }
}

fn spec(family: CountFamily) -> IngrowthSpec {
    IngrowthSpec {
        path: fixture("ingrowth/ingrowth_plots.csv"),
        count: "ingrowth".into(),
        area: "area_ha".into(),
        years: "years".into(),
        // The case's terms; R's log(years) is the term grammar's ln(years).
        predictors: "ba_m2ha, stems_ha, log(years)".into(),
        count_predictors: None,
        family,
        categorical: Vec::new(),
        references: BTreeMap::new(),
        intercept: true,
        units: Units::Metric,
        trees: None,
    }
}

fn check_case(name: &str, family: CountFamily) -> IngrowthFit {
    let c = case(name);
    let e = &c["expected"];
    let fit = fit_ingrowth(&spec(family)).unwrap();
    let h = &fit.hurdle;
    let coef = tol(&c, "zero_part_coefficients_std_errors");
    let p_tol = tol(&c, "p_values");
    let ll_tol = tol(&c, "log_likelihood_aic_bic");
    // Any part: statsmodels Logit / R glm (case `expected.zero_part`).
    let z = &e["zero_part"];
    assert_eq!(
        h.any.terms,
        ["(intercept)", "ba_m2ha", "stems_ha", "ln(years)"]
    );
    check_all(
        "any coefficients",
        &h.any.coefficients,
        &numbers(&z["coefficients"]),
        coef,
    );
    check_all(
        "any SEs",
        &h.any.std_errors,
        &numbers(&z["std_errors"]),
        coef,
    );
    check_all("any z", &h.any.z, &numbers(&z["z_values"]), coef);
    check_all("any p", &h.any.p_values, &numbers(&z["p_values"]), p_tol);
    check_covariance("any covariance", &h.any.covariance, &z["covariance"], 1e-6);
    for (what, got, key) in [
        ("any ℓ", h.any.log_likelihood, "log_likelihood"),
        ("any AIC", h.any.aic, "aic"),
        ("any BIC", h.any.bic, "bic"),
        ("any deviance", h.any.deviance, "deviance"),
        ("any null deviance", h.any.null_deviance, "null_deviance"),
    ] {
        check_all(what, &[got], &[z[key].as_f64().unwrap()], ll_tol);
    }
    assert_eq!(h.any.n_obs as u64, z["n_obs"].as_u64().unwrap());
    assert_eq!(h.any.df_residual as u64, z["df_residual"].as_u64().unwrap());
    // Count part: exact-Hessian Newton fits (case `expected.count_part`).
    let k = &e["count_part"];
    let (coef_c, se_c) = (
        tol(&c, "count_coefficients_and_alpha"),
        tol(&c, "count_std_errors"),
    );
    check_all(
        "count coefficients",
        &h.count.coefficients,
        &numbers(&k["coefficients"]),
        coef_c,
    );
    check_all(
        "count SEs",
        &h.count.std_errors,
        &numbers(&k["std_errors"]),
        se_c,
    );
    check_all("count z", &h.count.z, &numbers(&k["z_values"]), se_c);
    check_all(
        "count p",
        &h.count.p_values,
        &numbers(&k["p_values"]),
        p_tol,
    );
    check_covariance(
        "count covariance",
        &h.count.covariance,
        &k["covariance"],
        1e-6,
    );
    assert_eq!(h.count.n_obs as u64, k["n_obs"].as_u64().unwrap());
    assert_eq!(h.count.n_params() as u64, k["n_params"].as_u64().unwrap());
    for (what, got, key) in [
        ("count ℓ", h.count.log_likelihood, "log_likelihood"),
        ("count AIC", h.count.aic, "aic"),
        ("count BIC", h.count.bic, "bic"),
    ] {
        check_all(what, &[got], &[k[key].as_f64().unwrap()], ll_tol);
    }
    // Hurdle totals (case `expected.hurdle`, pscl's logLik/AIC conventions).
    let t = &e["hurdle"];
    assert_eq!(h.n_params as u64, t["n_params"].as_u64().unwrap());
    check_all(
        "hurdle ℓ",
        &[h.log_likelihood],
        &[t["log_likelihood"].as_f64().unwrap()],
        ll_tol,
    );
    check_all(
        "hurdle AIC",
        &[h.aic],
        &[t["aic"].as_f64().unwrap()],
        ll_tol,
    );
    check_all(
        "hurdle BIC",
        &[h.bic],
        &[t["bic"].as_f64().unwrap()],
        ll_tol,
    );
    fit
}

#[test]
fn negative_binomial_case_matches_both_parts_dispersion_and_likelihoods() {
    let fit = check_case("ingrowth_hurdle_nb", CountFamily::NegativeBinomial);
    let c = case("ingrowth_hurdle_nb");
    let k = &c["expected"]["count_part"];
    let count = &fit.hurdle.count;
    let (alpha, se) = (count.alpha.unwrap(), count.alpha_std_error.unwrap());
    // Case `expected.count_part.alpha` and its SEs (θ = 1/α by the delta method).
    let a_tol = tol(&c, "count_coefficients_and_alpha");
    let se_tol = tol(&c, "count_std_errors");
    check_all("alpha", &[alpha], &[k["alpha"].as_f64().unwrap()], a_tol);
    check_all(
        "SE(alpha)",
        &[se],
        &[k["std_error_alpha"].as_f64().unwrap()],
        se_tol,
    );
    check_all(
        "theta",
        &[1.0 / alpha],
        &[k["theta"].as_f64().unwrap()],
        a_tol,
    );
    let se_theta = se / (alpha * alpha);
    check_all(
        "SE(theta)",
        &[se_theta],
        &[k["std_error_theta"].as_f64().unwrap()],
        se_tol,
    );
    check_all(
        "SE(ln theta)",
        &[se / alpha],
        &[k["std_error_log_theta"].as_f64().unwrap()],
        se_tol,
    );
    check_predictions(&fit, &c);
}

#[test]
fn poisson_case_matches_both_parts_and_likelihoods() {
    let fit = check_case("ingrowth_hurdle_poisson", CountFamily::Poisson);
    assert!(fit.hurdle.count.alpha.is_none());
    check_predictions(&fit, &case("ingrowth_hurdle_poisson"));
}

/// Case `expected.predictions`, through the model file as written and read back.
fn check_predictions(fit: &IngrowthFit, c: &Value) {
    let text = fit.model.to_toml().unwrap();
    let model =
        IngrowthModel::from_file(IngrowthModelFile::parse(&text, "m.toml").unwrap(), "m.toml")
            .unwrap();
    let p_tol = tol(c, "predictions");
    for (i, p) in c["expected"]["predictions"]
        .as_array()
        .unwrap()
        .iter()
        .enumerate()
    {
        let cov = &p["covariates"];
        let value = |k: &str| cov[k].as_f64().unwrap();
        let lookup = |var: &str| {
            cov.get(var)
                .and_then(Value::as_f64)
                .map(CovariateValue::Number)
        };
        let got = model
            .expectation(&lookup, value("area_ha"), value("years"))
            .unwrap();
        for (what, g, key) in [
            ("p_any", got.p_any, "p_any"),
            ("mu", got.mu, "mu_untruncated"),
            ("P0", got.p_zero, "p_zero_count_distribution"),
            ("E[N | N > 0]", got.mean_given_any, "mean_given_any"),
            ("E[N]", got.expected, "expected_count"),
            (
                "E[N] per ha per year",
                got.expected_per_area_per_year,
                "expected_per_ha_per_year",
            ),
        ] {
            check_all(
                &format!("prediction {i} {what}"),
                &[g],
                &[p[key].as_f64().unwrap()],
                p_tol,
            );
        }
    }
}

/// The case's plot periods with the design [1, ba_m2ha, stems_ha, ln(years)] for both parts.
fn reference_design() -> (Array2<f64>, Vec<u64>, Vec<f64>, Vec<f64>) {
    let path: PathBuf = fixture("ingrowth/ingrowth_plots.csv");
    let t = read_table(&path, &TableOptions::default()).unwrap();
    let col = |n: &str| t.frame.numeric(n).unwrap().to_vec();
    let (ba, stems, years, area) = (
        col("ba_m2ha"),
        col("stems_ha"),
        col("years"),
        col("area_ha"),
    );
    let x = Array2::from_shape_fn((ba.len(), 4), |(i, j)| match j {
        0 => 1.0,
        1 => ba[i],
        2 => stems[i],
        _ => years[i].ln(),
    });
    let count = col("ingrowth").iter().map(|&c| c as u64).collect();
    (x, count, area, years)
}

#[test]
fn log_likelihoods_at_the_test_point_match_without_an_optimiser() {
    let (x, count, area, years) = reference_design();
    let names: Vec<String> = ["(intercept)", "ba", "stems", "ln(years)"]
        .map(String::from)
        .to_vec();
    let data = PlotPeriods {
        x_any: x.view(),
        any_terms: &names,
        x_count: x.view(),
        count_terms: &names,
        count: &count,
        area: &area,
        years: &years,
    };
    for (name, family) in [
        ("ingrowth_hurdle_nb", CountFamily::NegativeBinomial),
        ("ingrowth_hurdle_poisson", CountFamily::Poisson),
    ] {
        let c = case(name);
        // Case `expected.log_likelihood_at_test_point` (the simulation truth; checked in R with
        // dnbinom/dpois and dbinom).
        let tp = &c["expected"]["log_likelihood_at_test_point"];
        let params = numbers(&tp["count_part_parameters"]);
        let alpha = if family == CountFamily::NegativeBinomial {
            params[4]
        } else {
            0.0
        };
        let gamma = numbers(&tp["zero_part_gamma"]);
        let (any, cnt) = hurdle_log_likelihood(&data, family, &gamma, &params[..4], alpha).unwrap();
        let t = tol(&c, "log_likelihood_at_test_point");
        check_all(
            "any ℓ at the truth",
            &[any],
            &[tp["zero_part_log_likelihood"].as_f64().unwrap()],
            t,
        );
        check_all(
            "count ℓ at the truth",
            &[cnt],
            &[tp["count_part_log_likelihood"].as_f64().unwrap()],
            t,
        );
    }
}
