//! Output files (`docs/outputs.md`): names, columns, empty fields, atomic writing; and `check`.

use crate::project_common::*;
use stemcast::project::run_scenario;
use stemcast::report::write_projection;

const COHORT: &str = "stems_per_ha = 1200\nrecords = 30\ndbh = { distribution = \"lognormal\", median = 9, gsd = 1.5 }\nattributes = { treatment = \"released\", site_index = 21.5 }";

fn scenario(d: &Dir) -> stemcast::scenario::Scenario {
    d.write(
        "s.toml",
        &(w2_survival() + "[fit.ranges]\ndbh = [2.0, 18.0]\nbal = [0.0, 40.0]\n"),
    );
    d.write("g.toml", &w2_growth());
    let text =
        scenario_toml(20, 5, 12, "", COHORT).replace("seed = 42", "seed = 42\nstart_age_years = 8");
    scenario_in(d, &text)
}

fn lines(path: &std::path::Path) -> Vec<String> {
    std::fs::read_to_string(path)
        .unwrap()
        .lines()
        .map(str::to_string)
        .collect()
}

#[test]
fn expected_driver_writes_the_design_files() {
    let d = Dir::new();
    let s = scenario(&d);
    let r = run_scenario(&s, &expected()).unwrap();
    let out = d.path().join("out");
    let written = write_projection(&out, &r).unwrap();
    // summary, classes, harvest, run.json, survival.svg, stems.svg, report.html, trees.csv.
    assert_eq!(written.len(), 8);
    let summary = lines(&out.join("summary.csv"));
    assert_eq!(
        summary[0],
        "scenario,driver,year,age,metric,mean,sd,p05,p50,p95"
    );
    assert_eq!(summary.len(), 1 + 5 * 7);
    assert_eq!(summary[1], "t,expected,0,8,stems_per_ha,1200,,,,");
    assert!(summary
        .iter()
        .any(|l| l.starts_with("t,expected,20,28,qmd_cm,")));
    assert!(summary
        .iter()
        .any(|l| l == "t,expected,20,28,removed_stems_per_ha,0,,,,"));
    let classes = lines(&out.join("classes.csv"));
    assert_eq!(
        classes[0],
        "scenario,driver,year,dbh_class_cm,stems_per_ha_mean,p05,p95"
    );
    let trees = lines(&out.join("trees.csv"));
    assert_eq!(
        trees[0],
        "stand,tree,year,dbh_cm,cumulative_survival,stems_per_ha"
    );
    assert_eq!(trees.len(), 1 + 30 * 5);
    let run: serde_json::Value =
        serde_json::from_str(&std::fs::read_to_string(out.join("run.json")).unwrap()).unwrap();
    assert_eq!(run["seed"], 42);
    assert_eq!(run["inputs"].as_array().unwrap().len(), 3);
    assert_eq!(run["inputs"][0]["sha256"].as_str().unwrap().len(), 64);
    assert!(run["warnings"][0]
        .as_str()
        .unwrap()
        .contains("outside its fitting range"));
    let svg = std::fs::read_to_string(out.join("survival.svg")).unwrap();
    assert!(svg.starts_with("<svg"));
    // No temporary files are left behind.
    let names: Vec<String> = std::fs::read_dir(&out)
        .unwrap()
        .map(|e| e.unwrap().file_name().to_string_lossy().into_owned())
        .collect();
    assert!(names.iter().all(|n| !n.starts_with('.')), "{names:?}");
}

#[test]
fn monte_carlo_writes_percentiles_and_no_tree_file() {
    let d = Dir::new();
    let s = scenario(&d);
    let r = run_scenario(&s, &monte_carlo(2)).unwrap();
    let out = d.path().join("mc");
    write_projection(&out, &r).unwrap();
    assert!(!out.join("trees.csv").exists());
    let summary = lines(&out.join("summary.csv"));
    let row: Vec<&str> = summary[8].split(',').collect();
    assert_eq!(&row[..5], &["t", "monte_carlo", "5", "13", "stems_per_ha"]);
    assert!(row[5..].iter().all(|f| !f.is_empty()), "{row:?}");
    // Percentiles are ordered.
    let v: Vec<f64> = row[7..].iter().map(|f| f.parse().unwrap()).collect();
    assert!(v[0] <= v[1] && v[1] <= v[2]);
    // Writing again replaces the files.
    write_projection(&out, &r).unwrap();
}

#[test]
fn check_reports_the_plan_and_extrapolation() {
    let d = Dir::new();
    let s = scenario(&d);
    let report = stemcast::project::check(&s).unwrap();
    let plan = report.plan.join("\n");
    assert!(plan.contains("30 records"), "{plan}");
    assert!(plan.contains("treatment (released)"), "{plan}");
    assert!(plan.contains("sub-steps of 5 years"), "{plan}");
    assert_eq!(report.warnings.len(), 1, "{:?}", report.warnings);
    assert!(report.warnings[0].contains("`dbh`"));
}
