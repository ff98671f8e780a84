//! Pairing rules: derived covariates per plot occasion by hand, ingrowth against the
//! simulation script's count, dates, and trees missing at a remeasurement.

use std::collections::BTreeMap;

use stemcast::data::{read_history, ColumnNames, HistorySpec, StatusCodes, Units};

use super::fixture;
use crate::common::{stderr, stdout, Sandbox};

/// Plot 7, imperial, 5 trees per acre each. 1990: trees of 10, 12, 14, 8 and 12 in; by 1995
/// tree 3 died and tree 4 was cut; tree 6 grew in; the third measurement is a date.
const SMALL: &str = "PLOT,TREE_NO,MEAS_YR,SPP,DBH_IN,STATUS,TPA
7,1,1990,DF,10.0,1,5
7,2,1990,DF,12.0,1,5
7,3,1990,WH,14.0,1,5
7,4,1990,RA,8.0,1,5
7,5,1990,WH,12.0,1,5
7,1,1995,DF,11.0,1,5
7,2,1995,DF,13.0,1,5
7,3,1995,WH,,2,5
7,4,1995,RA,,3,5
7,5,1995,WH,12.5,1,5
7,6,1995,DF,5.5,1,5
7,1,2001-07-02,DF,12.0,1,5
7,2,2001-07-02,DF,14.0,1,5
7,5,2001-07-02,WH,13.0,1,5
7,6,2001-07-02,DF,6.5,1,5
";

const FLAGS: [&str; 16] = [
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
];

/// The interval table written by `stemcast intervals`, one map per row.
fn intervals(sb: &Sandbox, history: &str, extra: &[&str]) -> Vec<BTreeMap<String, String>> {
    let path = sb.write("h.csv", history);
    let mut a = vec!["intervals", path.to_str().unwrap(), "--out", "iv.csv"];
    a.extend(FLAGS);
    a.extend(extra);
    let out = sb.run(&a);
    assert!(out.status.success(), "{}", stderr(&out));
    let text = std::fs::read_to_string(sb.path("iv.csv")).unwrap();
    let mut lines = text.lines();
    let header: Vec<&str> = lines.next().unwrap().split(',').collect();
    lines
        .map(|l| {
            header
                .iter()
                .zip(l.split(','))
                .map(|(h, v)| (h.to_string(), v.to_string()))
                .collect()
        })
        .collect()
}

fn num(row: &BTreeMap<String, String>, key: &str) -> f64 {
    row[key].parse().unwrap()
}

#[test]
fn covariates_of_a_plot_occasion_equal_a_hand_computation() {
    let sb = Sandbox::new();
    let rows = intervals(&sb, SMALL, &[]);
    let first: Vec<_> = rows.iter().filter(|r| r["occasion"] == "7@1990").collect();
    assert_eq!(first.len(), 5);
    // Derived by hand (imperial: g = π/576 · d² ft², e = 5 per acre) from every tree alive
    // in 1990, including tree 3 (dead by 1995) and tree 4 (cut by 1995):
    //   Σd² = 100 + 144 + 196 + 64 + 144 = 648; stems = 5 · 5 = 25;
    //   ba = π/576 · 5 · 648 = 5.625π = 17.671458676442587 ft²/acre;
    //   qmd = √(5 · 648 / 25) = √129.6 = 11.384199576606166 in;
    //   bal(14) = 0; bal(12) = π/576 · 5 · 196 = 5.345070834232634 (the other 12 in tree is
    //   not larger); bal(10) = π/576 · 5 · (196 + 144 + 144) = 13.199052468207118;
    //   bal(8) = π/576 · 5 · (196 + 144 + 144 + 100) = 15.926129424448257;
    //   rel_dbh = d / qmd.
    let qmd = 129.6f64.sqrt();
    let bal = BTreeMap::from([
        ("1", 13.199052468207118),
        ("2", 5.345070834232634),
        ("3", 0.0),
        ("4", 15.926129424448257),
        ("5", 5.345070834232634),
    ]);
    for r in &first {
        let close = |got: f64, want: f64| (got - want).abs() <= 1e-12 * want.abs().max(1.0);
        assert!(close(num(r, "ba"), 5.625 * std::f64::consts::PI));
        assert!(close(num(r, "qmd"), 11.384199576606166));
        assert!(close(num(r, "stems"), 25.0));
        assert!(close(num(r, "bal"), bal[r["TREE_NO"].as_str()]), "{r:?}");
        assert!(close(num(r, "rel_dbh"), num(r, "DBH_IN") / qmd));
    }
    let fates: Vec<(&str, &str)> = first
        .iter()
        .map(|r| (r["TREE_NO"].as_str(), r["fate"].as_str()))
        .collect();
    assert_eq!(
        fates,
        [
            ("1", "alive"),
            ("2", "alive"),
            ("3", "dead"),
            ("4", "cut"),
            ("5", "alive")
        ]
    );
    // The second period ends on 2 July 2001: day 183 of a 365-day year, so t2 = 2001 +
    // 182/365 and the interval 6.498630136986... years (derived analytically).
    let second: Vec<_> = rows.iter().filter(|r| r["occasion"] == "7@1995").collect();
    assert_eq!(second.len(), 4);
    for r in &second {
        assert_eq!(num(r, "t2"), 2001.0 + 182.0 / 365.0);
        assert_eq!(num(r, "years"), 2001.0 + 182.0 / 365.0 - 1995.0);
    }
    // Tree 6 is first recorded in 1995 (5.5 in, the smallest diameter, so at the default
    // threshold): ingrowth of 1990–1995, and from then on an ordinary tree.
    assert!(second
        .iter()
        .any(|r| r["TREE_NO"] == "6" && r["dbh2"] == "6.5"));
}

#[test]
fn ingrowth_per_plot_and_period_equals_the_scripts_count() {
    // Check values: ingrowth.csv, counted by simulate.py from its own simulation.
    let spec = HistorySpec {
        names: ColumnNames {
            stand: "PLOT".into(),
            tree: "TREE_NO".into(),
            dbh: "DBH_IN".into(),
            status: "STATUS".into(),
            expansion: "TPA".into(),
            ..ColumnNames::default()
        },
        time: "MEAS_YR".into(),
        status_codes: Some("1=alive,2=dead,3=cut".parse::<StatusCodes>().unwrap()),
        units: Units::Imperial,
        ..HistorySpec::default()
    };
    let h = read_history(fixture("history.csv").as_ref(), &spec).unwrap();
    let p = h.pair().unwrap();
    let want = std::fs::read_to_string(fixture("ingrowth.csv")).unwrap();
    let got: Vec<String> = p
        .ingrowth
        .periods
        .iter()
        .map(|q| format!("{},{},{},{}", q.plot, q.t1, q.t2, q.count))
        .collect();
    assert_eq!(got, want.lines().skip(1).collect::<Vec<_>>());
    // The trees themselves: one row each, with the history's columns (species), in periods
    // whose counts add up; every plot has one expansion factor, so areas are 1/TPA acres.
    let total: usize = p.ingrowth.periods.iter().map(|q| q.count).sum();
    assert_eq!(p.ingrowth.trees.len(), total);
    assert_eq!(p.ingrowth.tree_period.len(), total);
    assert!(p.ingrowth.trees.column("SPP").is_some());
    assert_eq!(p.ingrowth.threshold_dbh, 5.0); // the smallest DBH_IN in history.csv
    for q in &p.ingrowth.periods {
        let area = q.area.expect("fixed-area plots");
        assert!(
            [1.0 / 20.0, 1.0 / 10.0, 1.0 / 5.0].contains(&area),
            "{area}"
        );
    }
    // simulate.py lists dead trees again on plots 103, 108 and 111: ignored, not paired.
    assert!(p.counts.ignored_rows > 0);
    assert_eq!(p.counts.intervals, 740);
}

/// SMALL without tree 5 at the third measurement.
fn missing_tree_5() -> String {
    SMALL.replace("7,5,2001-07-02,WH,13.0,1,5\n", "")
}

#[test]
fn a_tree_missing_at_a_remeasurement_is_an_error_listing_it() {
    let sb = Sandbox::new();
    let path = sb.write("h.csv", &missing_tree_5());
    let mut a = vec!["intervals", path.to_str().unwrap(), "--out", "iv.csv"];
    a.extend(FLAGS);
    let out = sb.run(&a);
    assert_eq!(out.status.code(), Some(2));
    let err = stderr(&out);
    // Tree 5 is alive on line 11 (1995) and absent from 2001-07-02 = 2001.4986301369863.
    assert!(
        err.contains(
            "plot \"7\", tree \"5\" (alive on line 11 at 1995, no record at 2001.4986301369863)"
        ),
        "{err}"
    );
    assert!(err.contains("--missing-as"), "{err}");
    assert!(!sb.path("iv.csv").exists(), "nothing written on error");
}

#[test]
fn missing_as_dead_or_drop_decides_the_fate() {
    let sb = Sandbox::new();
    let fate_of_5 = |rows: &[BTreeMap<String, String>]| {
        rows.iter()
            .find(|r| r["TREE_NO"] == "5" && r["occasion"] == "7@1995")
            .map(|r| r["fate"].clone())
    };
    let dead = intervals(&sb, &missing_tree_5(), &["--missing-as", "dead"]);
    assert_eq!(fate_of_5(&dead).as_deref(), Some("dead"));
    let dropped = intervals(&sb, &missing_tree_5(), &["--missing-as", "drop"]);
    assert_eq!(fate_of_5(&dropped).as_deref(), Some("missing"));
    // A fit leaves the dropped interval out like a cut tree (censored). Growth records: trees
    // 1, 2, 5 alive in 1995 and trees 1, 2, 6 alive in 2001 = 6; censored: tree 4 (cut) and
    // tree 5 (missing) = 2; dead: tree 3.
    let path = sb.write("h.csv", &missing_tree_5());
    let mut a = vec!["fit", "growth", path.to_str().unwrap(), "--history"];
    a.extend(FLAGS);
    a.extend(["--missing-as", "drop", "-p", "dbh", "--format", "json"]);
    let out = sb.run(&a);
    assert!(out.status.success(), "{}", stderr(&out));
    let v: serde_json::Value = serde_json::from_str(&stdout(&out)).unwrap();
    assert_eq!(v["records"].as_u64(), Some(6));
    assert_eq!(v["excluded"]["censored"].as_u64(), Some(2));
    assert_eq!(v["excluded"]["dead"].as_u64(), Some(1));
}
