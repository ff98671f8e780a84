//! The ingrowth hurdle against the project's own reference case forest_types_hurdle
//! (tests/fixtures/ingrowth/make_forest_types.R: R 4.2.2 glm for the any part; for the count
//! parts an R Newton iteration with deriv3() symbolic derivatives of the dnbinom/dpois
//! zero-truncated row log-likelihood, to a step below 1e-12; pscl 1.5.5 hurdle as a cross-check
//! to ≤ 5e-8). It differs from the shared cases: unequal plot areas with ln(area) as a term, a
//! categorical forest type, other predictors in the count part, and role columns not called
//! `area` and `years`. Tolerances: estimates, SEs, z and predictions rtol 1e-6; covariance
//! 1e-6·√(V_ii V_jj); p-values rtol 1e-4; log-likelihoods and AIC/BIC atol 1e-6 (as the shared
//! cases, whose references agree to the same digits).

use std::collections::BTreeMap;

use serde_json::Value;
use stemcast::data::Units;
use stemcast::fit::ingrowth::{fit_ingrowth, IngrowthSpec};
use stemcast::model::ingrowth::{CovariateValue, IngrowthModel};
use stemcast::model::truncated::CountFamily;

use super::ingrowth_reference::{case, check_all, check_covariance};
use crate::common::fixtures::{fixture, numbers};

const COEF: (f64, f64) = (1e-6, 1e-12);
const P_VALUE: (f64, f64) = (1e-4, 1e-14);
const LIKELIHOOD: (f64, f64) = (0.0, 1e-6);

fn spec(family: CountFamily) -> IngrowthSpec {
    IngrowthSpec {
        path: fixture("ingrowth/forest_types_plots.csv"),
        count: "new_trees".into(),
        area: "plot_area".into(),
        years: "interval".into(),
        predictors: "ba, ln(interval), ln(plot_area), forest".into(),
        count_predictors: Some("ba, qmd, ln(plot_area), forest".into()),
        family,
        categorical: Vec::new(),
        references: BTreeMap::new(),
        intercept: true,
        units: Units::Metric,
        trees: None,
    }
}

fn check(family: CountFamily, block: &str, totals: &str, predictions: &str) {
    let c = case("forest_types_hurdle");
    let fit = fit_ingrowth(&spec(family)).unwrap();
    let h = &fit.hurdle;
    // The role columns become the term variables `years` and `area`.
    assert_eq!(
        h.any.terms,
        [
            "(intercept)",
            "ba",
            "ln(years)",
            "ln(area)",
            "forest=conifer",
            "forest=mixed"
        ]
    );
    assert_eq!(
        h.count.terms,
        [
            "(intercept)",
            "ba",
            "qmd",
            "ln(area)",
            "forest=conifer",
            "forest=mixed"
        ]
    );
    assert_eq!((h.n_obs, h.n_positive), (600, 412));
    // Any part: R glm (case `any`).
    let a = &c["any"];
    check_all(
        "any coefficients",
        &h.any.coefficients,
        &numbers(&a["coefficients"]),
        COEF,
    );
    check_all(
        "any SEs",
        &h.any.std_errors,
        &numbers(&a["std_errors"]),
        COEF,
    );
    check_all("any z", &h.any.z, &numbers(&a["z_values"]), COEF);
    check_all("any p", &h.any.p_values, &numbers(&a["p_values"]), P_VALUE);
    check_covariance("any covariance", &h.any.covariance, &a["covariance"], 1e-6);
    check_all(
        "any ℓ",
        &[h.any.log_likelihood],
        &[a["log_likelihood"].as_f64().unwrap()],
        LIKELIHOOD,
    );
    check_all(
        "any deviance",
        &[h.any.deviance],
        &[a["deviance"].as_f64().unwrap()],
        LIKELIHOOD,
    );
    check_all(
        "any null deviance",
        &[h.any.null_deviance],
        &[a["null_deviance"].as_f64().unwrap()],
        LIKELIHOOD,
    );
    check_all(
        "any AIC",
        &[h.any.aic],
        &[a["aic"].as_f64().unwrap()],
        LIKELIHOOD,
    );
    // Count part: R deriv3() Newton (case `count_nb` / `count_poisson`).
    let k = &c[block];
    check_all(
        "count coefficients",
        &h.count.coefficients,
        &numbers(&k["coefficients"]),
        COEF,
    );
    check_all(
        "count SEs",
        &h.count.std_errors,
        &numbers(&k["std_errors"]),
        COEF,
    );
    check_all("count z", &h.count.z, &numbers(&k["z_values"]), COEF);
    check_all(
        "count p",
        &h.count.p_values,
        &numbers(&k["p_values"]),
        P_VALUE,
    );
    check_covariance(
        "count covariance",
        &h.count.covariance,
        &k["covariance"],
        1e-6,
    );
    check_all(
        "count ℓ",
        &[h.count.log_likelihood],
        &[k["log_likelihood"].as_f64().unwrap()],
        LIKELIHOOD,
    );
    if let Some(alpha) = h.count.alpha {
        check_all("alpha", &[alpha], &[k["alpha"].as_f64().unwrap()], COEF);
        let se = h.count.alpha_std_error.unwrap();
        check_all(
            "SE(alpha)",
            &[se],
            &[k["std_error_alpha"].as_f64().unwrap()],
            COEF,
        );
    }
    // Hurdle totals: ℓ_glm + ℓ_count, AIC and BIC with n = 600 (case `hurdle_nb` / `hurdle_poisson`).
    let t = &c[totals];
    assert_eq!(h.n_params as u64, t["n_params"].as_u64().unwrap());
    check_all(
        "hurdle ℓ",
        &[h.log_likelihood],
        &[t["log_likelihood"].as_f64().unwrap()],
        LIKELIHOOD,
    );
    check_all(
        "hurdle AIC",
        &[h.aic],
        &[t["aic"].as_f64().unwrap()],
        LIKELIHOOD,
    );
    check_all(
        "hurdle BIC",
        &[h.bic],
        &[t["bic"].as_f64().unwrap()],
        LIKELIHOOD,
    );
    // Expected ingrowth at the case's covariates (R formulas; pscl predict() agrees to 2e-8).
    let text = fit.model.to_toml().unwrap();
    let model = IngrowthModel::from_file(
        stemcast::model::ingrowth_file::IngrowthModelFile::parse(&text, "m.toml").unwrap(),
        "m.toml",
    )
    .unwrap();
    let p = &c["predictions"];
    let rows = p["covariates"].as_array().unwrap();
    let want = &p[predictions];
    for (i, row) in rows.iter().enumerate() {
        let lookup = |var: &str| match row.get(var) {
            Some(Value::String(s)) => Some(CovariateValue::Level(s.as_str())),
            Some(v) => v.as_f64().map(CovariateValue::Number),
            None => None,
        };
        let area = row["plot_area"].as_f64().unwrap();
        let years = row["interval"].as_f64().unwrap();
        let got = model.expectation(&lookup, area, years).unwrap();
        for (what, g, key) in [
            ("p_any", got.p_any, "p_any"),
            ("mu", got.mu, "mu"),
            ("P0", got.p_zero, "p_zero"),
            ("E[N | N > 0]", got.mean_given_any, "mean_given_any"),
            ("E[N]", got.expected, "expected"),
        ] {
            check_all(
                &format!("prediction {i} {what}"),
                &[g],
                &[want[key][i].as_f64().unwrap()],
                COEF,
            );
        }
    }
}

#[test]
fn negative_binomial_with_area_terms_and_forest_types_matches_r() {
    check(CountFamily::NegativeBinomial, "count_nb", "hurdle_nb", "nb");
}

#[test]
fn poisson_with_area_terms_and_forest_types_matches_r() {
    check(
        CountFamily::Poisson,
        "count_poisson",
        "hurdle_poisson",
        "poisson",
    );
}
