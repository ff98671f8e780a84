//! Bad input: repeated trees, status codes that are not mapped, flags that do not fit.

use super::{fixture, HISTORY};
use crate::common::{stderr, Sandbox};

fn fails(sb: &Sandbox, args: &[&str]) -> String {
    let out = sb.run(args);
    assert_eq!(out.status.code(), Some(2), "{args:?}");
    stderr(&out)
}

#[test]
fn a_pair_file_holding_two_periods_under_one_stand_is_refused_with_both_lines() {
    // pairs.csv read with --stand PLOT (the plot, not the plot-period id): plot 101, tree 1
    // is on line 2 (period from 1993) and again on line 39 (period from 1996), found with
    // awk -F, 'NR>1{k=$2","$3; if(k in s){print s[k], NR; exit} s[k]=NR}' pairs.csv.
    let sb = Sandbox::new();
    let p = fixture("pairs.csv");
    let err = fails(
        &sb,
        &[
            "fit",
            "survival",
            &p,
            "--stand",
            "PLOT",
            "--tree",
            "TREE_NO",
            "--dbh",
            "DBH1_IN",
            "--status",
            "STATUS2",
            "--status-codes",
            "1=alive,2=dead,3=cut",
            "--expansion",
            "TPA",
            "--years-col",
            "MEAS_INT",
            "--interval",
            "annualized",
            "-p",
            "dbh, bal",
        ],
    );
    assert!(
        err.contains(
            "pairs.csv: line 39: stand \"101\", tree \"1\" appears again (first on line 2)"
        ),
        "{err}"
    );
    assert!(
        err.contains("--history") && err.contains("stand-period id"),
        "{err}"
    );
}

#[test]
fn a_history_measuring_a_tree_twice_in_a_year_is_refused_with_both_lines() {
    let sb = Sandbox::new();
    let h = sb.write(
        "h.csv",
        "stand,tree,year,status,dbh,expansion\nA,1,2000,alive,10,50\nA,2,2000,alive,12,50\n\
         A,1,2005,alive,11,50\nA,1,2005,alive,11.2,50\n",
    );
    let err = fails(&sb, &["intervals", h.to_str().unwrap(), "--out", "o.csv"]);
    assert!(
        err.contains("line 5: plot \"A\", tree \"1\" is measured at 2005 again (first on line 4)"),
        "{err}"
    );
}

#[test]
fn unmapped_status_codes_name_line_and_value() {
    let sb = Sandbox::new();
    // Line 4 holds the code 9, which the map does not list.
    let h = sb.write(
        "h.csv",
        "PLOT,TREE,YR,ST,D,E\n1,1,2000,1,10,50\n1,2,2000,1,12,50\n1,1,2005,9,,50\n1,2,2005,1,13,50\n",
    );
    let base = [
        "intervals",
        h.to_str().unwrap(),
        "--out",
        "o.csv",
        "--stand",
        "PLOT",
        "--tree",
        "TREE",
        "--time-col",
        "YR",
        "--status",
        "ST",
        "--dbh",
        "D",
        "--expansion",
        "E",
    ];
    let mut a = base.to_vec();
    a.extend(["--status-codes", "1=alive,2=dead,3=cut"]);
    let err = fails(&sb, &a);
    assert!(
        err.contains("line 4, column \"ST\": \"9\" is not one of the status codes given (--status-codes 1=alive, 2=dead, 3=cut)"),
        "{err}"
    );
    // Without a map, agency codes are refused with the hint to map them.
    let h2 = sb.write(
        "h2.csv",
        "PLOT,TREE,YR,ST,D,E\n1,1,2000,1,10,50\n1,1,2005,2,,50\n",
    );
    let mut b = base.to_vec();
    b[1] = h2.to_str().unwrap();
    let err = fails(&sb, &b);
    assert!(
        err.contains("line 3, column \"ST\": \"2\" is not a tree status"),
        "{err}"
    );
    assert!(err.contains("--status-codes"), "{err}");
    // A malformed map is a usage error.
    let mut c = base.to_vec();
    c.extend(["--status-codes", "1=alive,2=asleep"]);
    assert!(fails(&sb, &c).contains("\"asleep\" is not a meaning"));
}

#[test]
fn status_codes_map_pair_files_too() {
    let sb = Sandbox::new();
    let p = sb.write(
        "p.csv",
        "stand,tree,dbh,alive\nA,1,10,L\nA,2,12,D\nA,3,14,L\nA,4,9,X\nA,5,11,H\n",
    );
    let err = fails(
        &sb,
        &[
            "fit",
            "survival",
            p.to_str().unwrap(),
            "-p",
            "dbh",
            "--status-codes",
            "L=alive,D=dead,H=cut",
        ],
    );
    assert!(
        err.contains("line 5, column \"alive\": \"X\" is not one of the status codes given"),
        "{err}"
    );
}

#[test]
fn history_flags_need_history_and_history_computes_intervals() {
    let sb = Sandbox::new();
    let h = fixture("history.csv");
    let mut a = vec!["fit", "survival", h.as_str()];
    a.extend(HISTORY);
    a.extend(["--years", "5", "-p", "dbh"]);
    assert!(fails(&sb, &a).contains("--history computes each interval"));
    let p = fixture("pairs.csv");
    let err = fails(
        &sb,
        &["fit", "survival", &p, "--time-col", "YEAR", "-p", "dbh"],
    );
    assert!(
        err.contains("--time-col applies to a measurement history"),
        "{err}"
    );
}
