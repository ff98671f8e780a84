//! `stemcast fit ingrowth` through the built binary: the JSON blocks, the model file, the
//! new-tree summaries, and bad input (exit code 2, file, line and column named).

use serde_json::Value;
use stemcast::model::file::ModelFile;
use stemcast::model::ingrowth::IngrowthModel;

use super::ingrowth_reference::{case, check_all, tol};
use crate::common::fixtures::{fixture, numbers};
use crate::common::{stderr, stdout, Sandbox};

fn plots() -> String {
    fixture("ingrowth/ingrowth_plots.csv").display().to_string()
}

/// `fit ingrowth DATA` with the reference case's columns and terms; `set` replaces any of the
/// four role flags, `extra` is appended.
fn fit_args<'a>(data: &'a str, set: &[(&'a str, &'a str)], extra: &[&'a str]) -> Vec<&'a str> {
    let mut a = vec!["fit", "ingrowth", data];
    for (flag, default) in [
        ("--count", "ingrowth"),
        ("--area", "area_ha"),
        ("--years", "years"),
        ("--predictors", "ba_m2ha, stems_ha, ln(years)"),
    ] {
        let value = set
            .iter()
            .find(|(f, _)| *f == flag)
            .map_or(default, |(_, v)| *v);
        a.extend([flag, value]);
    }
    a.extend_from_slice(extra);
    a
}

#[test]
fn json_has_both_blocks_alpha_and_the_hurdle_totals() {
    let s = Sandbox::new();
    let data = plots();
    let out = s.run(&fit_args(
        &data,
        &[],
        &["--format", "json", "--out", "m.toml"],
    ));
    assert!(out.status.success(), "{}", stderr(&out));
    let j: Value = serde_json::from_str(&stdout(&out)).unwrap();
    let c = case("ingrowth_hurdle_nb");
    let e = &c["expected"];
    for (block, part, t) in [
        ("any", "zero_part", "zero_part_coefficients_std_errors"),
        ("count", "count_part", "count_coefficients_and_alpha"),
    ] {
        let coefs = j[block]["coefficients"].as_array().unwrap();
        let est: Vec<f64> = coefs
            .iter()
            .map(|c| c["estimate"].as_f64().unwrap())
            .collect();
        let se: Vec<f64> = coefs
            .iter()
            .map(|c| c["std_error"].as_f64().unwrap())
            .collect();
        // Case ingrowth_hurdle_nb `expected.zero_part` / `expected.count_part`.
        check_all(block, &est, &numbers(&e[part]["coefficients"]), tol(&c, t));
        check_all(
            block,
            &se,
            &numbers(&e[part]["std_errors"]),
            tol(&c, "count_std_errors"),
        );
        let ll = j[block]["log_likelihood"].as_f64().unwrap();
        let want = e[part]["log_likelihood"].as_f64().unwrap();
        check_all(block, &[ll], &[want], tol(&c, "log_likelihood_aic_bic"));
        assert_eq!(coefs[3]["term"], "ln(years)");
    }
    let a = j["alpha"].as_f64().unwrap();
    let want = e["count_part"]["alpha"].as_f64().unwrap();
    check_all(
        "alpha",
        &[a],
        &[want],
        tol(&c, "count_coefficients_and_alpha"),
    );
    for key in ["log_likelihood", "aic"] {
        let got = j[key].as_f64().unwrap();
        let want = e["hurdle"][key].as_f64().unwrap();
        check_all(key, &[got], &[want], tol(&c, "log_likelihood_aic_bic"));
    }
    // The model file reads back as an ingrowth model, and not as a survival or growth model.
    let model = IngrowthModel::read(&s.path("m.toml")).unwrap();
    assert_eq!(model.alpha, a);
    let e = ModelFile::read(&s.path("m.toml")).unwrap_err().to_string();
    assert!(e.contains("kind") && e.contains("ingrowth model"), "{e}");
}

#[test]
fn text_summary_names_both_parts_and_the_dispersion() {
    let s = Sandbox::new();
    let data = plots();
    let out = s.run(&fit_args(&data, &[], &["--counts", "poisson"]));
    assert!(out.status.success(), "{}", stderr(&out));
    let text = stdout(&out);
    assert!(text.contains("zero-truncated Poisson"), "{text}");
    assert!(text.contains("P(any ingrowth)") && text.contains("Hurdle: log-likelihood"));
    assert!(!text.contains("dispersion α"));
    let out = s.run(&fit_args(&data, &[], &[]));
    assert!(
        stdout(&out).contains("dispersion α 0.6137"),
        "{}",
        stdout(&out)
    );
}

#[test]
fn tree_records_give_species_shares_and_quantiles_by_level() {
    let s = Sandbox::new();
    let data = plots();
    // Derived analytically: 4 records, 3 of species "pa" (shares 0.75 / 0.25); forest type
    // "x" holds d = 5, 7 (median 6 with two midpoint quantiles at p = 0.25, 0.75:
    // type-7 5.5 and 6.5).
    s.write(
        "new.csv",
        "plot,d,sp,ft\n1,5,pa,x\n1,7,pa,x\n2,8.5,qr,y\n3,9,pa,y\n",
    );
    let out = s.run(&fit_args(
        &data,
        &[],
        &[
            "--trees",
            "new.csv",
            "--tree-dbh",
            "d",
            "--species-col",
            "sp",
            "--by",
            "ft",
            "--dbh-quantiles",
            "2",
            "--out",
            "m.toml",
            "--format",
            "json",
        ],
    ));
    assert!(out.status.success(), "{}", stderr(&out));
    let model = IngrowthModel::read(&s.path("m.toml")).unwrap();
    let trees = model.trees.unwrap();
    assert_eq!(trees.probabilities, [0.25, 0.75]);
    assert_eq!(trees.species_attribute.as_deref(), Some("sp"));
    assert_eq!(trees.groups.len(), 3);
    assert_eq!(trees.groups[0].species[0].share, 0.75);
    assert_eq!(trees.groups[1].level.as_deref(), Some("x"));
    assert_eq!(trees.groups[1].dbh_quantiles, [5.5, 6.5]);
    let j: Value = serde_json::from_str(&stdout(&out)).unwrap();
    assert_eq!(j["trees"]["groups"][2]["species"][1]["species"], "qr");
}

/// Runs the fit on `csv` and returns stderr after checking exit code 2 and no model file.
fn refused(csv: &str, set: &[(&str, &str)]) -> String {
    let s = Sandbox::new();
    let path = s.write("plots.csv", csv).display().to_string();
    let out = s.run(&fit_args(&path, set, &["--out", "m.toml"]));
    assert_eq!(out.status.code(), Some(2), "{}", stderr(&out));
    assert!(!s.path("m.toml").exists());
    stderr(&out)
}

const HEADER: &str = "area_ha,years,ba_m2ha,stems_ha,ingrowth\n";

fn table(bad_row: &str) -> String {
    format!("{HEADER}0.05,5,10,400,2\n0.05,5,20,600,0\n{bad_row}\n0.05,6,12,500,1\n")
}

#[test]
fn bad_counts_areas_and_periods_name_file_line_and_column() {
    for (row, column, words) in [
        ("0.05,5,15,500,2.5", "ingrowth", "not a whole number"),
        ("0.05,5,15,500,-1", "ingrowth", "negative"),
        ("0.05,5,15,500,", "ingrowth", "empty"),
        ("0.05,5,15,500,many", "ingrowth", "not a number"),
        ("0,5,15,500,1", "area_ha", "not positive"),
        ("-0.1,5,15,500,1", "area_ha", "not positive"),
        ("0.05,0,15,500,1", "years", "not positive"),
        ("0.05,-2,15,500,1", "years", "not positive"),
    ] {
        let e = refused(&table(row), &[]);
        let line = format!("plots.csv: line 4, column \"{column}\"");
        assert!(e.contains(&line) && e.contains(words), "{row}: {e}");
    }
}

#[test]
fn missing_columns_and_impossible_fits_are_refused() {
    let e = refused(&table("0.05,5,15,500,1"), &[("--area", "plot_ha")]);
    assert!(
        e.contains("no column \"plot_ha\"") && e.contains("--area"),
        "{e}"
    );
    let none = format!("{HEADER}0.05,5,10,400,0\n0.05,5,20,600,0\n0.05,7,11,300,0\n");
    assert!(refused(&none, &[]).contains("none of the 3 plot periods has ingrowth"));
    let e = refused(
        &table("0.05,5,15,500,1"),
        &[("--predictors", "ingrowth, ba_m2ha")],
    );
    assert!(e.contains("count column"), "{e}");
}
