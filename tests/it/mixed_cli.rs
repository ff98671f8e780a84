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

#[test]
fn growth_cluster_matches_sandwich() {
    // Reference: tests/fixtures/lmm/growth_plots_cluster.json (R 4.2.2, sandwich 3.0-2,
    // vcovCL(lm(ln_bai ~ log(dbh) + I(dbh^2) + bal), cluster = ~plot, type = "HC1")).
    let sb = Sandbox::new();
    let csv = path("lmm/growth_plots.csv");
    let j = json(
        &sb,
        &[
            "fit",
            "growth",
            &csv,
            "--response-col",
            "ln_bai",
            "--predictors",
            "ln(dbh), dbh^2, bal",
            "--cluster",
            "plot",
            "--format",
            "json",
        ],
    );
    let e = reference("lmm/growth_plots_cluster.json");
    let se: Vec<f64> = j["coefficients"]
        .as_array()
        .unwrap()
        .iter()
        .map(|c| c["std_error"].as_f64().unwrap())
        .collect();
    assert_close("CR1 SE", &se, &nums(&e["std_errors"]), 1e-8, 0.0);
    assert_eq!(j["covariance_kind"], "cluster_robust");
    assert_eq!(j["n_clusters"], 50);
}

#[test]
fn annualized_cluster_at_one_year_is_the_glm_cluster() {
    // Derived analytically: with every interval 1 year, P = logistic(η)^L is the logistic GLM,
    // so the annualised fit's scores and information, and hence its CR1 covariance, are the
    // GLM's (whose CR1 matches R sandwich in the shared lung_cloglog_cluster case).
    let sb = Sandbox::new();
    let text = std::fs::read_to_string(fixture("glmm/tree_survival.csv")).unwrap();
    let mut lines = text.lines();
    let mut csv = format!("{},years\n", lines.next().unwrap());
    for l in lines {
        csv.push_str(&format!("{l},1\n"));
    }
    let file = sb.write("one_year.csv", &csv);
    let f = file.to_str().unwrap();
    let base = [
        "fit",
        "survival",
        f,
        "--predictors",
        "dbh, bal",
        "--cluster",
        "plot",
        "--format",
        "json",
    ];
    let glm = json(&sb, &base);
    let mut args = base.to_vec();
    args.extend(["--interval", "annualized", "--years-col", "years"]);
    let annual = json(&sb, &args);
    let se = |j: &Value| -> Vec<f64> {
        j["coefficients"]
            .as_array()
            .unwrap()
            .iter()
            .map(|c| c["std_error"].as_f64().unwrap())
            .collect()
    };
    assert_close("annualised CR1", &se(&annual), &se(&glm), 1e-6, 0.0);
    assert_eq!(annual["covariance_kind"], "cluster_robust");
    assert_eq!(annual["n_clusters"], 60);
}

fn refused(text: &str, key: &str) {
    let e = ModelFile::parse(text, "m.toml")
        .and_then(|raw| Model::from_file(raw, "m.toml"))
        .unwrap_err()
        .to_string();
    assert!(e.contains(key), "expected `{key}` in: {e}");
}

#[test]
fn plot_effect_tables_are_validated() {
    let base = "kind = \"survival\"\nlink = \"logit\"\n[[coefficients]]\nterm = \"(intercept)\"\nestimate = 1.0\n";
    let hand = format!("{base}[plot_effect]\nsd = 0.4\n");
    let m = Model::from_file(ModelFile::parse(&hand, "m.toml").unwrap(), "m.toml").unwrap();
    let pe = m.common().plot_effect.clone().unwrap();
    assert_eq!((pe.sd, pe.method, pe.plots.len()), (0.4, None, 0));
    refused(
        &format!("{base}[plot_effect]\nsd = -0.4\n"),
        "plot_effect.sd",
    );
    refused(
        &format!("{base}[plot_effect]\nsd = nan\n"),
        "plot_effect.sd",
    );
    refused(
        &format!("{base}[plot_effect]\nsd = 0.4\nspread = 1\n"),
        "spread",
    );
    refused(
        &format!("{base}[plot_effect]\nsd = 0.4\nmethod = \"magic\"\n"),
        "plot_effect.method",
    );
    refused(
        &format!("{base}[plot_effect]\nsd = 0.4\n[[plot_effect.plots]]\nplot = \"7\"\nmode = 0.1\nsd = -1.0\n"),
        "plot_effect.plots[0].sd",
    );
    refused(&format!("{base}[plot_effect]\nmethod = \"agq\"\n"), "sd");
}

#[test]
fn rank_compares_candidates_with_and_without_the_plot_effect() {
    // Reference: tests/fixtures/glmm/tree_survival_logit.json, block `agq15` (ℓ and AIC of
    // alive ~ dbh + bal + (1 | plot)); the boundary-corrected p-value is ½P(χ²₁ > G)
    // (docs/mixed-models.md), here checked against the row's own likelihoods.
    let sb = Sandbox::new();
    let csv = path("glmm/tree_survival.csv");
    let j = json(
        &sb,
        &[
            "rank",
            &csv,
            "--candidates",
            "dbh",
            "dbh, bal",
            "--stand",
            "plot",
            "--plot-effect",
            "--folds",
            "4",
            "--format",
            "json",
        ],
    );
    let e = &reference("glmm/tree_survival_logit.json")["expected"]["agq15"];
    let rows = j["candidates"].as_array().unwrap();
    assert_eq!(rows.len(), 4);
    let mixed = rows
        .iter()
        .find(|r| r["predictors"] == "dbh, bal + plot effect")
        .unwrap();
    assert_eq!(mixed["k"], 4);
    assert_close(
        "ℓ",
        &[mixed["log_likelihood"].as_f64().unwrap()],
        &[e["log_likelihood"].as_f64().unwrap()],
        0.0,
        1e-6,
    );
    assert_close(
        "AIC",
        &[mixed["aic"].as_f64().unwrap()],
        &[e["aic"].as_f64().unwrap()],
        0.0,
        2e-6,
    );
    assert!(mixed["cv_log_loss"].as_f64().unwrap() > 0.0);
    let glm = rows.iter().find(|r| r["predictors"] == "dbh, bal").unwrap();
    let test = j["nested_lr_tests"]
        .as_array()
        .unwrap()
        .iter()
        .find(|t| t["full"] == "dbh, bal + plot effect")
        .unwrap();
    let g =
        2.0 * (mixed["log_likelihood"].as_f64().unwrap() - glm["log_likelihood"].as_f64().unwrap());
    assert!((test["statistic"].as_f64().unwrap() - g).abs() < 1e-9);
    use statrs::distribution::{ChiSquared, ContinuousCDF};
    let half = 0.5 * ChiSquared::new(1.0).unwrap().sf(g);
    assert!((test["p_value"].as_f64().unwrap() - half).abs() < 1e-12 * half.max(1e-300));
    let weights: f64 = rows
        .iter()
        .map(|r| r["akaike_weight"].as_f64().unwrap())
        .sum();
    assert!((weights - 1.0).abs() < 1e-12);
}

#[test]
fn one_record_per_plot_is_refused() {
    // Derived analytically: with one record per plot, V_j = σ_u² + σ_e² and the REML
    // likelihood depends on the sum only, so the plot effect is not identified.
    let sb = Sandbox::new();
    let rows: String = (0..30)
        .map(|i| format!("{i},{},{}\n", 1.0 + 0.3 * (i % 7) as f64, i % 5))
        .collect();
    let file = sb.write("one.csv", &format!("plot,y,x\n{rows}"));
    let out = sb.run(&[
        "fit",
        "growth",
        file.to_str().unwrap(),
        "--response-col",
        "y",
        "--predictors",
        "x",
        "--plot-effect",
        "--stand",
        "plot",
    ]);
    assert_eq!(out.status.code(), Some(2));
    assert!(stderr(&out).contains("single record"), "{}", stderr(&out));
}
