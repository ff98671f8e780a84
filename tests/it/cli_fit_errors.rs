//! Bad input to `stemcast fit` (issue: core fitting, item 9): each case gives exit code 2
//! (1 for non-convergence), one clear message naming file, line and column where they
//! apply, and writes no model file.

use crate::common::{stderr, Sandbox};

const GOOD: &str = "stand,tree,dbh,dbh2,alive,years,expansion,treatment,x\n\
1,1,10.0,11.0,1,5,25,a,1\n1,2,12.0,,0,5,25,b,2\n1,3,8.0,8.5,1,5,25,a,3\n1,4,4.0,,0,5,25,b,4\n\
2,1,15.0,16.0,1,5,25,a,5\n2,2,6.0,6.4,1,5,25,b,6\n2,3,9.0,,0,5,25,a,7\n2,4,11.0,12.0,1,5,25,b,8\n";

/// Run `fit survival` on `csv` with `predictors` plus `extra` args; assert the exit code, that
/// stderr contains every `needles` entry, and that no model file was written.
fn refused(csv: &str, predictors: &str, extra: &[&str], code: i32, needles: &[&str]) {
    let sb = Sandbox::new();
    sb.write("trees.csv", csv);
    let mut args = vec![
        "fit",
        "survival",
        "trees.csv",
        "--predictors",
        predictors,
        "--out",
        "m.toml",
    ];
    args.extend_from_slice(extra);
    let out = sb.run(&args);
    let err = stderr(&out);
    assert_eq!(out.status.code(), Some(code), "stderr: {err}");
    for n in needles {
        assert!(err.contains(n), "expected `{n}` in: {err}");
    }
    assert_eq!(err.lines().count(), 1, "one message: {err}");
    assert!(!sb.path("m.toml").exists(), "no model file may be written");
}

#[test]
fn good_data_fits() {
    let sb = Sandbox::new();
    sb.write("trees.csv", GOOD);
    let out = sb.run(&["fit", "survival", "trees.csv", "-p", "x", "--out", "m.toml"]);
    assert_eq!(out.status.code(), Some(0), "{}", stderr(&out));
    assert!(sb.path("m.toml").exists());
}

#[test]
fn missing_column() {
    refused(
        GOOD,
        "height",
        &[],
        2,
        &["trees.csv", "height", "term `height`"],
    );
    refused(
        &GOOD.replace("alive", "state"),
        "dbh",
        &[],
        2,
        &["trees.csv", "\"alive\""],
    );
}

#[test]
fn non_numeric_dbh() {
    refused(
        &GOOD.replace("1,3,8.0,", "1,3,8;0,"),
        "dbh",
        &[],
        2,
        &["trees.csv: line 4, column \"dbh\"", "8;0"],
    );
}

#[test]
fn zero_or_negative_dbh() {
    refused(
        &GOOD.replace("1,3,8.0,", "1,3,0,"),
        "dbh",
        &[],
        2,
        &["trees.csv: line 4, column \"dbh\""],
    );
    refused(
        &GOOD.replace("2,2,6.0,", "2,2,-6.0,"),
        "dbh",
        &[],
        2,
        &["trees.csv: line 7, column \"dbh\"", "-6"],
    );
}

#[test]
fn empty_file() {
    refused("", "dbh", &[], 2, &["trees.csv"]);
    refused("stand,tree,dbh,alive\n", "dbh", &[], 2, &["trees.csv"]);
}

#[test]
fn status_not_understood() {
    refused(
        &GOOD.replace("2,3,9.0,,0,", "2,3,9.0,,gone,"),
        "dbh",
        &[],
        2,
        &["trees.csv: line 8, column \"alive\"", "gone"],
    );
}

#[test]
fn unknown_term_or_level() {
    refused(GOOD, "exp(dbh)", &[], 2, &["exp(dbh)"]);
    refused(
        GOOD,
        "treatment=c",
        &[],
        2,
        &["`c` is not a level of `treatment`"],
    );
    refused(
        GOOD,
        "dbh",
        &["--reference", "treatment=z"],
        2,
        &["treatment=z"],
    );
}

#[test]
fn constant_predictor() {
    let csv = GOOD
        .lines()
        .enumerate()
        .map(|(i, l)| {
            if i == 0 {
                format!("{l},c\n")
            } else {
                format!("{l},7\n")
            }
        })
        .collect::<String>();
    refused(&csv, "dbh, c", &[], 2, &["`c` is constant"]);
}

#[test]
fn collinear_predictors() {
    // x2 = 2·x exactly.
    let csv = GOOD
        .lines()
        .enumerate()
        .map(|(i, l)| {
            if i == 0 {
                format!("{l},x2\n")
            } else {
                let x: f64 = l.rsplit(',').next().unwrap().parse().unwrap();
                format!("{l},{}\n", 2.0 * x)
            }
        })
        .collect::<String>();
    refused(&csv, "x, dbh, x2", &[], 2, &["`x2`", "collinear"]);
}

#[test]
fn separation() {
    // dbh ≥ 10 always alive, below always dead: complete separation on dbh.
    let csv = "dbh,alive\n4,0\n5,0\n6,0\n8,0\n10,1\n12,1\n14,1\n16,1\n";
    refused(csv, "dbh", &[], 2, &["separation", "dbh", "--firth"]);
}

#[test]
fn derived_covariate_name_clash() {
    let csv = GOOD
        .lines()
        .enumerate()
        .map(|(i, l)| {
            if i == 0 {
                format!("{l},bal\n")
            } else {
                format!("{l},1.5\n")
            }
        })
        .collect::<String>();
    refused(
        &csv,
        "dbh, bal",
        &[],
        2,
        &["trees.csv", "bal", "--use-column"],
    );
}

#[test]
fn unequal_intervals_point_to_the_other_interval_kinds() {
    refused(
        &GOOD.replace("2,4,11.0,12.0,1,5,", "2,4,11.0,12.0,1,9,"),
        "dbh",
        &[],
        2,
        &["annualized", "exposure"],
    );
}
