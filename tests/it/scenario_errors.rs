//! Bad input (issue 3, item 8): every case is a bad-input error (exit code 2) whose message
//! names the file and the key (or line and column), and nothing is written.

use crate::project_common::*;
use std::path::Path;
use stemcast::project::{run_scenario, RunOptions};
use stemcast::scenario::Scenario;

const COHORT: &str =
    "stems_per_ha = 1000\nrecords = 20\ndbh = { distribution = \"fixed\", value = 10 }";

/// What `stemcast project` does: read, run, write. Returns the error.
fn project(scenario: &Path, out: &Path) -> stemcast::Error {
    let result = Scenario::read(scenario)
        .and_then(|s| run_scenario(&s, &RunOptions::default()))
        .and_then(|r| stemcast::report::write_projection(out, &r).map(|_| ()));
    match result {
        Ok(()) => panic!("{} was accepted", scenario.display()),
        Err(e) => e,
    }
}

/// Write good models, then `scenario`, run it and check the error mentions every `needle`.
fn assert_bad(scenario: &str, needles: &[&str]) {
    let d = Dir::new();
    d.write("s.toml", &w2_survival());
    d.write("g.toml", &w2_growth());
    assert_bad_in(&d, scenario, needles);
}

fn assert_bad_in(d: &Dir, scenario: &str, needles: &[&str]) {
    let p = d.write("sc.toml", scenario);
    let out = d.path().join("out");
    let e = project(&p, &out);
    let message = e.to_string();
    assert_eq!(e.exit_code(), 2, "{message}");
    for n in needles {
        assert!(message.contains(n), "`{n}` not in: {message}");
    }
    assert!(!out.exists(), "output written despite: {message}");
}

#[test]
fn unknown_keys_are_named_with_their_table() {
    assert_bad(
        &scenario_toml(20, 5, 10, "", COHORT).replace("seed = 42", "seed = 42\nsed = 1"),
        &["sc.toml", "sed", "unknown field"],
    );
    assert_bad(
        &scenario_toml(20, 5, 10, "proces = true", COHORT),
        &["sc.toml", "uncertainty.proces"],
    );
    assert_bad(
        &scenario_toml(
            20,
            5,
            10,
            "",
            &COHORT.replace("value = 10", "value = 10, sd = 2"),
        ),
        &["sc.toml", "cohort.dbh", "sd"],
    );
}

#[test]
fn bad_actions() {
    let with = |action: &str| {
        format!(
            "{}\n[[actions]]\n{action}\n",
            scenario_toml(20, 5, 10, "", COHORT)
        )
    };
    assert_bad(
        &with("year = 10\ndensity_limit = { sdi_max = 900 }"),
        &["sc.toml", "actions[0].density_limit", "sdi_max"],
    );
    assert_bad(
        &with("year = 10\nthin = { from = \"below\", to_stems_per_ha = 700 }\nset = { x = 1 }"),
        &[
            "sc.toml",
            "actions[0]",
            "exactly one of `thin`, `remove`, `set` or `density_limit`",
        ],
    );
    assert_bad(
        &with("year = 25\nthin = { from = \"below\", to_stems_per_ha = 700 }"),
        &["sc.toml", "actions[0].year", "outside"],
    );
    assert_bad(
        &with("year = 5\nthin = { from = \"middle\", to_stems_per_ha = 700 }"),
        &["sc.toml", "actions", "middle"],
    );
    assert_bad(
        &with("year = 5\nset = { treatment = \"released\" }"),
        &["sc.toml", "actions[0].set.treatment", "no attribute"],
    );
}

#[test]
fn bad_action_years_targets_and_kinds() {
    let with = |actions: &str| format!("{}\n{actions}\n", scenario_toml(20, 5, 10, "", COHORT));
    let thin = |body: &str| with(&format!("[[actions]]\nyear = 10\nthin = {{ {body} }}"));
    // Years: off the step boundaries (5, 10, …), beyond the horizon, negative.
    assert_bad(
        &with("[[actions]]\nyear = 7\nthin = { from = \"below\", to_stems_per_ha = 700 }"),
        &[
            "sc.toml",
            "actions[0].year",
            "7",
            "step boundary",
            "step_years = 5",
        ],
    );
    assert_bad(
        &with("[[actions]]\nyear = 30\ndensity_limit = { max_sdi = 900 }"),
        &["sc.toml", "actions[0].year", "outside"],
    );
    assert_bad(
        &with("[[actions]]\nyear = -5\nset = { x = 1 }"),
        &["sc.toml", "actions[0].year", "outside"],
    );
    // Thinning targets: none, two, bad values.
    assert_bad(
        &thin("from = \"below\""),
        &["sc.toml", "actions[0].thin", "give one target"],
    );
    assert_bad(
        &thin("from = \"below\", to_stems_per_ha = 700, remove_fraction = 0.2"),
        &[
            "sc.toml",
            "actions[0].thin",
            "to_stems_per_ha and remove_fraction",
        ],
    );
    for f in ["0", "1", "1.5", "-0.2"] {
        assert_bad(
            &thin(&format!("from = \"proportional\", remove_fraction = {f}")),
            &[
                "sc.toml",
                "actions[0].thin.remove_fraction",
                f,
                "between 0 and 1",
            ],
        );
    }
    assert_bad(
        &thin("from = \"above\", to_stems_per_ha = -100"),
        &["sc.toml", "actions[0].thin.to_stems_per_ha", "-100"],
    );
    assert_bad(
        &thin("from = \"below\", to_basal_area_m2_ha = -2.5"),
        &["sc.toml", "actions[0].thin.to_basal_area_m2_ha", "-2.5"],
    );
    assert_bad(
        &thin("from = \"below\", to_basal_area = 20"),
        &["sc.toml", "actions[0].thin", "to_basal_area"],
    );
    // Density limits.
    assert_bad(
        &with("[[actions]]\nyear = 5\ndensity_limit = { max_sdi = -900 }"),
        &["sc.toml", "actions[0].density_limit.max_sdi", "-900"],
    );
    // An unknown action kind, named with its position among the actions.
    assert_bad(
        &with("[[actions]]\nyear = 5\nset = { x = 1 }\n\n[[actions]]\nyear = 10\nprune = { height = 2 }"),
        &["sc.toml", "actions[1].prune", "unknown field", "density_limit"],
    );
    // `set`: an unknown attribute (the unknown level is in tests/project_actions.rs).
    assert_bad(
        &with("[[actions]]\nyear = 5\nset = { site_index = 20 }"),
        &["sc.toml", "actions[0].set.site_index", "no attribute"],
    );
}

#[test]
fn missing_model_file() {
    assert_bad(
        &scenario_toml(20, 5, 10, "", COHORT).replace("g.toml", "nothere.toml"),
        &["sc.toml", "models.growth", "nothere.toml"],
    );
}

#[test]
fn step_not_a_multiple_of_a_model_period() {
    assert_bad(
        &scenario_toml(21, 7, 10, "", COHORT),
        &["sc.toml", "step_years", "5-year period"],
    );
}

#[test]
fn model_without_a_period() {
    let d = Dir::new();
    d.write("s.toml", &w2_survival().replace("period_years = 5\n", ""));
    d.write("g.toml", &w2_growth());
    assert_bad_in(
        &d,
        &scenario_toml(20, 5, 10, "", COHORT),
        &["sc.toml", "models.survival", "period_years"],
    );
}

#[test]
fn growth_model_with_response_column_cannot_be_projected() {
    let d = Dir::new();
    d.write("s.toml", &w2_survival());
    d.write("g.toml", &w2_growth().replace("\"ln_bai\"", "\"column\""));
    assert_bad_in(
        &d,
        &scenario_toml(20, 5, 10, "", COHORT),
        &["models.growth", "column"],
    );
}

#[test]
fn empty_name_and_negative_start_age() {
    assert_bad(
        &scenario_toml(20, 5, 10, "", COHORT).replace("name = \"t\"", "name = \" \""),
        &["sc.toml", "name", "empty"],
    );
    assert_bad(
        &scenario_toml(20, 5, 10, "", COHORT)
            .replace("seed = 42", "seed = 42\nstart_age_years = -4"),
        &["sc.toml", "start_age_years", "-4"],
    );
}

#[test]
fn negative_replicates() {
    assert_bad(
        &scenario_toml(20, 5, 10, "", COHORT).replace("replicates = 10", "replicates = -3"),
        &["sc.toml", "replicates", "-3"],
    );
}

#[test]
fn unknown_level_in_the_cohort_attributes() {
    let d = Dir::new();
    d.write(
        "s.toml",
        &(model_toml(
            "kind = \"survival\"\nlink = \"logit\"\nperiod_years = 5",
            &[("(intercept)", 1.0), ("treatment=released", 0.5)],
        ) + "[categorical.treatment]\nlevels = [\"control\", \"released\"]\nreference = \"control\"\n"),
    );
    d.write("g.toml", &w2_growth());
    let cohort = format!("{COHORT}\nattributes = {{ treatment = \"relased\" }}");
    assert_bad_in(
        &d,
        &scenario_toml(20, 5, 10, "", &cohort),
        &[
            "sc.toml",
            "cohort.attributes.treatment",
            "relased",
            "control, released",
        ],
    );
}

#[test]
fn term_on_an_unknown_attribute() {
    let d = Dir::new();
    d.write(
        "s.toml",
        &model_toml(
            "kind = \"survival\"\nlink = \"logit\"\nperiod_years = 5",
            &[("(intercept)", 1.0), ("site_index", 0.05)],
        ),
    );
    d.write("g.toml", &w2_growth());
    assert_bad_in(
        &d,
        &scenario_toml(20, 5, 10, "", COHORT),
        &["models.survival", "site_index"],
    );
}

#[test]
fn tree_list_with_duplicate_ids_or_several_stands() {
    let d = Dir::new();
    d.write("s.toml", &w2_survival());
    d.write("g.toml", &w2_growth());
    d.write(
        "trees.csv",
        "tree,dbh,expansion\n1,10,25\n2,12,25\n1,14,25\n",
    );
    assert_bad_in(
        &d,
        &scenario_toml(20, 5, 10, "", "trees = \"trees.csv\""),
        &["trees.csv", "line 4", "column \"tree\"", "lines 2 and 4"],
    );
    d.write(
        "trees.csv",
        "stand,tree,dbh,expansion\nA,1,10,25\nA,2,12,25\nB,3,14,25\n",
    );
    assert_bad_in(
        &d,
        &scenario_toml(20, 5, 10, "", "trees = \"trees.csv\""),
        &["trees.csv", "line 4", "column \"stand\"", "batch"],
    );
    d.write("trees.csv", "tree,dbh,expansion\n1,10,25\n2,-1,25\n");
    assert_bad_in(
        &d,
        &scenario_toml(20, 5, 10, "", "trees = \"trees.csv\""),
        &["trees.csv", "line 3", "column \"dbh\"", "positive"],
    );
    d.write("trees.csv", "tree,dbh,expansion\n1,10,25\n2,12,0\n");
    assert_bad_in(
        &d,
        &scenario_toml(20, 5, 10, "", "trees = \"trees.csv\""),
        &["trees.csv", "line 3", "column \"expansion\""],
    );
}

#[test]
fn area_that_does_not_give_whole_stems() {
    // 1000 stems/ha over 20 records = 50 stems/ha each; 0.013 ha × 50 = 0.65 stems.
    assert_bad(
        &scenario_toml(20, 5, 10, "", &format!("{COHORT}\narea_ha = 0.013")),
        &["sc.toml", "cohort.area_ha", "whole number"],
    );
}

#[test]
fn parameters_without_covariance() {
    assert_bad(
        &scenario_toml(20, 5, 10, "parameters = true", COHORT),
        &["sc.toml", "uncertainty.parameters", "covariance"],
    );
}

#[test]
fn cohort_with_non_positive_diameters() {
    assert_bad(
        &scenario_toml(
            20,
            5,
            10,
            "",
            "stems_per_ha = 1000\nrecords = 50\ndbh = { distribution = \"normal\", mean = 3, sd = 4 }",
        ),
        &["sc.toml", "cohort.dbh", "not positive"],
    );
}

/// `project` reads tree lists with the one reader of `stemcast::data`, so a CRLF file's bad cell
/// is reported on its real line (counted by hand: header = line 1), and a duplicated `dbh`
/// column or an empty stand id is refused as `batch` refuses them.
#[test]
fn tree_list_errors_match_the_batch_reader() {
    let d = Dir::new();
    d.write("s.toml", &w2_survival());
    d.write("g.toml", &w2_growth());
    let scenario = scenario_toml(20, 5, 10, "", "trees = \"trees.csv\"");
    d.write("trees.csv", "tree,dbh,expansion\r\n1,10,25\r\n2,x,25\r\n");
    assert_bad_in(&d, &scenario, &["trees.csv", "line 3", "column \"dbh\""]);
    d.write("trees.csv", "tree,dbh,dbh,expansion\n1,10,11,25\n");
    assert_bad_in(&d, &scenario, &["trees.csv", "dbh"]);
    d.write("trees.csv", "stand,tree,dbh,expansion\n,1,10,25\n");
    assert_bad_in(&d, &scenario, &["trees.csv", "line 2", "column \"stand\""]);
}
