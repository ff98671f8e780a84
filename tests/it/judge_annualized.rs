//! `fit survival --interval annualized` through the command line.

use crate::common::fixtures::close;
use crate::common::{stderr, stdout, Sandbox};
use serde_json::Value;

fn logit(p: f64) -> f64 {
    (p / (1.0 - p)).ln()
}

/// Group a: 20 trees over 5 years, 16 alive; group b: 20 trees over 10 years, 12 alive.
fn two_groups() -> String {
    let mut csv = String::from("stand,tree,dbh,grp,alive,years\n");
    for i in 0..20 {
        csv.push_str(&format!("1,{i},{},a,{},5\n", 10 + i, u8::from(i < 16)));
        csv.push_str(&format!("2,{i},{},b,{},10\n", 10 + i, u8::from(i < 12)));
    }
    csv
}

#[test]
fn annualized_fit_of_a_saturated_model_has_the_closed_form_estimate() {
    let sb = Sandbox::new();
    let data = sb.write("trees.csv", &two_groups());
    let model = sb.path("m.toml");
    let out = sb.run(&[
        "fit",
        "survival",
        data.to_str().unwrap(),
        "-p",
        "grp",
        "--interval",
        "annualized",
        "--years-col",
        "years",
        "--format",
        "json",
        "--out",
        model.to_str().unwrap(),
    ]);
    assert!(out.status.success(), "{}", stderr(&out));
    let j: Value = serde_json::from_str(&stdout(&out)).unwrap();
    // Derived analytically: in group g the likelihood is binomial in P = p^L_g, maximised at
    // P = s_g/n_g, so p_a = 0.8^(1/5) and p_b = 0.6^(1/10); the model is saturated in grp, so
    // (intercept) = logit(p_a) and grp=b = logit(p_b) − logit(p_a).
    let (pa, pb) = (0.8f64.powf(1.0 / 5.0), 0.6f64.powf(1.0 / 10.0));
    let c = j["coefficients"].as_array().unwrap();
    let b0 = c[0]["estimate"].as_f64().unwrap();
    let b1 = c[1]["estimate"].as_f64().unwrap();
    assert!(close(b0, logit(pa), 1e-7, 1e-9), "{b0}");
    assert!(close(b1, logit(pb) - logit(pa), 1e-7, 1e-9), "{b1}");
    // Derived analytically: ℓ = Σ_g [s ln(s/n) + (n − s) ln(1 − s/n)].
    let ll = 16.0 * 0.8f64.ln() + 4.0 * 0.2f64.ln() + 12.0 * 0.6f64.ln() + 8.0 * 0.4f64.ln();
    assert!(close(j["log_likelihood"].as_f64().unwrap(), ll, 1e-9, 1e-9));
    let m: toml::Value = toml::from_str(&std::fs::read_to_string(&model).unwrap()).unwrap();
    assert_eq!(m["interval"].as_str(), Some("annualized"));
    assert_eq!(m["period_years"].as_float(), Some(1.0));
    // AUC is computed on P = p^L, the probability of the observed outcome over its interval.
    assert!(j["auc"].is_number());
}

#[test]
fn annualized_needs_the_interval_column_logit_and_alive() {
    let sb = Sandbox::new();
    let data = sb.write("trees.csv", &two_groups());
    let p = data.to_str().unwrap();
    // Without --years-col the default `years` column is used; a file without one is refused.
    let no_years = sb.write("no_years.csv", &two_groups().replacen("years", "span", 1));
    let out = sb.run(&[
        "fit",
        "survival",
        no_years.to_str().unwrap(),
        "-p",
        "grp",
        "--interval",
        "annualized",
    ]);
    assert_eq!(out.status.code(), Some(2));
    assert!(stderr(&out).contains("--years-col"), "{}", stderr(&out));
    for (extra, needle) in [
        (
            vec![
                "--interval",
                "annualized",
                "--years-col",
                "years",
                "--link",
                "probit",
            ],
            "--link logit",
        ),
        (
            vec![
                "--interval",
                "annualized",
                "--years-col",
                "years",
                "--outcome",
                "dead",
            ],
            "--outcome alive",
        ),
        (
            vec![
                "--interval",
                "annualized",
                "--years-col",
                "years",
                "--firth",
            ],
            "--firth",
        ),
    ] {
        let mut a = vec!["fit", "survival", p, "-p", "grp"];
        a.extend(extra);
        let out = sb.run(&a);
        assert_eq!(out.status.code(), Some(2), "{a:?}");
        assert!(stderr(&out).contains(needle), "{a:?}: {}", stderr(&out));
    }
}

#[test]
fn annualized_fit_under_separation_does_not_converge_and_exits_1() {
    // separation_toy.csv (tests/fixtures) with a 5-year interval: x ≤ 5 died, x ≥ 6 lived, so
    // the annualised likelihood has no finite maximum and Newton–Raphson cannot converge.
    let sb = Sandbox::new();
    let mut csv = String::from("x,alive,years\n");
    for x in 1..=10 {
        csv.push_str(&format!("{x},{},5\n", u8::from(x >= 6)));
    }
    let data = sb.write("sep.csv", &csv);
    let model = sb.path("m.toml");
    let out = sb.run(&[
        "fit",
        "survival",
        data.to_str().unwrap(),
        "-p",
        "x",
        "--interval",
        "annualized",
        "--years-col",
        "years",
        "--out",
        model.to_str().unwrap(),
    ]);
    assert_eq!(out.status.code(), Some(1), "{}", stderr(&out));
    assert!(
        stderr(&out).contains("did not converge"),
        "{}",
        stderr(&out)
    );
    assert!(!model.exists());
}
