//! `stemcast rank` through the command line: agreement with single fits, Akaike weights,
//! nested LR tests, cross-validation, formats and bad input.

use std::collections::BTreeMap;

use crate::common::{stderr, stdout, Sandbox};
use serde_json::Value;

/// 8 stands × 25 trees; survival depends on dbh and on the group, drawn from a fixed linear
/// congruential sequence so the file is the same on every run.
fn trees() -> String {
    let mut csv = String::from("stand,tree,dbh,grp,bal,alive,years\n");
    let mut state: u64 = 12345;
    let mut uniform = || {
        state = state
            .wrapping_mul(6364136223846793005)
            .wrapping_add(1442695040888963407);
        (state >> 11) as f64 / (1u64 << 53) as f64
    };
    for stand in 1..=8 {
        for tree in 1..=25 {
            let dbh = 4.0 + 30.0 * uniform();
            let grp = if uniform() < 0.5 { "a" } else { "b" };
            let bal = 20.0 * uniform();
            let eta = -0.5 + 0.12 * dbh - if grp == "b" { 0.8 } else { 0.0 };
            let alive = uniform() < 1.0 / (1.0 + (-eta).exp());
            csv.push_str(&format!(
                "{stand},{tree},{dbh:.2},{grp},{bal:.2},{},5\n",
                u8::from(alive)
            ));
        }
    }
    csv
}

const CANDIDATES: [&str; 4] = ["dbh", "dbh, grp", "dbh, grp, bal", "grp"];

fn rank_json(sb: &Sandbox, data: &str, extra: &[&str]) -> Value {
    let mut a = vec!["rank", data, "--use-column", "bal", "--candidates"];
    a.extend(CANDIDATES);
    a.extend(extra);
    a.extend(["--format", "json"]);
    let out = sb.run(&a);
    assert!(out.status.success(), "{}", stderr(&out));
    serde_json::from_str(&stdout(&out)).expect("JSON")
}

fn fit_alone(sb: &Sandbox, data: &str, predictors: &str) -> Value {
    let out = sb.run(&[
        "fit",
        "survival",
        data,
        "--use-column",
        "bal",
        "-p",
        predictors,
        "--format",
        "json",
    ]);
    assert!(out.status.success(), "{}", stderr(&out));
    serde_json::from_str(&stdout(&out)).expect("JSON")
}

fn f(v: &Value) -> f64 {
    v.as_f64().expect("number")
}

#[test]
fn each_candidate_matches_its_single_fit_and_the_table_is_sorted_by_aic() {
    let sb = Sandbox::new();
    let data = sb.write("trees.csv", &trees());
    let p = data.to_str().unwrap();
    let r = rank_json(&sb, p, &["--folds", "4"]);
    let rows = r["candidates"].as_array().unwrap();
    assert_eq!(rows.len(), CANDIDATES.len());
    assert_eq!(r["records"], 200);
    let mut previous = f64::NEG_INFINITY;
    let mut deviance = BTreeMap::new();
    for row in rows {
        let name = row["predictors"].as_str().unwrap();
        // Reference: the same model fitted alone with `fit survival` (same records).
        let single = fit_alone(&sb, p, name);
        for key in ["aic", "bic", "log_likelihood", "auc"] {
            let (a, b) = (f(&row[key]), f(&single[key]));
            assert!((a - b).abs() <= 1e-10 * b.abs(), "{name} {key}: {a} vs {b}");
        }
        assert_eq!(
            row["k"].as_u64(),
            single["coefficients"].as_array().map(|c| c.len() as u64)
        );
        assert!(f(&row["aic"]) >= previous);
        previous = f(&row["aic"]);
        deviance.insert(name.to_string(), f(&single["deviance"]));
    }
    assert_eq!(f(&rows[0]["delta_aic"]), 0.0);

    // Nested pairs: "dbh" ⊂ "dbh, grp" ⊂ "dbh, grp, bal", "grp" ⊂ both larger ones. The LR
    // statistic is the deviance difference of the single fits (derived from its definition).
    let nested = r["nested_lr_tests"].as_array().unwrap();
    assert_eq!(nested.len(), 5);
    for n in nested {
        let (a, b) = (n["reduced"].as_str().unwrap(), n["full"].as_str().unwrap());
        let want = deviance[a] - deviance[b];
        assert!(
            (f(&n["statistic"]) - want).abs() <= 1e-9 * want.abs().max(1.0),
            "{a} in {b}"
        );
    }
}

#[test]
fn akaike_weights_sum_to_one_and_follow_exp_minus_half_delta() {
    let sb = Sandbox::new();
    let data = sb.write("trees.csv", &trees());
    let r = rank_json(&sb, data.to_str().unwrap(), &["--folds", "4"]);
    let rows = r["candidates"].as_array().unwrap();
    // Derived analytically: wᵢ = exp(−Δᵢ/2) / Σⱼ exp(−Δⱼ/2), Δᵢ = AICᵢ − min AIC; Σ wᵢ = 1.
    let min = rows
        .iter()
        .map(|r| f(&r["aic"]))
        .fold(f64::INFINITY, f64::min);
    let raw: Vec<f64> = rows
        .iter()
        .map(|r| (-(f(&r["aic"]) - min) / 2.0).exp())
        .collect();
    let total: f64 = raw.iter().sum();
    let sum: f64 = rows.iter().map(|r| f(&r["akaike_weight"])).sum();
    assert!((sum - 1.0).abs() < 1e-12);
    for (row, w) in rows.iter().zip(&raw) {
        assert!((f(&row["akaike_weight"]) - w / total).abs() < 1e-12);
        assert!((f(&row["delta_aic"]) - (f(&row["aic"]) - min)).abs() < 1e-9);
    }
}

#[test]
fn leave_one_stand_out_log_loss_of_a_group_model_has_the_closed_form() {
    // With --folds equal to the number of stands every stand is its own fold, whatever the
    // shuffle. For the candidate "grp" (saturated in the group) the fold fit predicts the
    // survival proportion of the tree's group in the other stands (derived analytically: ML of
    // a saturated logit), so the log-loss can be computed directly.
    let sb = Sandbox::new();
    let csv = trees();
    let data = sb.write("trees.csv", &csv);
    let r = rank_json(
        &sb,
        data.to_str().unwrap(),
        &["--folds", "8", "--seed", "99"],
    );
    let row = r["candidates"]
        .as_array()
        .unwrap()
        .iter()
        .find(|c| c["predictors"] == "grp")
        .unwrap()
        .clone();
    let recs: Vec<(u32, String, f64)> = csv
        .lines()
        .skip(1)
        .map(|l| {
            let c: Vec<&str> = l.split(',').collect();
            (
                c[0].parse().unwrap(),
                c[3].to_string(),
                c[5].parse().unwrap(),
            )
        })
        .collect();
    let mut loss = 0.0;
    for (stand, grp, y) in &recs {
        let others: Vec<f64> = recs
            .iter()
            .filter(|(s, g, _)| s != stand && g == grp)
            .map(|r| r.2)
            .collect();
        let p = others.iter().sum::<f64>() / others.len() as f64;
        loss -= y * p.ln() + (1.0 - y) * (1.0 - p).ln();
    }
    loss /= recs.len() as f64;
    let got = f(&row["cv_log_loss"]);
    assert!((got - loss).abs() < 1e-7, "{got} vs {loss}");
}

#[test]
fn the_same_seed_gives_the_same_folds_and_formats_agree() {
    let sb = Sandbox::new();
    let data = sb.write("trees.csv", &trees());
    let p = data.to_str().unwrap();
    let a = rank_json(&sb, p, &["--folds", "3", "--seed", "7"]);
    let b = rank_json(&sb, p, &["--folds", "3", "--seed", "7"]);
    assert_eq!(a, b);
    let mut args = vec![
        "rank",
        p,
        "--use-column",
        "bal",
        "--folds",
        "3",
        "--seed",
        "7",
        "--candidates",
    ];
    args.extend(CANDIDATES);
    args.extend(["--format", "csv"]);
    let out = sb.run(&args);
    assert!(out.status.success(), "{}", stderr(&out));
    let text = stdout(&out);
    let lines: Vec<&str> = text.lines().collect();
    assert_eq!(
        lines[0],
        "rank,predictors,k,log_likelihood,aic,delta_aic,akaike_weight,bic,auc,cv_log_loss"
    );
    assert_eq!(lines.len(), 1 + CANDIDATES.len());
    let first_aic = a["candidates"][0]["aic"].as_f64().unwrap();
    assert!(lines[1].contains(&first_aic.to_string()), "{}", lines[1]);
    args.pop();
    args.push("text");
    let text = stdout(&sb.run(&args));
    assert!(
        text.contains("Akaike weight") && text.contains("within"),
        "{text}"
    );
}

#[test]
fn bad_rank_input_exits_2_with_a_clear_message() {
    let sb = Sandbox::new();
    let data = sb.write("trees.csv", &trees());
    let p = data.to_str().unwrap();
    let cases: [(&[&str], &str); 4] = [
        (
            &["--candidates", "dbh", "dbh, height"],
            "candidate 2 \"dbh, height\"",
        ),
        (&["--candidates", "dbh", "--folds", "1"], "at least 2 folds"),
        (&["--candidates", "dbh", "--folds", "9"], "only 8 stands"),
        (&["--candidates", "dbh", "dbh^"], "candidate 2"),
    ];
    for (extra, needle) in cases {
        let mut a = vec!["rank", p];
        a.extend(extra);
        let out = sb.run(&a);
        assert_eq!(out.status.code(), Some(2), "{extra:?}: {}", stderr(&out));
        assert!(stderr(&out).contains(needle), "{extra:?}: {}", stderr(&out));
        assert!(stdout(&out).is_empty());
    }
    let no_stand = sb.write("nostand.csv", "dbh,alive\n10,1\n12,0\n14,1\n9,1\n");
    let out = sb.run(&[
        "rank",
        no_stand.to_str().unwrap(),
        "--candidates",
        "dbh",
        "--folds",
        "2",
    ]);
    assert_eq!(out.status.code(), Some(2));
    assert!(stderr(&out).contains("stand"), "{}", stderr(&out));
}

#[test]
fn annualized_candidates_match_their_single_fits() {
    let sb = Sandbox::new();
    // The same trees with a remeasurement interval of 3, 5, 7 or 9 years by stand.
    let csv: String = trees()
        .lines()
        .enumerate()
        .map(|(i, l)| {
            if i == 0 {
                return format!("{l}\n");
            }
            let stand: u32 = l.split(',').next().unwrap().parse().unwrap();
            format!("{},{}\n", l.trim_end_matches(",5"), 3 + 2 * (stand % 4))
        })
        .collect();
    let data = sb.write("trees.csv", &csv);
    let p = data.to_str().unwrap();
    let interval = ["--interval", "annualized", "--years-col", "years"];
    let mut a = vec!["rank", p, "--folds", "4", "--candidates", "dbh", "dbh, grp"];
    a.extend(interval);
    a.extend(["--format", "json"]);
    let out = sb.run(&a);
    assert!(out.status.success(), "{}", stderr(&out));
    let r: Value = serde_json::from_str(&stdout(&out)).unwrap();
    for row in r["candidates"].as_array().unwrap() {
        let name = row["predictors"].as_str().unwrap();
        let mut f = vec!["fit", "survival", p, "-p", name, "--format", "json"];
        f.extend(interval);
        let single: Value = serde_json::from_str(&stdout(&sb.run(&f))).unwrap();
        // Reference: the same annualised model fitted alone with `fit survival`.
        assert_eq!(row["aic"], single["aic"], "{name}");
        assert!(row["cv_log_loss"].as_f64().unwrap().is_finite());
    }
}
