//! Fits and rankings read from the history equal those read from the simulation script's own
//! pair file, and the growth ranking equals NumPy/SciPy.

use serde_json::Value;

use super::{fixture, rel, HISTORY, PAIRS};
use crate::common::{stderr, stdout, Sandbox};

fn run_json(sb: &Sandbox, args: &[&str]) -> Value {
    let out = sb.run(args);
    assert!(out.status.success(), "{args:?}: {}", stderr(&out));
    serde_json::from_str(&stdout(&out)).expect("JSON")
}

fn with(base: &[&str], flags: &[&str], extra: &[&str]) -> Vec<String> {
    base.iter()
        .chain(flags)
        .chain(extra)
        .map(|s| s.to_string())
        .collect()
}

fn args(v: &[String]) -> Vec<&str> {
    v.iter().map(String::as_str).collect()
}

/// Every coefficient, standard error and covariance entry, and the log-likelihood, agree to
/// `tol` relative; the record counts agree exactly.
fn same_fit(a: &Value, b: &Value, tol: f64) {
    assert_eq!(a["records"], b["records"]);
    let (ca, cb) = (
        a["coefficients"].as_array().unwrap(),
        b["coefficients"].as_array().unwrap(),
    );
    assert_eq!(ca.len(), cb.len());
    for (x, y) in ca.iter().zip(cb) {
        assert_eq!(x["term"], y["term"]);
        for key in ["estimate", "std_error"] {
            let (p, q) = (x[key].as_f64().unwrap(), y[key].as_f64().unwrap());
            assert!(rel(p, q) < tol, "{} {key}: {p} vs {q}", x["term"]);
        }
    }
    let (la, lb) = (
        a["log_likelihood"].as_f64().unwrap(),
        b["log_likelihood"].as_f64().unwrap(),
    );
    assert!(rel(la, lb) < tol, "log-likelihood {la} vs {lb}");
    for (ra, rb) in a["covariance"]
        .as_array()
        .unwrap()
        .iter()
        .zip(b["covariance"].as_array().unwrap())
    {
        for (p, q) in ra.as_array().unwrap().iter().zip(rb.as_array().unwrap()) {
            let (p, q) = (p.as_f64().unwrap(), q.as_f64().unwrap());
            assert!((p - q).abs() <= 1e-10 * p.abs().max(q.abs()).max(1e-12));
        }
    }
}

#[test]
fn survival_from_the_history_equals_survival_from_the_scripts_pairs() {
    // Check values: the same model fitted by stemcast on pairs.csv, which simulate.py paired
    // and wrote itself; equality to 1e-10 shows that the history was paired and its
    // covariates computed per plot occasion as the script did.
    let sb = Sandbox::new();
    let (h, p) = (fixture("history.csv"), fixture("pairs.csv"));
    for model in [
        vec!["--interval", "annualized", "-p", "dbh, bal, SPP, SI"],
        vec![
            "--interval",
            "exposure",
            "--link",
            "cloglog",
            "--outcome",
            "dead",
            "-p",
            "ln(dbh), ba, rel_dbh, SPP",
            "--cluster",
            "PLOT",
        ],
    ] {
        let mut fixed = vec!["--format", "json"];
        fixed.extend(&model);
        let a = run_json(
            &sb,
            &args(&with(&["fit", "survival", &h], &HISTORY, &fixed)),
        );
        let b = run_json(&sb, &args(&with(&["fit", "survival", &p], &PAIRS, &fixed)));
        same_fit(&a, &b, 1e-10);
        // simulate.py: 740 intervals of which 17 end in a cut (censored).
        assert_eq!(a["records"], 723);
        assert_eq!(a["censored"], 17);
        assert_eq!(a["covariance_kind"], b["covariance_kind"]);
    }
}

#[test]
fn growth_from_the_history_equals_growth_from_the_scripts_pairs() {
    // Check values: as above, on the growth model (ln BAI, annualised since the intervals
    // differ); simulate.py: 581 intervals end alive, none with a diameter that did not grow.
    let sb = Sandbox::new();
    let (h, p) = (fixture("history.csv"), fixture("pairs.csv"));
    let model = ["-p", "ln(dbh), dbh, bal, qmd, SPP, SI", "--format", "json"];
    let a = run_json(&sb, &args(&with(&["fit", "growth", &h], &HISTORY, &model)));
    let mut pairs = PAIRS.to_vec();
    pairs.extend(["--dbh2", "DBH2_IN"]);
    let b = run_json(&sb, &args(&with(&["fit", "growth", &p], &pairs, &model)));
    same_fit(&a, &b, 1e-10);
    assert_eq!(a["records"], 581);
    assert!(
        rel(
            a["residual_sd"].as_f64().unwrap(),
            b["residual_sd"].as_f64().unwrap()
        ) < 1e-10
    );
}

#[test]
fn rank_folds_follow_the_plot_in_histories_and_with_plot() {
    // With one fold per plot (14 plots in simulate.py) the folds do not depend on the shuffle,
    // so the cross-validated log-loss from the history (plot = the stand column) must equal
    // that from the pair file with --plot PLOT: each plot's periods are held out together.
    let sb = Sandbox::new();
    let (h, p) = (fixture("history.csv"), fixture("pairs.csv"));
    let tail = [
        "--interval",
        "annualized",
        "--folds",
        "14",
        "--format",
        "json",
        "--candidates",
        "dbh",
        "dbh, bal, SPP",
    ];
    let a = run_json(&sb, &args(&with(&["rank", &h], &HISTORY, &tail)));
    let b = run_json(&sb, &args(&with(&["rank", &p], &PAIRS, &tail)));
    assert_eq!(a["stands"], 14);
    assert_eq!(b["stands"], 14);
    for (x, y) in a["candidates"]
        .as_array()
        .unwrap()
        .iter()
        .zip(b["candidates"].as_array().unwrap())
    {
        for key in ["aic", "cv_log_loss"] {
            let (u, v) = (x[key].as_f64().unwrap(), y[key].as_f64().unwrap());
            assert!(rel(u, v) < 1e-10, "{key}: {u} vs {v}");
        }
    }
}

#[test]
fn growth_ranking_from_the_history_equals_numpy_and_scipy() {
    // Check values: tests/fixtures/histories/reference_growth_rank.json, computed by
    // reference.py with NumPy 2.4.6 / SciPy 1.17.1 from pairs.csv (leave-one-plot-out CV,
    // R anova F-tests, logLik.lm AIC/BIC).
    let sb = Sandbox::new();
    let h = fixture("history.csv");
    let reference: Value = serde_json::from_str(
        &std::fs::read_to_string(fixture("reference_growth_rank.json")).unwrap(),
    )
    .unwrap();
    let tail = [
        "--growth",
        "--folds",
        "14",
        "--format",
        "json",
        "--candidates",
        "ln(dbh), dbh",
        "ln(dbh), dbh, bal",
        "ln(dbh), dbh, bal, SPP",
    ];
    let got = run_json(&sb, &args(&with(&["rank", &h], &HISTORY, &tail)));
    assert_eq!(got["records"], reference["records"]);
    assert_eq!(got["plots"], 14);
    for c in got["candidates"].as_array().unwrap() {
        let want = &reference["candidates"][c["predictors"].as_str().unwrap()];
        assert_eq!(c["k"], want["k"]);
        for key in [
            "log_likelihood",
            "aic",
            "bic",
            "adj_r_squared",
            "residual_sd",
            "cv_rmse",
        ] {
            let (u, v) = (c[key].as_f64().unwrap(), want[key].as_f64().unwrap());
            assert!(rel(u, v) < 1e-9, "{} {key}: {u} vs {v}", c["predictors"]);
        }
    }
    let tests = got["nested_f_tests"].as_array().unwrap();
    assert_eq!(tests.len(), 3);
    for want in reference["f_tests"].as_array().unwrap() {
        let t = tests
            .iter()
            .find(|t| t["reduced"] == want["reduced"] && t["full"] == want["full"])
            .expect("every nested pair tested");
        assert_eq!((&t["df1"], &t["df2"]), (&want["df1"], &want["df2"]));
        assert!(rel(t["f"].as_f64().unwrap(), want["f"].as_f64().unwrap()) < 1e-9);
        // p-values: the reference README's rule, rtol 1e-4 / atol 1e-12.
        let (u, v) = (
            t["p_value"].as_f64().unwrap(),
            want["p_value"].as_f64().unwrap(),
        );
        assert!((u - v).abs() <= 1e-12 + 1e-4 * v.abs(), "p {u} vs {v}");
    }
}

#[test]
fn a_reference_level_concerns_only_the_candidates_that_use_its_variable() {
    // The `--reference SPP=DF` of a candidate without SPP used to be reported as "not a
    // categorical column"; now rank applies it where SPP is used (DF is then the baseline, so
    // the BM indicator appears) and a single fit names the real problem.
    let sb = Sandbox::new();
    let h = fixture("history.csv");
    let tail = [
        "--interval",
        "annualized",
        "--folds",
        "3",
        "--format",
        "json",
        "--reference",
        "SPP=DF",
        "--candidates",
        "dbh",
        "dbh, SPP",
    ];
    let got = run_json(&sb, &args(&with(&["rank", &h], &HISTORY, &tail)));
    let terms: Vec<Value> = got["candidates"]
        .as_array()
        .unwrap()
        .iter()
        .flat_map(|c| c["terms"].as_array().unwrap().clone())
        .collect();
    assert!(terms.contains(&Value::from("SPP=BM")), "{terms:?}");
    let fit = with(
        &["fit", "survival", &h],
        &HISTORY,
        &[
            "--interval",
            "annualized",
            "-p",
            "dbh",
            "--reference",
            "SPP=DF",
        ],
    );
    let out = sb.run(&args(&fit));
    assert_eq!(out.status.code(), Some(2));
    assert!(
        stderr(&out).contains("--reference SPP=DF: no predictor term uses `SPP`"),
        "{}",
        stderr(&out)
    );
    let none = with(
        &["rank", &h],
        &HISTORY,
        &[
            "--interval",
            "annualized",
            "--reference",
            "XX=1",
            "--candidates",
            "dbh",
        ],
    );
    let out = sb.run(&args(&none));
    assert!(
        stderr(&out).contains("no candidate uses `XX`"),
        "{}",
        stderr(&out)
    );
}
