//! Hardened model-file reading (docs/model-files.md): standard errors and covariances that
//! cannot be a sampling distribution are refused with the key named.

use stemcast::model::file::ModelFile;
use stemcast::model::stored::Model;

fn read(text: &str) -> Result<Model, String> {
    ModelFile::parse(text, "m.toml")
        .and_then(|raw| Model::from_file(raw, "m.toml"))
        .map_err(|e| e.to_string())
}

const BASE: &str = "kind = \"survival\"\nlink = \"logit\"\n[[coefficients]]\nterm = \"(intercept)\"\nestimate = 1.0\nstd_error = SE0\n[[coefficients]]\nterm = \"dbh\"\nestimate = 0.1\nstd_error = 0.01\n";

fn with_cov(m: &str) -> String {
    format!(
        "{}[covariance]\nterms = [\"(intercept)\", \"dbh\"]\nmatrix = {m}\n",
        BASE.replace("SE0", "0.2")
    )
}

#[test]
fn negative_or_nan_standard_errors_are_refused() {
    for bad in ["-0.2", "nan", "inf"] {
        let e = read(&BASE.replace("SE0", bad)).unwrap_err();
        assert!(e.contains("coefficients[0].std_error"), "{e}");
    }
    // A zero standard error (a fixed coefficient) is a valid value.
    assert!(read(&BASE.replace("SE0", "0.0")).is_ok());
}

#[test]
fn a_covariance_with_a_negative_eigenvalue_is_refused() {
    // [[1, 2], [2, 1]] has eigenvalues 3 and −1 (derived analytically: 1 ± 2).
    let e = read(&with_cov("[[1.0, 2.0], [2.0, 1.0]]")).unwrap_err();
    assert!(
        e.contains("covariance.matrix") && e.contains("semi-definite"),
        "{e}"
    );
    // [[1, 1], [1, 1]] is singular but positive semi-definite (eigenvalues 2 and 0,
    // derived analytically); rounding one entry by 1e-12 stays within the allowance.
    assert!(read(&with_cov("[[1.0, 1.0], [1.0, 1.0]]")).is_ok());
    assert!(read(&with_cov("[[1.0, 1.000000000001], [1.000000000001, 1.0]]")).is_ok());
    // A proper covariance: a diagonal matrix, eigenvalues 0.04 and 0.0001 (its diagonal).
    assert!(read(&with_cov("[[0.04, 0.0], [0.0, 0.0001]]")).is_ok());
}
