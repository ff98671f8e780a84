//! Data screening: suspicious records are counted and listed with their lines, and left out
//! only with --drop-flagged (docs/histories.md, "Screening").

use crate::common::{stderr, stdout, Sandbox};

/// Plot A, metric, 50 trees/ha each, measured in 2000, 2005 and 2010. Trees 1–10 grow
/// 0.7–1.3 cm in 5 years. Tree 11 has a transposed diameter in 2005 (14.6 → 41.6 → 15.5);
/// tree 12 shrinks from 20.0 to 19.0; tree 13 is recorded dead in 2005 and alive in 2010;
/// tree 14 is first recorded in 2010 at 40 cm, far above the smallest diameter (10 cm);
/// tree 15 is ordinary ingrowth (10.5 cm).
const SUSPICIOUS: &str = r"stand,tree,year,status,dbh,expansion,spp
A,1,2000,alive,10.0,50,x
A,2,2000,alive,12.0,50,x
A,3,2000,alive,14.0,50,x
A,4,2000,alive,16.0,50,x
A,5,2000,alive,18.0,50,x
A,6,2000,alive,20.0,50,x
A,7,2000,alive,22.0,50,x
A,8,2000,alive,24.0,50,x
A,9,2000,alive,26.0,50,x
A,10,2000,alive,28.0,50,x
A,11,2000,alive,14.6,50,x
A,12,2000,alive,20.0,50,x
A,13,2000,alive,18.0,50,x
A,1,2005,alive,10.8,50,x
A,2,2005,alive,13.0,50,x
A,3,2005,alive,15.2,50,x
A,4,2005,alive,16.9,50,x
A,5,2005,alive,19.1,50,x
A,6,2005,alive,21.0,50,x
A,7,2005,alive,22.7,50,x
A,8,2005,alive,25.3,50,x
A,9,2005,alive,27.0,50,x
A,10,2005,alive,28.9,50,x
A,11,2005,alive,41.6,50,x
A,12,2005,alive,19.0,50,x
A,13,2005,dead,,50,x
A,1,2010,alive,11.8,50,x
A,2,2010,alive,13.9,50,x
A,3,2010,alive,16.3,50,x
A,4,2010,alive,18.1,50,x
A,5,2010,alive,19.9,50,x
A,6,2010,alive,22.0,50,x
A,7,2010,alive,23.7,50,x
A,8,2010,alive,26.2,50,x
A,9,2010,alive,28.1,50,x
A,10,2010,alive,29.9,50,x
A,11,2010,alive,15.5,50,x
A,12,2010,alive,19.8,50,x
A,13,2010,alive,25.0,50,x
A,14,2010,alive,40.0,50,x
A,15,2010,alive,10.5,50,x
";

/// Derived analytically (and checked with Python's statistics module): the 24 annual
/// increments of the trees alive at both ends are 0.16, 0.2, 0.24, 0.18, 0.22, 0.2, 0.14,
/// 0.26, 0.2, 0.18 (2000–05, trees 1–10), 5.4 (tree 11), −0.2 (tree 12), then 0.2, 0.18, 0.22,
/// 0.24, 0.16, 0.2, 0.2, 0.18, 0.22, 0.2 (2005–10), −5.22 (tree 11), 0.16 (tree 12): median
/// 0.2, MAD 0.02. Robust z = 0.6745 (a − 0.2) / 0.02: tree 11 in 2000 (line 12) 175.4, tree
/// 12 in 2000 (line 13) −13.5, tree 11 in 2005 (line 25) −182.8, all beyond 3.5; the next
/// largest, 0.26 and 0.14, give ±2.0. Tree 14's implied growth from the 10 cm threshold,
/// (40 − 10)/5 = 6 cm a year, has z 195.6.
const EXPECTED: [(u64, &str, &str); 7] = [
    (12, "", "increment_outlier"),
    (13, "", "increment_outlier"),
    (13, "", "diameter_shrinks"),
    (25, "", "increment_outlier"),
    (25, "", "diameter_shrinks"),
    (27, "40", "alive_after_death"),
    (41, "", "new_tree_far_above_threshold"),
];

fn fit(sb: &Sandbox, kind: &str, extra: &[&str]) -> serde_json::Value {
    let path = sb.write("s.csv", SUSPICIOUS);
    let mut a = vec![
        "fit",
        kind,
        path.to_str().unwrap(),
        "--history",
        "-p",
        "dbh",
    ];
    if kind == "survival" {
        a.extend(["--interval", "annualized"]);
    }
    a.extend(extra);
    a.extend(["--format", "json"]);
    let out = sb.run(&a);
    assert!(out.status.success(), "{}", stderr(&out));
    serde_json::from_str(&stdout(&out)).unwrap()
}

#[test]
fn suspicious_records_are_listed_with_lines_and_reasons() {
    let sb = Sandbox::new();
    let v = fit(&sb, "survival", &["--screen", "flags.csv"]);
    let listing = std::fs::read_to_string(sb.path("flags.csv")).unwrap();
    let got: Vec<(u64, String, String)> = listing
        .lines()
        .skip(1)
        .map(|l| {
            let f: Vec<&str> = l.splitn(7, ',').collect();
            (f[0].parse().unwrap(), f[1].to_string(), f[4].to_string())
        })
        .collect();
    let want: Vec<(u64, String, String)> = EXPECTED
        .iter()
        .map(|(l, o, r)| (*l, o.to_string(), r.to_string()))
        .collect();
    assert_eq!(got, want, "{listing}");
    // Survival records flagged: lines 12, 13, 25 and the interval of tree 13 that ends in
    // its death (opened on line 14); tree 14 has no interval yet. Kept without --drop-flagged.
    assert_eq!(v["screening"]["flagged_records"], 4);
    assert_eq!(v["screening"]["left_out"], 0);
    assert_eq!(v["records"], 25); // 13 trees alive in 2000 + 12 alive in 2005
    let warnings = v["warnings"].to_string();
    assert!(
        warnings.contains("screening flagged 4 records"),
        "{warnings}"
    );
}

#[test]
fn drop_flagged_leaves_them_out_and_says_so_in_the_model_file() {
    let sb = Sandbox::new();
    // Growth records: trees 1–12 alive at both ends of both periods = 24, of which 2 have a
    // basal-area increment ≤ 0 (tree 12 in 2000–05, tree 11 in 2005–10) → 22 fitted.
    let kept = fit(&sb, "growth", &[]);
    assert_eq!(kept["records"], 22);
    assert_eq!(kept["screening"]["flagged_records"], 3);
    // Dropping the 3 flagged records (lines 12, 13, 25) leaves 21, none with BAI ≤ 0.
    let dropped = fit(&sb, "growth", &["--drop-flagged", "--out", "m.toml"]);
    assert_eq!(dropped["records"], 21);
    assert_eq!(dropped["excluded"]["non_positive_increment"], 0);
    assert_eq!(dropped["screening"]["left_out"], 3);
    let model = std::fs::read_to_string(sb.path("m.toml")).unwrap();
    assert!(model.contains("flagged_records = 3"), "{model}");
    assert!(model.contains("flagged_left_out = true"), "{model}");
    let warnings = dropped["warnings"].to_string();
    assert!(
        warnings.contains("3 flagged records were left out (--drop-flagged)"),
        "{warnings}"
    );
}

#[test]
fn a_tree_counted_dead_when_missing_and_seen_again_is_flagged() {
    // Tree 2 is alive in 2000 (line 3), absent in 2005, alive in 2010 (line 7). With
    // --missing-as dead its 2000–05 interval ends dead, which the 2010 record contradicts.
    let sb = Sandbox::new();
    let path = sb.write(
        "m.csv",
        "stand,tree,year,status,dbh,expansion\nA,1,2000,alive,10,50\nA,2,2000,alive,12,50\n\
         A,1,2005,alive,11,50\nA,3,2005,alive,10,50\nA,1,2010,alive,12,50\nA,2,2010,alive,14,50\n\
         A,3,2010,alive,11,50\n",
    );
    let out = sb.run(&[
        "fit",
        "growth",
        path.to_str().unwrap(),
        "--history",
        "--missing-as",
        "dead",
        "-p",
        "dbh",
        "--screen",
        "f.csv",
    ]);
    assert!(out.status.success(), "{}", stderr(&out));
    let listing = std::fs::read_to_string(sb.path("f.csv")).unwrap();
    let row = listing.lines().nth(1).unwrap_or_default();
    assert!(
        row.starts_with("3,7,A,2,alive_after_death,2010,"),
        "{listing}"
    );
    assert!(stdout(&out).contains("counted dead"), "{}", stdout(&out));
}
