//! `stemcast fit height` through the binary: the JSON keys against the shared reference
//! (R 4.2.2 `nls`, tests/fixtures/hd_volume), the `--by` layout, the model file, and bad
//! input (exit code 2) or non-convergence (exit code 1) with no model file written.

use serde_json::Value;
use stemcast::model::height_file::HeightModel;

use crate::common::fixtures::{close, fixture, numbers};
use crate::common::{stderr, stdout, Sandbox};

fn sample() -> String {
    fixture("hd_volume/hd_sample.csv").display().to_string()
}

fn expected(case: &str) -> Value {
    let path = fixture(&format!("hd_volume/{case}.json"));
    serde_json::from_str::<Value>(&std::fs::read_to_string(path).unwrap()).unwrap()["expected"]
        .clone()
}

/// The JSON carries what the issue asks for, each equal to the shared case (R nls; the
/// shared README's tolerances).
fn check_json(fit: &Value, e: &Value) {
    let coefs = fit["coefficients"].as_array().unwrap();
    let names: Vec<&str> = coefs.iter().map(|c| c["term"].as_str().unwrap()).collect();
    let want: Vec<&str> = e["coef_names"]
        .as_array()
        .unwrap()
        .iter()
        .map(|v| v.as_str().unwrap())
        .collect();
    assert_eq!(names, want);
    for (k, c) in coefs.iter().enumerate() {
        let est = c["estimate"].as_f64().unwrap();
        let se = c["std_error"].as_f64().unwrap();
        assert!(
            close(est, numbers(&e["coefficients"])[k], 1e-6, 0.0),
            "estimate {k}"
        );
        assert!(close(se, numbers(&e["std_errors"])[k], 1e-6, 0.0), "SE {k}");
    }
    assert!(close(
        fit["rss"].as_f64().unwrap(),
        e["rss"].as_f64().unwrap(),
        1e-8,
        0.0
    ));
    assert!(close(
        fit["residual_sd"].as_f64().unwrap(),
        e["residual_std_error"].as_f64().unwrap(),
        1e-8,
        0.0
    ));
    assert!(close(
        fit["log_likelihood"].as_f64().unwrap(),
        e["log_likelihood"].as_f64().unwrap(),
        0.0,
        1e-6
    ));
    assert!(close(
        fit["aic"].as_f64().unwrap(),
        e["aic"].as_f64().unwrap(),
        0.0,
        1e-6
    ));
}

#[test]
fn json_and_model_file_of_one_curve() {
    let sb = Sandbox::new();
    let out = sb.run(&[
        "fit",
        "height",
        &sample(),
        "--form",
        "chapman-richards",
        "--dbh",
        "dbh_cm",
        "--height",
        "height_m",
        "--where",
        "species=A",
        "--format",
        "json",
        "--out",
        "h.toml",
    ]);
    assert_eq!(out.status.code(), Some(0), "{}", stderr(&out));
    let json: Value = serde_json::from_str(&stdout(&out)).unwrap();
    let e = expected("hd_speciesA_chapman_richards");
    check_json(&json, &e);
    assert_eq!(
        json["left_out"]["where"], 170,
        "hd_sample.csv has 170 trees of species B"
    );
    let model = HeightModel::read(&sb.path("h.toml")).unwrap();
    assert_eq!(model.breast_height, 1.3);
    let curve = model.curve(None).unwrap();
    for (d, h) in numbers(&e["predictions"]["dbh"])
        .iter()
        .zip(numbers(&e["predictions"]["height"]))
    {
        assert!(close(curve.height(*d), h, 1e-6, 0.0), "prediction at {d}");
    }
}

#[test]
fn by_species_gives_one_fit_per_level() {
    let sb = Sandbox::new();
    let out = sb.run(&[
        "fit",
        "height",
        &sample(),
        "--form",
        "naslund",
        "--dbh",
        "dbh_cm",
        "--height",
        "height_m",
        "--by",
        "species",
        "--format",
        "json",
        "--out",
        "h.toml",
    ]);
    assert_eq!(out.status.code(), Some(0), "{}", stderr(&out));
    let json: Value = serde_json::from_str(&stdout(&out)).unwrap();
    assert_eq!(json["by"], "species");
    let fits = json["fits"].as_array().unwrap();
    assert_eq!(fits.len(), 2);
    assert_eq!(fits[0]["level"], "A");
    check_json(&fits[0], &expected("hd_speciesA_naslund"));
    // Species B: the 40-digit optimum of extra_nls.json (R nls and SciPy agree to 1e-9).
    let extra: Value = serde_json::from_str(
        &std::fs::read_to_string(fixture("hd_volume/extra_nls.json")).unwrap(),
    )
    .unwrap();
    let b = extra["cases"]
        .as_array()
        .unwrap()
        .iter()
        .find(|c| c["case"] == "hd_speciesB_naslund")
        .unwrap();
    assert_eq!(fits[1]["level"], "B");
    let est = fits[1]["coefficients"][0]["estimate"].as_f64().unwrap();
    assert!(close(
        est,
        numbers(&b["expected"]["coefficients"])[0],
        1e-6,
        0.0
    ));
    let model = HeightModel::read(&sb.path("h.toml")).unwrap();
    assert_eq!(model.by.as_deref(), Some("species"));
    assert!(model.default.is_none());
    assert!(model.curves_for(&["A".into(), "B".into()]).is_ok());
    let e = model.curves_for(&["C".into()]).unwrap_err().to_string();
    assert!(e.contains("species C"), "{e}");
}

/// Run `fit height` on `csv` with `extra` args; assert the exit code, the message and that no
/// model file was written.
fn refused(csv: &str, extra: &[&str], code: i32, needles: &[&str]) {
    let sb = Sandbox::new();
    sb.write("trees.csv", csv);
    let mut args = vec!["fit", "height", "trees.csv", "--out", "h.toml"];
    args.extend_from_slice(extra);
    let out = sb.run(&args);
    let err = stderr(&out);
    assert_eq!(out.status.code(), Some(code), "stderr: {err}");
    for n in needles {
        assert!(err.contains(n), "expected `{n}` in: {err}");
    }
    assert!(!sb.path("h.toml").exists(), "no model file may be written");
}

const TREES: &str = "dbh,height,species\n10,9.1,A\n20,15.2,A\n30,19.0,A\n40,21.4,A\n50,22.5,A\n";

#[test]
fn bad_input_is_refused_with_its_position() {
    let form = ["--form", "naslund"];
    refused(
        &TREES.replace("20,15.2", "\"20,5\",15.2"),
        &form,
        2,
        &["trees.csv", "line 3", "dbh", "20,5"],
    );
    refused(
        &TREES.replace("30,19.0", "-30,19.0"),
        &form,
        2,
        &["line 4", "dbh", "not positive"],
    );
    refused(
        TREES,
        &["--form", "naslund", "--height", "ht"],
        2,
        &["no column \"ht\"", "--height"],
    );
    refused(
        TREES,
        &["--form", "chapman-richards", "--start", "1,2"],
        2,
        &["--start", "3 parameters"],
    );
    refused(
        TREES,
        &["--form", "naslund", "--where", "species=B"],
        2,
        &["species=B", "it has: A"],
    );
}

/// Heights that do not depend on diameter leave Chapman–Richards unidentified (derived
/// analytically: the best curve is flat, reached only in the limit b → 0, c → 0, where
/// a(1 − e^(−bD))^c tends to a constant); the run fails at run time, naming the level.
#[test]
fn non_convergence_exits_with_code_1() {
    let flat = "dbh,height,species\n10,15,A\n20,14,A\n30,16,A\n40,15,A\n50,14,A\n60,16,A\n";
    refused(
        flat,
        &["--form", "chapman-richards", "--by", "species"],
        1,
        &["species = A", "did not converge", "--start"],
    );
}

/// A height model given where a survival or growth model is read says what it is.
#[test]
fn a_height_file_is_not_a_survival_model() {
    let text =
        "kind = \"height\"\nform = \"naslund\"\n[[coefficients]]\nterm = \"a\"\nestimate = 2.0\n";
    let e = stemcast::model::file::ModelFile::parse(text, "h.toml")
        .unwrap_err()
        .to_string();
    assert!(e.contains("h.toml: kind: this is a height model"), "{e}");
}
