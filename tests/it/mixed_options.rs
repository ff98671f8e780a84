//! Through the built binary: `--cluster` for the annualised and growth fits, the model file's
//! `[plot_effect]` validation, `rank --plot-effect`, and unidentified plot effects.

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
