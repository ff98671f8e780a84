//! Model files typed by hand (`docs/model-files.md`) load; malformed ones are refused with the key
//! named.

use std::path::Path;

use stemcast::model::file::{IntervalKind, ModelFile, Outcome};
use stemcast::model::link::Link;
use stemcast::model::stored::Model;

#[test]
fn hand_typed_survival_model_loads_with_defaults() {
    // Coefficients typed from the example of docs/model-files.md (invented values).
    let m = Model::read(Path::new("tests/fixtures/models/hand_typed_survival.toml")).unwrap();
    let Model::Survival(s) = m else {
        panic!("expected a survival model")
    };
    assert_eq!(s.link, Link::Logit);
    assert_eq!(s.outcome, Outcome::Alive);
    assert_eq!(s.interval, IntervalKind::Fixed);
    assert_eq!(s.common.period_years, Some(5.0));
    assert_eq!(
        s.common.predictor.names(),
        vec!["(intercept)", "dbh", "dbh^2", "bal", "treatment=b"]
    );
    assert_eq!(
        s.common.predictor.coefficients(),
        vec![1.2, 0.15, -0.0012, -0.04, -0.6]
    );
    assert_eq!(s.common.covariance.unwrap().matrix[4][4], 0.004);
}

fn refused(text: &str, key: &str) {
    let e = ModelFile::parse(text, "m.toml")
        .and_then(|raw| Model::from_file(raw, "m.toml"))
        .unwrap_err()
        .to_string();
    assert!(e.starts_with("m.toml: "), "{e}");
    assert!(e.contains(key), "expected `{key}` in: {e}");
}

#[test]
fn malformed_model_files_name_the_key() {
    let base = "kind = \"survival\"\nlink = \"logit\"\n[[coefficients]]\nterm = \"(intercept)\"\nestimate = 1.0\n";
    refused(&base.replace("logit", "logistic"), "link");
    refused(&format!("{base}colour = 3\n"), "colour");
    refused(
        &format!("{base}[[coefficients]]\nterm = \"ln(bal)\"\nestimate = 1.0\n"),
        "coefficients[1]",
    );
    refused(
        &format!("{base}[[coefficients]]\nterm = \"sp=pine\"\nestimate = 1.0\n"),
        "categorical",
    );
    refused(
        &base.replace("kind = \"survival\"", "kind = \"growth\""),
        "link",
    );
    refused(&format!("{base}period_years = -5\n"), "period_years");
    refused(
        &format!("{base}[covariance]\nterms = [\"(intercept)\"]\nmatrix = [[1.0, 2.0]]\n"),
        "covariance.matrix[0]",
    );
}

#[test]
fn model_typed_from_published_coefficients_predicts_like_the_reference_fit() {
    // Dobson & Barnett (2008) §7.3.1 logit coefficients typed by hand (two decimals).
    let m = Model::read(Path::new(
        "tests/fixtures/models/dobson_barnett_bliss_logit.toml",
    ))
    .unwrap();
    let Model::Survival(s) = m else {
        panic!("expected a survival model")
    };
    assert_eq!(s.outcome, Outcome::Dead);
    let b = s.common.predictor.coefficients();
    assert_eq!(b, vec![-60.72, 34.27]);
    // Fitted P(dead) of R glm / statsmodels at the eight doses (bliss_logit_counts.json,
    // expected.fitted_values). Rounding the coefficients to 0.005 moves η by at most
    // 0.005 + 0.005·1.884 < 0.01, so p by at most 0.0025 (|dp/dη| ≤ 1/4): derived.
    let doses = [
        1.6907, 1.7242, 1.7552, 1.7842, 1.8113, 1.8369, 1.861, 1.8839,
    ];
    let reference = [
        0.058601025515914236,
        0.1640278689000925,
        0.3621190058724291,
        0.6053149063330526,
        0.7951717719347348,
        0.9032358193757742,
        0.9551961068089295,
        0.9790493440767001,
    ];
    for (d, r) in doses.iter().zip(reference) {
        let p = s.link.inverse(b[0] + b[1] * d);
        assert!((p - r).abs() < 0.0025, "dose {d}: {p} vs {r}");
    }
}
