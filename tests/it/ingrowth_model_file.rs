//! Hand-typed ingrowth model files: what validation accepts and refuses (naming the key), and
//! expected ingrowth from a file typed from published coefficients.

use stemcast::model::ingrowth::{CovariateValue, IngrowthModel};
use stemcast::model::ingrowth_file::IngrowthModelFile;

fn read(text: &str) -> Result<IngrowthModel, String> {
    IngrowthModelFile::parse(text, "m.toml")
        .and_then(|raw| IngrowthModel::from_file(raw, "m.toml"))
        .map_err(|e| e.to_string())
}

const ANY: &str = "[any]\n[[any.coefficients]]\nterm = \"(intercept)\"\nestimate = 0.0\n[[any.coefficients]]\nterm = \"forest=mixed\"\nestimate = 1.0\n";
const COUNT: &str = "[[count.coefficients]]\nterm = \"(intercept)\"\nestimate = 0.0\n[[count.coefficients]]\nterm = \"ln(area)\"\nestimate = 0.5\n";
const LEVELS: &str =
    "[categorical.forest]\nlevels = [\"conifer\", \"mixed\"]\nreference = \"conifer\"\n";

fn file(head: &str, count_extra: &str, tail: &str) -> String {
    format!("kind = \"ingrowth\"\n{head}\n{ANY}[count]\n{count_extra}\n{COUNT}{LEVELS}{tail}")
}

#[test]
fn hand_typed_model_gives_the_expected_ingrowth() {
    let m = read(&file("counts = \"negative_binomial\"", "alpha = 0.5", "")).unwrap();
    let lookup = |v: &str| (v == "forest").then_some(CovariateValue::Level("conifer"));
    // Derived analytically: η_any = 0 → P(any) = 1/2; μ = exp(0.5 ln 4)·4·0.5 = 2·2 = 4 with
    // α = 0.5 → P₀ = (1 + 2)^(−2) = 1/9, E[N | N > 0] = 4/(8/9) = 4.5, E[N] = 2.25.
    let e = m.expectation(&lookup, 4.0, 0.5).unwrap();
    assert!((e.p_any - 0.5).abs() < 1e-15);
    assert!((e.mu - 4.0).abs() < 1e-14);
    assert!((e.mean_given_any - 4.5).abs() < 1e-14);
    assert!((e.expected - 2.25).abs() < 1e-14);
    // A level other than the reference switches the indicator on: P(any) = 1/(1 + e^−1).
    let mixed = |v: &str| (v == "forest").then_some(CovariateValue::Level("mixed"));
    let e = m.expectation(&mixed, 4.0, 0.5).unwrap();
    assert!((e.p_any - 1.0 / (1.0 + (-1f64).exp())).abs() < 1e-15);
    // A variable the lookup does not give is named.
    let none = |_: &str| None;
    assert!(m
        .expectation(&none, 4.0, 0.5)
        .unwrap_err()
        .to_string()
        .contains("forest"));
}

#[test]
fn inconsistent_files_are_refused_naming_the_key() {
    for (text, key) in [
        (file("counts = \"poisson\"", "alpha = 0.5", ""), "count.alpha"),
        (file("counts = \"negative_binomial\"", "", ""), "count.alpha"),
        (file("counts = \"negative_binomial\"", "alpha = -1.0", ""), "count.alpha"),
        (
            file(
                "counts = \"poisson\"",
                "",
                "[count.covariance]\nterms = [\"(intercept)\"]\nmatrix = [[1.0]]\n",
            ),
            "count.covariance",
        ),
        (
            file(
                "counts = \"poisson\"",
                "",
                "[trees]\nprobabilities = [0.5]\n[[trees.groups]]\nrecords = 2\ndbh_quantiles = [6.0]\n[[trees.groups.species]]\nspecies = \"a\"\nshare = 0.6\nrecords = 1\ndbh_quantiles = [6.0]\n",
            ),
            "trees.groups[0].species",
        ),
    ] {
        let e = read(&text).unwrap_err();
        assert!(e.contains(key), "{key}: {e}");
    }
    let e = read(&file("counts = \"poisson\"\n[any.extra]", "", "")).unwrap_err();
    assert!(e.contains("m.toml"), "{e}");
}
