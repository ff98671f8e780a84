//! `fit survival --firth` through the command line against the separation fixtures.

use crate::common::fixtures::{close, fixture, numbers};
use crate::common::{stderr, stdout, Sandbox};
use serde_json::Value;

fn case(name: &str) -> Value {
    let text = std::fs::read_to_string(fixture(&format!("{name}.json"))).expect("fixture");
    serde_json::from_str(&text).expect("fixture JSON")
}

/// `fit survival` arguments of a fixture case, as conformance.py `fit_cmd` builds them.
fn args(c: &Value) -> Vec<String> {
    let m = &c["model"];
    let terms: Vec<&str> = m["terms"]
        .as_array()
        .unwrap()
        .iter()
        .map(|t| t.as_str().unwrap())
        .collect();
    vec![
        "fit".into(),
        "survival".into(),
        fixture(c["data"]["file"].as_str().unwrap())
            .display()
            .to_string(),
        "--predictors".into(),
        terms.join(", "),
        "--status".into(),
        m["response"].as_str().unwrap().into(),
    ]
}

fn run(sb: &Sandbox, a: &[String]) -> std::process::Output {
    let refs: Vec<&str> = a.iter().map(String::as_str).collect();
    sb.run(&refs)
}

fn check_case(name: &str) {
    let sb = Sandbox::new();
    let c = case(name);
    // The ordinary fit reports separation (expected.ordinary_mle.separation) and exits 2.
    let plain = run(&sb, &args(&c));
    assert_eq!(plain.status.code(), Some(2), "{name}");
    assert!(stderr(&plain).contains("separation"), "{}", stderr(&plain));

    let model = sb.path("m.toml");
    let mut a = args(&c);
    a.extend(
        [
            "--firth",
            "--out",
            model.to_str().unwrap(),
            "--format",
            "json",
        ]
        .map(String::from),
    );
    let out = run(&sb, &a);
    assert!(out.status.success(), "{}", stderr(&out));
    // {name}.json expected.coefficients and .std_errors (numpy Newton; brglm2, brglm):
    // Firth tolerance rtol 1e-6, atol 1e-9.
    let e = &c["expected"];
    let m: toml::Value = toml::from_str(&std::fs::read_to_string(&model).unwrap()).unwrap();
    let est: Vec<f64> = m["coefficients"]
        .as_array()
        .unwrap()
        .iter()
        .map(|x| x["estimate"].as_float().unwrap())
        .collect();
    let want = numbers(&e["coefficients"]);
    assert_eq!(est.len(), want.len());
    for (g, w) in est.iter().zip(&want) {
        assert!(close(*g, *w, 1e-6, 1e-9), "{name}: {g} vs {w}");
    }
    let j: Value = serde_json::from_str(&stdout(&out)).unwrap();
    assert_eq!(j["estimator"], "firth");
    let (ses, wald, plr) = (
        numbers(&e["std_errors"]),
        numbers(&e["p_values"]),
        numbers(&e["plr_p_values"]),
    );
    for (i, coef) in j["coefficients"].as_array().unwrap().iter().enumerate() {
        assert!(close(
            coef["std_error"].as_f64().unwrap(),
            ses[i],
            1e-6,
            1e-9
        ));
        // {name}.json expected.plr_p_values (penalised-likelihood-ratio tests, penalty from the
        // full design; the fixture's Python script checked with a second optimiser), rtol 1e-4.
        let p = coef["p_value"].as_f64().unwrap();
        assert!(
            close(p, plr[i], 1e-4, 1e-12),
            "{name} plr {i}: {p} vs {}",
            plr[i]
        );
        assert_eq!(coef["p_value_kind"], "penalized_likelihood_ratio");
        // {name}.json expected.p_values: Wald p-values, rtol 1e-4.
        let w = coef["wald_p_value"].as_f64().unwrap();
        assert!(close(w, wald[i], 1e-4, 1e-12), "{name} wald {i}");
    }
    // {name}.json expected.penalized_log_likelihood and .log_likelihood, rtol 1e-8.
    let pll = j["penalized_log_likelihood"].as_f64().unwrap();
    assert!(close(
        pll,
        e["penalized_log_likelihood"].as_f64().unwrap(),
        1e-8,
        1e-8
    ));
    let ll = j["log_likelihood"].as_f64().unwrap();
    assert!(close(ll, e["log_likelihood"].as_f64().unwrap(), 1e-8, 1e-8));
}

#[test]
fn firth_reproduces_separation_toy() {
    check_case("separation_toy_firth");
}

#[test]
fn firth_reproduces_endometrial() {
    check_case("endometrial_firth");
}

#[test]
fn firth_with_another_link_is_refused_before_anything_is_written() {
    let sb = Sandbox::new();
    let c = case("separation_toy_firth");
    let model = sb.path("m.toml");
    let mut a = args(&c);
    a.extend(
        [
            "--firth",
            "--link",
            "probit",
            "--out",
            model.to_str().unwrap(),
        ]
        .map(String::from),
    );
    let out = run(&sb, &a);
    assert_eq!(out.status.code(), Some(2));
    assert!(stderr(&out).contains("logit link only"), "{}", stderr(&out));
    assert!(!model.exists());
}
