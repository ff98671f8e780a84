//! Management actions (`docs/scenario.md#actions`, `docs/maths.md#management-actions`): thinning
//! from below or above in both drivers, at year 0 and later, targets above the density, and `set`
//! changing attributes mid-projection.

use crate::project_common::*;
use stemcast::project::{run_scenario, Metric, ProjectionResult};

const COHORT: &str =
    "stems_per_ha = 1000\nrecords = 40\ndbh = { distribution = \"lognormal\", median = 12, gsd = 1.4 }";

fn with_actions(d: &Dir, replicates: u32, actions: &str) -> stemcast::scenario::Scenario {
    let text = format!(
        "{}\n{actions}\n",
        scenario_toml(20, 5, replicates, "", COHORT)
    );
    scenario_in(d, &text)
}

fn at(r: &ProjectionResult, year: f64, m: Metric) -> stemcast::project::Summary {
    *r.years.iter().find(|y| y.year == year).unwrap().get(m)
}

const THIN_10: &str = "[[actions]]\nyear = 10\nthin = { from = \"below\", to_stems_per_ha = 500 }";

#[test]
fn expected_thinning_removes_weight_exactly_from_below() {
    // docs/maths.md#thinning: the expected driver removes weight in diameter order and splits the
    // boundary record exactly, so stems/ha after the thinning equal the target; cumulative
    // survival counts model mortality only (the same as without the thinning up to year 10).
    let d = Dir::new();
    d.write("s.toml", &constant_survival(0.9, 5));
    d.write("g.toml", &linear_growth(0.3, 0.0, 0.0, 5));
    let thinned = run_scenario(&with_actions(&d, 1, THIN_10), &expected()).unwrap();
    let plain = run_scenario(&with_actions(&d, 1, ""), &expected()).unwrap();
    let before = at(&plain, 10.0, Metric::StemsPerHa).mean.unwrap();
    assert!(close(
        at(&thinned, 10.0, Metric::StemsPerHa).mean.unwrap(),
        500.0,
        1e-12,
        0.0
    ));
    assert!(close(
        at(&thinned, 10.0, Metric::Removed).mean.unwrap(),
        before - 500.0,
        1e-12,
        0.0
    ));
    assert_eq!(at(&thinned, 15.0, Metric::Removed).mean, Some(0.0));
    // Derived analytically: survival 0.9 per period regardless of the thinning.
    assert!(close(
        at(&thinned, 20.0, Metric::CumulativeSurvival).mean.unwrap(),
        0.9f64.powi(4),
        1e-12,
        0.0
    ));
    // From below: every record with stems left is at least as large as every record cut.
    let rows: Vec<_> = thinned.trees.iter().filter(|t| t.year == 10.0).collect();
    let kept_min = rows
        .iter()
        .filter(|t| t.stems_per_ha > 0.0)
        .map(|t| t.dbh_cm)
        .fold(f64::INFINITY, f64::min);
    let cut_max = rows
        .iter()
        .filter(|t| t.stems_per_ha == 0.0)
        .map(|t| t.dbh_cm)
        .fold(0.0, f64::max);
    assert!(cut_max <= kept_min, "{cut_max} > {kept_min}");
    // trees.csv's cumulative survival is model survival only: 0.9² at year 10 even for the
    // records the thinning took (derived analytically).
    assert!(rows
        .iter()
        .all(|t| close(t.cumulative_survival, 0.81, 1e-12, 0.0)));
}

#[test]
fn monte_carlo_thinning_removes_whole_records() {
    // docs/maths.md#thinning: whole records (25 stems/ha each here) are removed until stems ≤
    // target, so after the thinning every replicate lies in (target − 25, target].
    let d = Dir::new();
    d.write("s.toml", &constant_survival(0.9, 5));
    d.write("g.toml", &linear_growth(0.3, 0.0, 0.1, 5));
    let r = run_scenario(&with_actions(&d, 30, THIN_10), &monte_carlo(2)).unwrap();
    let s = at(&r, 10.0, Metric::StemsPerHa);
    let (lo, hi) = (s.p05.unwrap(), s.p95.unwrap());
    assert!(lo > 475.0 && hi <= 500.0, "{lo} {hi}");
}

#[test]
fn thinning_at_year_zero_and_from_above() {
    // Year 0 applies before the first sub-step (docs/scenario.md#actions): the year-0 row already
    // shows it.
    let d = Dir::new();
    d.write("s.toml", &constant_survival(0.9, 5));
    d.write("g.toml", &linear_growth(0.3, 0.0, 0.0, 5));
    let below = "[[actions]]\nyear = 0\nthin = { from = \"below\", to_stems_per_ha = 600 }";
    let above = "[[actions]]\nyear = 0\nthin = { from = \"above\", to_stems_per_ha = 600 }";
    let b = run_scenario(&with_actions(&d, 1, below), &expected()).unwrap();
    let a = run_scenario(&with_actions(&d, 1, above), &expected()).unwrap();
    for r in [&a, &b] {
        assert!(close(
            at(r, 0.0, Metric::StemsPerHa).mean.unwrap(),
            600.0,
            1e-12,
            0.0
        ));
        assert!(close(
            at(r, 0.0, Metric::Removed).mean.unwrap(),
            400.0,
            1e-12,
            0.0
        ));
    }
    assert!(at(&b, 0.0, Metric::Qmd).mean > at(&a, 0.0, Metric::Qmd).mean);
}

#[test]
fn ties_are_removed_by_tree_id() {
    // docs/maths.md#management-actions: equal diameters leave in tree-id order. 40 records of 25
    // stems/ha, all 10 cm; thinning to 900 removes the first four records (ids 1–4).
    let d = Dir::new();
    d.write("s.toml", &constant_survival(0.9, 5));
    d.write("g.toml", &linear_growth(0.3, 0.0, 0.0, 5));
    let text = scenario_toml(
        5,
        5,
        1,
        "",
        "stems_per_ha = 1000\nrecords = 40\ndbh = { distribution = \"fixed\", value = 10 }",
    ) + "\n[[actions]]\nyear = 0\nthin = { from = \"below\", to_stems_per_ha = 900 }\n";
    let r = run_scenario(&scenario_in(&d, &text), &expected()).unwrap();
    let cut: Vec<&str> = r
        .trees
        .iter()
        .filter(|t| t.year == 0.0 && t.stems_per_ha == 0.0)
        .map(|t| t.tree.as_str())
        .collect();
    assert_eq!(cut, vec!["1", "2", "3", "4"]);
}

#[test]
fn target_above_the_density_removes_nothing_and_says_so() {
    let d = Dir::new();
    d.write("s.toml", &constant_survival(0.9, 5));
    d.write("g.toml", &linear_growth(0.3, 0.0, 0.0, 5));
    let act = "[[actions]]\nyear = 10\nthin = { from = \"below\", to_stems_per_ha = 5000 }";
    let r = run_scenario(&with_actions(&d, 1, act), &expected()).unwrap();
    assert_eq!(at(&r, 10.0, Metric::Removed).mean, Some(0.0));
    assert!(
        r.warnings.iter().any(|w| w.contains("nothing was removed")),
        "{:?}",
        r.warnings
    );
}

#[test]
fn set_changes_the_attribute_from_its_year_on() {
    // Derived analytically: logit survival 2.0 − 1.0·[treatment = unreleased] per 5 years;
    // released until year 10, unreleased after: S(20) = p_r² · p_u².
    let d = Dir::new();
    d.write(
        "s.toml",
        &(model_toml(
            "kind = \"survival\"\nlink = \"logit\"\nperiod_years = 5",
            &[("(intercept)", 2.0), ("treatment=unreleased", -1.0)],
        ) + "[categorical.treatment]\nlevels = [\"released\", \"unreleased\"]\nreference = \"released\"\n"),
    );
    d.write("g.toml", &linear_growth(0.3, 0.0, 0.0, 5));
    let text = scenario_toml(
        20,
        5,
        1,
        "",
        &format!("{COHORT}\nattributes = {{ treatment = \"released\" }}"),
    ) + "\n[[actions]]\nyear = 10\nset = { treatment = \"unreleased\" }\n";
    let r = run_scenario(&scenario_in(&d, &text), &expected()).unwrap();
    let logistic = |x: f64| 1.0 / (1.0 + (-x).exp());
    let want = logistic(2.0).powi(2) * logistic(1.0).powi(2);
    let got = at(&r, 20.0, Metric::CumulativeSurvival).mean.unwrap();
    assert!(close(got, want, 1e-12, 0.0), "{got} vs {want}");
    // An unknown level is refused with the action's key.
    let bad = text.replace(
        "set = { treatment = \"unreleased\" }",
        "set = { treatment = \"cut\" }",
    );
    let p = d.write("bad.toml", &bad);
    let e = stemcast::scenario::Scenario::read(&p)
        .unwrap_err()
        .to_string();
    assert!(
        e.contains("actions[0].set.treatment") && e.contains("cut"),
        "{e}"
    );
}
