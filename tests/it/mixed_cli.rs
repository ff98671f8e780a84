//! `fit survival --plot-effect`, `fit growth --plot-effect` and `--cluster` through the built
//! binary: the JSON shape, the model file's `[plot_effect]`, option checks, intercept-only
//! models and the cluster-robust covariances of the annualised and growth fits.

use serde_json::Value;
use stemcast::model::file::ModelFile;
use stemcast::model::stored::Model;

use crate::common::fixtures::fixture;
use crate::common::{stderr, stdout, Sandbox};
use crate::mixed_support::{assert_close, nums};

fn path(name: &str) -> String {
    fixture(name).display().to_string()
}

fn json(sb: &Sandbox, args: &[&str]) -> Value {
    let out = sb.run(args);
    assert!(out.status.success(), "{}", stderr(&out));
    serde_json::from_str(&stdout(&out)).expect("JSON summary")
}

fn reference(name: &str) -> Value {
    serde_json::from_str(&std::fs::read_to_string(fixture(name)).expect("case")).expect("json")
}

#[test]
fn survival_plot_effect_json_has_the_documented_shape() {
    let sb = Sandbox::new();
    let csv = path("glmm/tree_survival.csv");
    let j = json(
        &sb,
        &[
            "fit",
            "survival",
            &csv,
            "--predictors",
            "dbh, bal",
            "--plot-effect",
            "--plot",
            "plot",
            "--quadrature",
            "1",
            "--format",
            "json",
            "--out",
            "m.toml",
        ],
    );
    // Reference: tests/fixtures/glmm/tree_survival_logit.json, block `laplace`.
    let e = &reference("glmm/tree_survival_logit.json")["expected"]["laplace"];
    let pe = &j["plot_effect"];
    let est: Vec<f64> = j["coefficients"]
        .as_array()
        .unwrap()
        .iter()
        .map(|c| c["estimate"].as_f64().unwrap())
        .collect();
    let se: Vec<f64> = j["coefficients"]
        .as_array()
        .unwrap()
        .iter()
        .map(|c| c["std_error"].as_f64().unwrap())
        .collect();
    assert_close("β", &est, &nums(&e["coefficients"]), 1e-5, 1e-7);
    assert_close("SE", &se, &nums(&e["std_errors"]), 1e-5, 0.0);
    let sd = pe["sd"].as_f64().unwrap();
    assert_close("σ", &[sd], &[e["sigma"].as_f64().unwrap()], 1e-5, 1e-7);
    assert_close(
        "SE σ",
        &[pe["std_error_sd"].as_f64().unwrap()],
        &[e["std_error_sigma"].as_f64().unwrap()],
        1e-4,
        0.0,
    );
    assert_close(
        "ℓ",
        &[j["log_likelihood"].as_f64().unwrap()],
        &[e["log_likelihood"].as_f64().unwrap()],
        0.0,
        1e-6,
    );
    assert_close(
        "AIC",
        &[j["aic"].as_f64().unwrap()],
        &[e["aic"].as_f64().unwrap()],
        0.0,
        2e-6,
    );
    assert_eq!(pe["method"], "laplace");
    assert_eq!(pe["nodes"], 1);
    // Latent logistic ICC σ²/(σ² + π²/3) (docs/mixed-models.md).
    let icc = sd * sd / (sd * sd + std::f64::consts::PI.powi(2) / 3.0);
    assert!((pe["intraclass_correlation"].as_f64().unwrap() - icc).abs() < 1e-12);
    let t = pe["lr_test"]["statistic"].as_f64().unwrap();
    assert!(t > 0.0 && pe["lr_test"]["p_value"].as_f64().unwrap() < 0.05);
    let plots = pe["plots"].as_array().unwrap();
    assert_eq!(plots.len(), 60);
    assert_eq!(plots[0]["stand"], "1");
    let modes: Vec<f64> = plots.iter().map(|p| p["mode"].as_f64().unwrap()).collect();
    assert_close(
        "modes",
        &modes,
        &nums(&e["random_effects"]["conditional_modes"]),
        0.0,
        1e-5,
    );
    // The model file carries the plot effect and loads.
    let text = std::fs::read_to_string(sb.path("m.toml")).unwrap();
    let model = Model::from_file(ModelFile::parse(&text, "m.toml").unwrap(), "m.toml").unwrap();
    let stored = model.common().plot_effect.clone().expect("[plot_effect]");
    assert_eq!(stored.sd, sd);
    assert_eq!(stored.method.as_deref(), Some("laplace"));
    assert_eq!(stored.plots.len(), 60);
    assert_eq!(stored.plots[0].1, modes[0]);
}

#[test]
fn growth_plot_effect_reports_reml_and_ml() {
    let sb = Sandbox::new();
    let csv = path("lmm/dyestuff.csv");
    let run = |method: &str| {
        json(
            &sb,
            &[
                "fit",
                "growth",
                &csv,
                "--response-col",
                "Yield",
                "--predictors",
                "1",
                "--plot-effect",
                "--stand",
                "Batch",
                "--method",
                method,
                "--format",
                "json",
            ],
        )
    };
    // References: tests/fixtures/lmm/dyestuff_reml.json and dyestuff_ml.json.
    for (method, case) in [("reml", "dyestuff_reml"), ("ml", "dyestuff_ml")] {
        let j = run(method);
        let e = &reference(&format!("lmm/{case}.json"))["expected"];
        assert_eq!(j["plot_effect"]["method"], method);
        assert_close(
            case,
            &[j["residual_sd"].as_f64().unwrap()],
            &[e["sigma_residual"].as_f64().unwrap()],
            1e-5,
            0.0,
        );
        assert_close(
            case,
            &[j["plot_effect"]["sd"].as_f64().unwrap()],
            &[e["sigma_group"].as_f64().unwrap()],
            1e-5,
            0.0,
        );
        assert_eq!(j["plot_effect"]["plots"][4]["stand"], "E");
        assert!(j["r_squared"].is_null());
    }
    let out = sb.run(&[
        "fit",
        "growth",
        &csv,
        "--response-col",
        "Yield",
        "--predictors",
        "1",
        "--method",
        "ml",
    ]);
    assert_eq!(out.status.code(), Some(2), "--method needs --plot-effect");
}

#[test]
fn intercept_only_survival_is_the_logit_of_the_mean() {
    // Derived analytically: the intercept-only logistic MLE is ln(ȳ/(1 − ȳ)).
    let sb = Sandbox::new();
    let csv = path("glmm/tree_survival.csv");
    let j = json(
        &sb,
        &[
            "fit",
            "survival",
            &csv,
            "--predictors",
            "1",
            "--format",
            "json",
        ],
    );
    let y = crate::mixed_support::columns("glmm/tree_survival.csv")["alive"].clone();
    let mean = y.iter().sum::<f64>() / y.len() as f64;
    let b = j["coefficients"][0]["estimate"].as_f64().unwrap();
    assert!((b - (mean / (1.0 - mean)).ln()).abs() < 1e-8);
    let out = sb.run(&[
        "fit",
        "survival",
        &csv,
        "--predictors",
        "1",
        "--no-intercept",
    ]);
    assert_eq!(out.status.code(), Some(2));
}

#[test]
fn plot_effect_refuses_cluster_and_firth() {
    let sb = Sandbox::new();
    let csv = path("glmm/tree_survival.csv");
    for extra in [["--cluster", "plot"], ["--firth", "--firth"]] {
        let mut args = vec![
            "fit",
            "survival",
            &csv,
            "--predictors",
            "dbh",
            "--plot-effect",
            "--stand",
            "plot",
        ];
        args.push(extra[0]);
        if extra[1] != extra[0] {
            args.push(extra[1]);
        }
        let out = sb.run(&args);
        assert_eq!(out.status.code(), Some(2), "{extra:?}");
        assert!(stderr(&out).contains("--plot-effect"), "{}", stderr(&out));
    }
    let out = sb.run(&[
        "fit",
        "survival",
        &csv,
        "--predictors",
        "dbh",
        "--plot-effect",
        "--plot",
        "nowhere",
    ]);
    assert_eq!(out.status.code(), Some(2));
    assert!(stderr(&out).contains("nowhere"), "{}", stderr(&out));
}
