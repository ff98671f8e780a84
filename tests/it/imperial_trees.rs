//! Tree lists in inches and trees per acre, with an agency's column names, project exactly as
//! their metric conversion does (docs/scenario.md#cohort). Conversion constants are exact by
//! definition: 1 in = 2.54 cm, 1 acre = 0.40468564224 ha (international yard and pound, 1959).

use crate::project_common::{
    close, expected, monte_carlo, scenario_in, scenario_toml, w2_growth, w2_survival, Dir,
};
use stemcast::project::{run_scenario, Metric};

const HA_PER_ACRE: f64 = 0.404_685_642_24;

fn imperial_and_metric(d: &Dir) -> (String, String) {
    let mut imperial = String::from("PLOT,TREE_NO,DBH_IN,TPA\n");
    let mut metric = String::from("stand,tree,dbh,expansion\n");
    for i in 0..60 {
        let inches = 2.0 + 0.37 * f64::from(i % 29);
        let tpa = 6.0 + f64::from(i % 5);
        imperial.push_str(&format!("P7,{i},{inches:?},{tpa:?}\n"));
        metric.push_str(&format!(
            "P7,{i},{:?},{:?}\n",
            inches * 2.54,
            tpa / HA_PER_ACRE
        ));
    }
    d.write("s.toml", &w2_survival());
    d.write("g.toml", &w2_growth());
    d.write("imperial.csv", &imperial);
    d.write("metric.csv", &metric);
    (
        scenario_toml(
            30,
            5,
            200,
            "",
            "trees = \"imperial.csv\"\nunits = \"imperial\"\ncolumns = { stand = \"PLOT\", tree = \"TREE_NO\", dbh = \"DBH_IN\", expansion = \"TPA\" }",
        ),
        scenario_toml(30, 5, 200, "", "trees = \"metric.csv\""),
    )
}

#[test]
fn an_inch_and_tpa_tree_list_projects_as_its_metric_conversion() {
    let d = Dir::new();
    let (imperial, metric) = imperial_and_metric(&d);
    let a = scenario_in(&d, &imperial);
    let b = scenario_in(&d, &metric);
    for options in [expected(), monte_carlo(2)] {
        let ra = run_scenario(&a, &options).expect("imperial projects");
        let rb = run_scenario(&b, &options).expect("metric projects");
        assert_eq!(ra.years.len(), rb.years.len());
        for (ya, yb) in ra.years.iter().zip(&rb.years) {
            for m in [
                Metric::StemsPerHa,
                Metric::BasalArea,
                Metric::Qmd,
                Metric::Sdi,
            ] {
                let (x, y) = (ya.get(m).mean, yb.get(m).mean);
                let (x, y) = (x.expect("value"), y.expect("value"));
                assert!(
                    close(x, y, 1e-9, 1e-12),
                    "year {} {m:?}: {x} vs {y}",
                    ya.year
                );
            }
        }
    }
}

#[test]
fn units_and_columns_are_checked() {
    let d = Dir::new();
    let (imperial, _) = imperial_and_metric(&d);
    let p = d.write(
        "bad.toml",
        &imperial.replace("\"imperial\"\ncolumns", "\"furlongs\"\ncolumns"),
    );
    let e = stemcast::scenario::Scenario::read(&p).expect_err("unknown units");
    assert!(e.to_string().contains("cohort.units"), "{e}");
    let p = d.write(
        "bad2.toml",
        &imperial.replace("DBH_IN\", expansion", "DIAM\", expansion"),
    );
    let e = stemcast::scenario::Scenario::read(&p).expect_err("missing column");
    assert!(e.to_string().contains("DIAM"), "{e}");
    let p = d.write(
        "bad3.toml",
        &imperial.replace("stand = \"PLOT\"", "plot = \"PLOT\""),
    );
    let e = stemcast::scenario::Scenario::read(&p).expect_err("unknown key");
    assert!(e.to_string().contains("plot"), "{e}");
}
