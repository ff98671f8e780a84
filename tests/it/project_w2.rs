//! PROJECT-W2 (`docs/performance.md#project-w2`) against the expected trajectory of independent
//! NumPy and R implementations (tests/fixtures/projection/README.md).

use crate::project_common::{close, fixtures, w2_growth, w2_survival, Dir};
use stemcast::project::{run_scenario, Driver, Metric, RunOptions};
use stemcast::scenario::Scenario;

fn w2_dir(extra: &str) -> (Dir, std::path::PathBuf) {
    let d = Dir::new();
    d.write("s.toml", &w2_survival());
    d.write("g.toml", &w2_growth());
    let trees = std::fs::read_to_string(fixtures().join("projection_w2_trees.csv")).unwrap();
    d.write("trees.csv", &trees);
    let p = d.write(
        "w2.toml",
        &format!("name = \"w2\"\nhorizon_years = 50\nstep_years = 5\nreplicates = 1\nseed = 1\n{extra}\n[models]\nsurvival = \"s.toml\"\ngrowth = \"g.toml\"\n\n[cohort]\ntrees = \"trees.csv\"\n"),
    );
    (d, p)
}

#[test]
fn expected_trajectory_matches_the_numpy_and_r_reference() {
    let (_d, p) = w2_dir("");
    let s = Scenario::read(&p).unwrap();
    let r = run_scenario(
        &s,
        &RunOptions {
            expected: true,
            ..RunOptions::default()
        },
    )
    .unwrap();
    assert_eq!(r.driver, Driver::Expected);
    let reference: serde_json::Value = serde_json::from_str(
        &std::fs::read_to_string(fixtures().join("projection_w2_expected.json")).unwrap(),
    )
    .unwrap();
    let expected = reference["expected"].as_array().unwrap();
    assert_eq!(r.years.len(), expected.len());
    for (y, e) in r.years.iter().zip(expected) {
        assert_eq!(y.year, e["year"].as_f64().unwrap());
        for (m, key) in [
            (Metric::StemsPerHa, "stems_per_ha"),
            (Metric::CumulativeSurvival, "cumulative_survival"),
            (Metric::BasalArea, "basal_area_m2_ha"),
            (Metric::Qmd, "qmd_cm"),
            (Metric::Sdi, "sdi"),
        ] {
            let got = y.get(m).mean.unwrap();
            let want = e[key].as_f64().unwrap();
            // Tolerance of the reference file: relative 1e-6.
            assert!(
                close(got, want, 1e-6, 1e-9),
                "year {} {key}: {got} vs {want}",
                y.year
            );
        }
    }
}
