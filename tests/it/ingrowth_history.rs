//! `fit ingrowth --history`: the plot-period table derived from a measurement history gives
//! the same fit as that table written out by `stemcast intervals --ingrowth` (plus the plot
//! attribute added by hand), and the new-tree summary counts the simulation script's ingrowth.

use std::collections::BTreeMap;

use serde_json::Value;
use stemcast::model::ingrowth::IngrowthModel;

use crate::common::fixtures::fixture;
use crate::common::{stderr, stdout, Sandbox};

const HISTORY_FLAGS: [&str; 18] = [
    "--stand",
    "PLOT",
    "--tree",
    "TREE_NO",
    "--time-col",
    "MEAS_YR",
    "--dbh",
    "DBH_IN",
    "--status",
    "STATUS",
    "--status-codes",
    "1=alive,2=dead,3=cut",
    "--expansion",
    "TPA",
    "--units",
    "imperial",
    "--threshold-dbh",
    "5",
];

const PREDICTORS: &str = "ba, SI, ln(years)";

fn history() -> String {
    fixture("histories/history.csv").display().to_string()
}

fn json(out: &std::process::Output) -> Value {
    assert!(out.status.success(), "{}", stderr(out));
    serde_json::from_str(&stdout(out)).unwrap()
}

/// The plot-period table of `intervals --ingrowth` with the history's SI per plot appended.
fn hand_table(s: &Sandbox) -> String {
    let h = history();
    let mut a = vec!["intervals", h.as_str(), "--out", "iv.csv"];
    a.extend(HISTORY_FLAGS);
    a.extend(["--ingrowth", "pp.csv"]);
    let out = s.run(&a);
    assert!(out.status.success(), "{}", stderr(&out));
    let text = std::fs::read_to_string(fixture("histories/history.csv")).unwrap();
    let mut si: BTreeMap<String, String> = BTreeMap::new();
    for line in text.lines().skip(1) {
        let cells: Vec<&str> = line.split(',').collect();
        si.insert(cells[0].to_string(), cells[7].to_string());
    }
    let pp = std::fs::read_to_string(s.path("pp.csv")).unwrap();
    let mut lines = pp.lines();
    let mut table = format!("{},SI\n", lines.next().unwrap());
    for line in lines {
        let plot = line.split(',').next().unwrap();
        table.push_str(&format!("{line},{}\n", si[plot]));
    }
    s.write("table.csv", &table).display().to_string()
}

fn coefficients(j: &Value, block: &str) -> Vec<(String, f64, f64)> {
    j[block]["coefficients"]
        .as_array()
        .unwrap()
        .iter()
        .map(|c| {
            (
                c["term"].as_str().unwrap().to_string(),
                c["estimate"].as_f64().unwrap(),
                c["std_error"].as_f64().unwrap(),
            )
        })
        .collect()
}

#[test]
fn history_fit_equals_the_fit_of_its_plot_period_table() {
    let s = Sandbox::new();
    let h = history();
    let mut a = vec!["fit", "ingrowth", h.as_str(), "--history"];
    a.extend(HISTORY_FLAGS);
    a.extend([
        "--predictors",
        PREDICTORS,
        "--counts",
        "poisson",
        "--species-col",
        "SPP",
        "--format",
        "json",
        "--out",
        "m.toml",
    ]);
    let from_history = json(&s.run(&a));
    let table = hand_table(&s);
    let from_table = json(&s.run(&[
        "fit",
        "ingrowth",
        &table,
        "--count",
        "ingrowth",
        "--area",
        "area",
        "--years",
        "years",
        "--units",
        "imperial",
        "--predictors",
        PREDICTORS,
        "--counts",
        "poisson",
        "--format",
        "json",
    ]));
    for block in ["any", "count"] {
        let (a, b) = (
            coefficients(&from_history, block),
            coefficients(&from_table, block),
        );
        assert_eq!(a.len(), 4, "{block}: intercept, ba, SI, ln(years)");
        // The same records in the same order: the same arithmetic, so equal bits.
        assert_eq!(a, b, "{block} part");
        assert_eq!(
            from_history[block]["log_likelihood"],
            from_table[block]["log_likelihood"]
        );
    }
    assert_eq!(from_history["aic"], from_table["aic"]);

    // The new trees: as many as the simulation script counted (tests/fixtures/histories/
    // ingrowth.csv, written by simulate.py, not by stemcast), every species share positive
    // and the shares summing to 1.
    let counted: u64 = std::fs::read_to_string(fixture("histories/ingrowth.csv"))
        .unwrap()
        .lines()
        .skip(1)
        .map(|l| l.rsplit(',').next().unwrap().parse::<u64>().unwrap())
        .sum();
    let model = IngrowthModel::read(&s.path("m.toml")).unwrap();
    let trees = model.trees.expect("the history supplies the new trees");
    let all = &trees.groups[0];
    assert_eq!(all.records, counted);
    assert_eq!(trees.species_attribute.as_deref(), Some("SPP"));
    let total: u64 = all.species.iter().map(|s| s.records).sum();
    assert_eq!(total, counted);
    // Every ingrowth diameter is at or above the 5 in threshold.
    assert!(all.dbh_quantiles.iter().all(|d| *d >= 5.0));
}

#[test]
fn history_refuses_the_table_role_flags() {
    let s = Sandbox::new();
    let h = history();
    let mut a = vec!["fit", "ingrowth", h.as_str(), "--history", "--count", "n"];
    a.extend(HISTORY_FLAGS);
    a.extend(["--predictors", "ba"]);
    let out = s.run(&a);
    assert_eq!(out.status.code(), Some(2), "{}", stderr(&out));
    assert!(stderr(&out).contains("--count"), "{}", stderr(&out));
}

#[test]
fn plot_without_one_expansion_factor_has_no_area() {
    // Plot 7 holds trees of two expansion factors (a nested plot): 1/expansion is no area.
    let s = Sandbox::new();
    let h = s.write(
        "h.csv",
        "PLOT,TREE_NO,MEAS_YR,DBH_IN,STATUS,TPA\n7,1,1990,10,1,5\n7,2,1990,6,1,20\n7,1,1995,11,1,5\n7,2,1995,7,1,20\n7,3,1995,5.5,1,20\n",
    );
    let h = h.display().to_string();
    let mut a = vec!["fit", "ingrowth", h.as_str(), "--history"];
    a.extend(HISTORY_FLAGS);
    a.extend(["--predictors", "ba"]);
    let out = s.run(&a);
    assert_eq!(out.status.code(), Some(2), "{}", stderr(&out));
    assert!(
        stderr(&out).contains("plot 7") && stderr(&out).contains("expansion"),
        "{}",
        stderr(&out)
    );
}
