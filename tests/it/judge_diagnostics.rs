//! Diagnostics of `fit survival` through the command line: AUC, Hosmer–Lemeshow, LR test
//! against the null model, calibration by diameter class, the calibration chart.

use crate::common::fixtures::{close, expected, fixture, tol, within};
use crate::common::{stderr, stdout, Sandbox};
use serde_json::Value;

fn fit_json(sb: &Sandbox, args: &[&str]) -> Value {
    let mut all = vec!["fit", "survival"];
    all.extend_from_slice(args);
    all.extend_from_slice(&["--format", "json"]);
    let out = sb.run(&all);
    assert!(out.status.success(), "{}", stderr(&out));
    serde_json::from_str(&stdout(&out)).expect("JSON on stdout")
}

fn f(v: &Value) -> f64 {
    v.as_f64().expect("number")
}

const BIRTHWT_TERMS: &str = "age, lwt, race_black, race_other, smoke, ptl, ht, ui";

#[test]
fn birthwt_auc_hosmer_lemeshow_and_lr_test_match_the_fixture() {
    let sb = Sandbox::new();
    let data = fixture("birthwt.csv");
    let j = fit_json(
        &sb,
        &[
            data.to_str().unwrap(),
            "--status",
            "low",
            "-p",
            BIRTHWT_TERMS,
        ],
    );
    // birthwt_logit.json expected.auc (statsmodels; R pROC, ROCR, sklearn), tolerance atol 1e-12.
    let e = expected("birthwt_logit");
    assert!(within(f(&j["auc"]), f(&e["auc"]), tol::AUC), "{}", j["auc"]);
    // birthwt_logit.json expected.hosmer_lemeshow (R and Python re-implementations of
    // ResourceSelection::hoslem.test, g = 10): statistic rtol 1e-6, df and groups exact.
    let (hl, ehl) = (&j["hosmer_lemeshow"], &e["hosmer_lemeshow"]);
    assert!(within(
        f(&hl["statistic"]),
        f(&ehl["statistic"]),
        tol::HOSMER_LEMESHOW
    ));
    assert!(within(f(&hl["p_value"]), f(&ehl["p_value"]), tol::P_VALUE));
    assert_eq!(hl["df"], ehl["df"]);
    assert_eq!(hl["n_groups"], ehl["n_groups"]);
    assert_eq!(
        hl.as_object().unwrap().keys().collect::<Vec<_>>(),
        ["df", "n_groups", "p_value", "statistic"],
        "docs/commands.md#survival-json keys"
    );
    assert_eq!(
        j["hosmer_lemeshow_groups"]["group_sizes"],
        ehl["group_sizes"]
    );
    assert_eq!(
        j["hosmer_lemeshow_groups"]["observed_events"],
        ehl["observed_events"]
    );
    // birthwt_logit.json expected.lr_test_vs_null (statsmodels; R glm): rtol 1e-8.
    let (lr, elr) = (&j["lr_test_vs_null"], &e["lr_test_vs_null"]);
    assert!(within(
        f(&lr["statistic"]),
        f(&elr["statistic"]),
        tol::LIKELIHOOD
    ));
    assert_eq!(lr["df"], elr["df"]);
    assert!(within(f(&lr["p_value"]), f(&elr["p_value"]), tol::P_VALUE));
    assert_eq!(j["covariance_kind"], "model");
}

#[test]
fn lung_offset_auc_and_hosmer_lemeshow_match_the_fixture() {
    let sb = Sandbox::new();
    let data = fixture("lung_intervals.csv");
    let j = fit_json(
        &sb,
        &[
            data.to_str().unwrap(),
            "--status",
            "dead",
            "--link",
            "cloglog",
            "--offset",
            "log_exposure",
            "-p",
            "int2, int3, age, female",
        ],
    );
    // lung_cloglog_offset.json expected.auc and .hosmer_lemeshow (statsmodels; R), with tied
    // fitted values in the HL groups.
    let e = expected("lung_cloglog_offset");
    assert!(within(f(&j["auc"]), f(&e["auc"]), tol::AUC));
    let hl = &j["hosmer_lemeshow"];
    assert!(close(
        f(&hl["statistic"]),
        f(&e["hosmer_lemeshow"]["statistic"]),
        1e-6,
        1e-9
    ));
    assert_eq!(hl["df"], 8);
    // lung_cloglog_offset.json expected.lr_test_vs_null.
    let lr = &j["lr_test_vs_null"];
    assert!(close(
        f(&lr["statistic"]),
        f(&e["lr_test_vs_null"]["statistic"]),
        1e-8,
        1e-8
    ));
}

#[test]
fn weighted_and_counts_data_report_auc_and_hl_as_null_with_the_reason() {
    let sb = Sandbox::new();
    // bliss_logit_counts.json model: response `killed` of `n` trials on `dose`.
    let counts = fixture("bliss.csv");
    let args = ["--successes", "killed", "--trials", "n", "-p", "dose"];
    let mut all = vec![counts.to_str().unwrap()];
    all.extend_from_slice(&args);
    let j = fit_json(&sb, &all);
    assert!(j["auc"].is_null() && j["hosmer_lemeshow"].is_null());
    let why = j["unavailable"]["auc"].as_str().unwrap();
    assert!(why.contains("successes/trials"), "{why}");
    assert!(j["lr_test_vs_null"].is_object());
    assert!(j["calibration"].is_null());

    // bliss_logit_weighted.json model: status `y` with prior weights `w`.
    let weighted = fixture("bliss_weighted.csv");
    let j = fit_json(
        &sb,
        &[
            weighted.to_str().unwrap(),
            "--status",
            "y",
            "--weights",
            "w",
            "-p",
            "dose",
        ],
    );
    assert!(j["auc"].is_null() && j["hosmer_lemeshow"].is_null());
    let why = j["unavailable"]["hosmer_lemeshow"].as_str().unwrap();
    assert!(why.contains("weighted"), "{why}");
}

/// Trees in two diameter classes with a class indicator as the only predictor: the fit is
/// saturated in the class, so each class's mean predicted survival equals its observed
/// survival (derived analytically: the ML score equations of a saturated logit set Σ p̂ = Σ y
/// within each level).
const CLASSES_CSV: &str = "stand,dbh,size,alive,years
1,3,small,1,5
1,4,small,0,5
1,6,small,1,5
1,7,small,1,5
2,12,large,1,5
2,14,large,1,5
2,15,large,0,5
2,25,large,1,5
2,30,large,1,5
3,8,small,0,5
3,11,large,1,5
";

#[test]
fn calibration_table_uses_the_given_classes_on_the_survival_scale() {
    let sb = Sandbox::new();
    let data = sb.write("trees.csv", CLASSES_CSV);
    let j = fit_json(
        &sb,
        &[
            data.to_str().unwrap(),
            "-p",
            "size",
            "--dbh-classes",
            "0,10,20",
        ],
    );
    let cal = &j["calibration"];
    assert_eq!(cal["default_classes"], false);
    let rows = cal["classes"].as_array().unwrap();
    // Counted by hand from CLASSES_CSV: [0,10): 5 trees, 3 alive; [10,20): 4 trees, 3 alive;
    // [20,∞): 2 trees, 2 alive.
    let want = [(0.0, 5, 0.6), (10.0, 4, 0.75), (20.0, 2, 1.0)];
    for (row, (lower, n, obs)) in rows.iter().zip(want) {
        assert_eq!(f(&row["lower"]), lower);
        assert_eq!(row["records"], n);
        assert!(close(f(&row["observed_survival"]), obs, 1e-12, 0.0));
    }
    assert!(rows[2]["upper"].is_null());
    // Saturated in `size`: class [0,10) holds exactly the 5 small trees (3 of 5 alive), so its
    // mean predicted survival is 0.6 (derived analytically, see CLASSES_CSV).
    assert!(close(
        f(&rows[0]["mean_predicted_survival"]),
        0.6,
        1e-8,
        1e-10
    ));

    // With --outcome dead the table still shows survival: 1 − P(dead).
    let dead = sb.write(
        "dead.csv",
        &CLASSES_CSV
            .replace(",1,5", ",x,5")
            .replace(",0,5", ",1,5")
            .replace(",x,5", ",0,5"),
    );
    let jd = fit_json(
        &sb,
        &[
            dead.to_str().unwrap(),
            "-p",
            "size",
            "--outcome",
            "dead",
            "--dbh-classes",
            "0,10,20",
        ],
    );
    let dead_rows = jd["calibration"]["classes"].as_array().unwrap();
    for (a, b) in dead_rows.iter().zip(rows) {
        assert_eq!(a["records"], b["records"]);
        for key in ["observed_survival", "mean_predicted_survival"] {
            assert!(close(f(&a[key]), f(&b[key]), 1e-9, 1e-12), "{key}");
        }
    }
}

#[test]
fn default_classes_are_used_and_said_so() {
    let sb = Sandbox::new();
    let data = sb.write("trees.csv", CLASSES_CSV);
    let out = sb.run(&["fit", "survival", data.to_str().unwrap(), "-p", "dbh"]);
    assert!(out.status.success(), "{}", stderr(&out));
    let text = stdout(&out);
    assert!(text.contains("default classes"), "{text}");
    // DEFAULT_DBH_CLASSES_CM up to the largest diameter (30 cm): 0, 5, …, 30.
    assert!(
        text.contains("[25, 30)") && text.contains("[30, ∞)"),
        "{text}"
    );
    assert!(!text.contains("[40,"), "{text}");
}

#[test]
fn calibration_svg_is_written_with_one_curve_per_level() {
    let sb = Sandbox::new();
    let data = sb.write("trees.csv", CLASSES_CSV);
    let svg = sb.path("cal.svg");
    let out = sb.run(&[
        "fit",
        "survival",
        data.to_str().unwrap(),
        "-p",
        "dbh, size",
        "--calibration-svg",
        svg.to_str().unwrap(),
    ]);
    assert!(out.status.success(), "{}", stderr(&out));
    let text = std::fs::read_to_string(&svg).expect("svg written");
    assert!(text.starts_with("<svg"));
    assert!(
        text.contains(">\nlarge\n<") || text.contains("large"),
        "legend names level"
    );
    assert!(text.contains("small"));
    let leftovers: Vec<_> = std::fs::read_dir(sb.root())
        .unwrap()
        .filter_map(|e| e.ok())
        .map(|e| e.file_name().to_string_lossy().into_owned())
        .filter(|n| n != "trees.csv" && n != "cal.svg")
        .collect();
    assert!(leftovers.is_empty(), "temporary files left: {leftovers:?}");
}

#[test]
fn bad_dbh_classes_and_svg_without_diameters_are_usage_errors() {
    let sb = Sandbox::new();
    let data = sb.write("trees.csv", CLASSES_CSV);
    let out = sb.run(&[
        "fit",
        "survival",
        data.to_str().unwrap(),
        "-p",
        "dbh",
        "--dbh-classes",
        "0,10,5",
    ]);
    assert_eq!(out.status.code(), Some(2));
    assert!(stderr(&out).contains("must increase"), "{}", stderr(&out));
    let birthwt = fixture("birthwt.csv");
    let svg = sb.path("c.svg");
    let out = sb.run(&[
        "fit",
        "survival",
        birthwt.to_str().unwrap(),
        "--status",
        "low",
        "-p",
        "age",
        "--calibration-svg",
        svg.to_str().unwrap(),
    ]);
    assert_eq!(out.status.code(), Some(2));
    assert!(
        stderr(&out).contains("no diameter column"),
        "{}",
        stderr(&out)
    );
    assert!(!svg.exists());
}
