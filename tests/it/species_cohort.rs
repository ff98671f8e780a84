//! Mixed-species generated cohorts (issue 12, item 2): `[[cohort.components]]`, checked on
//! uniform diameter distributions whose quantiles are worked out by hand.

use crate::project_common::*;
use std::f64::consts::PI;
use stemcast::project::{run_scenario, Metric};

const COMPONENTS: &str =
    "[[cohort.components]]\nspecies = \"DF\"\nstems_per_ha = 600\nrecords = 3\n\
    dbh = { distribution = \"uniform\", min = 0.0, max = 30.0 }\n\n\
    [[cohort.components]]\nspecies = \"RA\"\nstems_per_ha = 300\nrecords = 2\n\
    dbh = { distribution = \"uniform\", min = 10.0, max = 14.0 }\n";

fn dir() -> Dir {
    let d = Dir::new();
    d.write("s.toml", &constant_survival(0.9, 5));
    d.write("g.toml", &linear_growth(0.3, 0.0, 0.0, 5));
    d
}

#[test]
fn components_make_one_stand_with_a_species_column() {
    // Uniform quantiles are the midpoints min + (i − ½)(max − min)/n (derived analytically):
    // DF 5, 15, 25 cm at 200 stems/ha each; RA 11, 13 cm at 150 stems/ha each.
    let d = dir();
    let text = scenario_toml(10, 5, 4, "", "") + COMPONENTS;
    let s = scenario_in(&d, &text);
    assert_eq!(s.trees.dbh_cm, vec![5.0, 15.0, 25.0, 11.0, 13.0]);
    let r = run_scenario(&s, &expected()).unwrap();
    let y0 = |m: Metric| r.years[0].get(m).mean.unwrap();
    assert!(close(y0(Metric::StemsPerHa), 900.0, 1e-12, 0.0));
    // G = π/40000 · (200 · (25 + 225 + 625) + 150 · (121 + 169)) (derived by hand).
    let g = PI / 40000.0 * (200.0 * 875.0 + 150.0 * 290.0);
    assert!(close(y0(Metric::BasalArea), g, 1e-12, 0.0));

    // Removing RA at year 0 leaves the DF component alone: 600 stems/ha.
    let text = text + "\n[[actions]]\nyear = 0\nremove = { species = [\"RA\"] }\n";
    let r = run_scenario(&scenario_in(&d, &text), &expected()).unwrap();
    assert!(close(
        r.years[0].get(Metric::StemsPerHa).mean.unwrap(),
        600.0,
        1e-12,
        0.0
    ));
}

#[test]
fn components_refuse_the_single_cohort_keys() {
    let d = dir();
    let text = scenario_toml(10, 5, 4, "", "stems_per_ha = 900") + COMPONENTS;
    let p = d.write("sc.toml", &text);
    let e = stemcast::scenario::Scenario::read(&p)
        .unwrap_err()
        .to_string();
    assert!(e.contains("cohort.stems_per_ha"), "{e}");
    assert!(e.contains("each component gives its own"), "{e}");
    let text = scenario_toml(10, 5, 4, "", "") + &COMPONENTS.replace("records = 2", "records = 0");
    let p = d.write("sc.toml", &text);
    let e = stemcast::scenario::Scenario::read(&p)
        .unwrap_err()
        .to_string();
    assert!(e.contains("cohort.components[1].records"), "{e}");
}
