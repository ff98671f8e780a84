//! Sizes and physical limits (docs/scenario.md#limits): bounded before anything is allocated
//! or looped over, and a projection that runs away stops with a named runtime error.

use crate::project_common::*;
use stemcast::project::run_scenario;
use stemcast::scenario::Scenario;

const COHORT: &str =
    "stems_per_ha = 500\nrecords = 4\ndbh = { distribution = \"fixed\", value = 10 }";

fn refused(d: &Dir, text: &str) -> String {
    let p = d.write("sc.toml", text);
    Scenario::read(&p).map(|_| ()).unwrap_err().to_string()
}

fn dir_with(growth: &str) -> Dir {
    let d = Dir::new();
    d.write("s.toml", &constant_survival(0.9, 5));
    d.write("g.toml", growth);
    d
}

#[test]
fn replicates_horizon_and_area_are_bounded() {
    let d = dir_with(&linear_growth(0.3, 0.0, 0.0, 5));
    let base = scenario_toml(20, 5, 7, "", COHORT);
    // 10⁹ replicates × 5 output years × 201 classes × 8 bytes = 7,487 GiB (derived
    // analytically), above the budget; i64::MAX is above the replicate limit.
    for r in ["1000000000", "9223372036854775807"] {
        let e = refused(
            &d,
            &base.replace("replicates = 7", &format!("replicates = {r}")),
        );
        assert!(e.contains("replicates") && e.contains("limit"), "{e}");
    }
    let e = refused(&d, &base.replace("replicates = 7", "replicates = 900000"));
    assert!(e.contains("GiB") && e.contains("memory budget"), "{e}");
    let e = refused(
        &d,
        &base
            .replace("horizon_years = 20", "horizon_years = 1e308")
            .replace("step_years = 5", "step_years = 1e308"),
    );
    assert!(
        e.contains("horizon_years") || e.contains("step_years"),
        "{e}"
    );
    let e = refused(&d, &format!("{base}area_ha = 1e308\n"));
    assert!(e.contains("cohort.area_ha") && e.contains("limit"), "{e}");
}

#[test]
fn a_tiny_model_period_is_refused_not_looped_over() {
    let d = dir_with(&linear_growth(0.3, 0.0, 0.0, 5));
    d.write(
        "s.toml",
        &constant_survival(0.9, 5).replace("period_years = 5", "period_years = 1e-300"),
    );
    let base = scenario_toml(20, 5, 7, "", COHORT);
    let e = refused(&d, &base);
    assert!(e.contains("sub-steps") || e.contains("period"), "{e}");
}

#[test]
fn implausible_tree_list_values_are_refused_with_their_cell() {
    let d = dir_with(&linear_growth(0.3, 0.0, 0.0, 5));
    for (row, col) in [("1,1e12,100", "dbh"), ("1,20,1e300", "expansion")] {
        d.write("t.csv", &format!("tree,dbh,expansion\n{row}\n"));
        let e = refused(&d, &scenario_toml(20, 5, 7, "", "trees = \"t.csv\""));
        assert!(
            e.contains("t.csv") && e.contains("line 2") && e.contains(col),
            "{e}"
        );
    }
}

#[test]
fn a_runaway_growth_model_stops_naming_model_stand_year_and_replicate() {
    // 1e300 cm per year: after the first 5-year step the diameters are 5e300 cm (derived
    // analytically), far above the 1,000 cm limit.
    let d = dir_with(&linear_growth(1e300, 0.0, 0.0, 5));
    let s = scenario_in(&d, &scenario_toml(20, 5, 3, "process = true", COHORT));
    let e = run_scenario(&s, &expected()).unwrap_err();
    assert_eq!(e.exit_code(), 1);
    let m = e.to_string();
    assert!(
        m.contains("g.toml") && m.contains("year 5") && m.contains("expected trajectory"),
        "{m}"
    );
    let m = run_scenario(&s, &monte_carlo(1)).unwrap_err().to_string();
    assert!(m.contains("replicate 0") && m.contains("stand"), "{m}");
    // An exploding exponential model: growth 0.5·dbh per year doubles… until above the limit
    // (10·1.5^k cm passes 1,000 cm after 12 years; derived analytically).
    let d = dir_with(&linear_growth(0.0, 0.5, 0.0, 1));
    let s = scenario_in(&d, &scenario_toml(40, 5, 1, "", COHORT));
    let m = run_scenario(&s, &expected()).unwrap_err().to_string();
    assert!(m.contains("year 15") && m.contains("limit 1000 cm"), "{m}");
}
