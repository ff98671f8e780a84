//! Generated cohorts and attributes (`docs/scenario.md#cohort`): quantile diameters, numeric and
//! categorical attributes given to every tree, and parameter draws through a whole run.

use crate::project_common::*;
use stemcast::project::{run_scenario, Metric};
use stemcast::scenario::{quantile_diameters, AttributeValues, DbhDistribution};

#[test]
fn cohort_diameters_are_distribution_quantiles() {
    // Derived analytically: Weibull F⁻¹(p) = λ(−ln(1 − p))^(1/k); fixed gives the value;
    // the median record of an odd lognormal cohort is the median.
    let w = quantile_diameters(
        &DbhDistribution::Weibull {
            shape: 2.0,
            scale: 10.0,
            location: 1.0,
        },
        4,
    )
    .unwrap();
    for (i, d) in w.iter().enumerate() {
        let p = (i as f64 + 0.5) / 4.0;
        let want = 1.0 + 10.0 * (-(1.0 - p).ln()).sqrt();
        assert!(close(*d, want, 1e-9, 0.0), "{d} vs {want}");
    }
    let f = quantile_diameters(&DbhDistribution::Fixed { value: 7.5 }, 3).unwrap();
    assert_eq!(f, vec![7.5; 3]);
}

#[test]
fn attributes_reach_every_tree_and_enter_the_terms() {
    // Derived analytically: with survival logit 0 + 1·[treatment = released] + 0.1·site_index
    // and site_index = 10 for every tree, P = logistic(2) per 5 years for every record.
    let d = Dir::new();
    d.write(
        "s.toml",
        &(model_toml(
            "kind = \"survival\"\nlink = \"logit\"\nperiod_years = 5",
            &[
                ("(intercept)", 0.0),
                ("treatment=released", 1.0),
                ("site_index", 0.1),
            ],
        ) + "[categorical.treatment]\nlevels = [\"control\", \"released\"]\nreference = \"control\"\n"),
    );
    d.write("g.toml", &linear_growth(0.2, 0.0, 0.0, 5));
    let cohort = "stems_per_ha = 500\nrecords = 5\ndbh = { distribution = \"uniform\", min = 5, max = 15 }\nattributes = { treatment = \"released\", site_index = 10 }";
    let s = scenario_in(&d, &scenario_toml(10, 5, 1, "", cohort));
    assert_eq!(s.trees.dbh_cm, vec![6.0, 8.0, 10.0, 12.0, 14.0]);
    assert!(matches!(
        s.trees.attribute("site_index").unwrap().values,
        AttributeValues::Numeric(_)
    ));
    let r = run_scenario(&s, &expected()).unwrap();
    let p = 1.0 / (1.0 + (-2.0f64).exp());
    let c = r.years[2].get(Metric::CumulativeSurvival).mean.unwrap();
    assert!(close(c, p * p, 1e-12, 0.0), "{c} vs {}", p * p);
}

#[test]
fn parameter_draws_run_and_widen_the_spread() {
    // With coefficient draws on, the replicate spread of stems/ha must not shrink compared
    // with process noise alone (the draws add a between-replicate component).
    let d = Dir::new();
    let survival =
        constant_survival(0.9, 5) + "[covariance]\nterms = [\"(intercept)\"]\nmatrix = [[0.25]]\n";
    d.write("s.toml", &survival);
    d.write(
        "g.toml",
        &(linear_growth(0.3, 0.0, 0.05, 5)
            + "[covariance]\nterms = [\"(intercept)\", \"dbh\"]\nmatrix = [[0.01, 0.0], [0.0, 0.0001]]\n"),
    );
    let cohort = "stems_per_ha = 1000\nrecords = 100\ndbh = { distribution = \"normal\", mean = 15, sd = 3 }";
    let with = scenario_in(&d, &scenario_toml(20, 5, 200, "parameters = true", cohort));
    let without = scenario_in(&d, &scenario_toml(20, 5, 200, "parameters = false", cohort));
    let a = run_scenario(&with, &monte_carlo(2)).unwrap();
    let b = run_scenario(&without, &monte_carlo(2)).unwrap();
    let sd =
        |r: &stemcast::project::ProjectionResult| r.years[4].get(Metric::StemsPerHa).sd.unwrap();
    assert!(sd(&a) > 1.5 * sd(&b), "{} vs {}", sd(&a), sd(&b));
    assert!(a.settings.parameters);
}
