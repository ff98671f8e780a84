//! `compare` pairs replicates by common random numbers (`docs/maths.md#random-numbers`): scenarios
//! that agree up to some year agree exactly, replicate by replicate, up to that year.

use crate::project_common::{model_toml, Dir};
use stemcast::project::{compare_scenarios, CompareOptions, Comparison, Metric};
use stemcast::scenario::Scenario;

/// Survival with a stand covariate (bal) and a categorical term, with a covariance so that
/// parameter draws are on too: every source of randomness is exercised.
fn survival() -> String {
    model_toml(
        "kind = \"survival\"\nlink = \"logit\"\nperiod_years = 5",
        &[
            ("(intercept)", 1.5),
            ("dbh", 0.1),
            ("bal", -0.03),
            ("treatment=b", -0.8),
        ],
    ) + "[categorical.treatment]\nlevels = [\"a\", \"b\"]\nreference = \"a\"\n\
         [covariance]\nkind = \"model\"\nterms = [\"(intercept)\", \"dbh\", \"bal\", \"treatment=b\"]\n\
         matrix = [[0.01, 0, 0, 0], [0, 1e-5, 0, 0], [0, 0, 1e-6, 0], [0, 0, 0, 0.004]]\n"
}

fn growth() -> String {
    model_toml(
        "kind = \"growth\"\nresponse = \"ln_bai\"\nperiod_years = 5\nresidual_sd = 0.4",
        &[
            ("(intercept)", 1.0),
            ("ln(dbh)", 1.0),
            ("bal", -0.02),
            ("treatment=b", -0.3),
        ],
    ) + "[categorical.treatment]\nlevels = [\"a\", \"b\"]\nreference = \"a\"\n\
         [covariance]\nkind = \"model\"\nterms = [\"(intercept)\", \"ln(dbh)\", \"bal\", \"treatment=b\"]\n\
         matrix = [[0.004, 0, 0, 0], [0, 1e-4, 0, 0], [0, 0, 1e-6, 0], [0, 0, 0, 0.002]]\n"
}

fn scenario(d: &Dir, file: &str, name: &str, seed: u64, extra: &str) -> Scenario {
    d.write("s.toml", &survival());
    d.write("g.toml", &growth());
    let text = format!(
        "name = \"{name}\"\nhorizon_years = 40\nstep_years = 5\nreplicates = 60\nseed = {seed}\n\n\
         [models]\nsurvival = \"s.toml\"\ngrowth = \"g.toml\"\n\n\
         [uncertainty]\nprocess = true\nparameters = true\ngrowth_residual = true\n\n\
         [cohort]\nstems_per_ha = 1200\nrecords = 150\n\
         dbh = {{ distribution = \"lognormal\", median = 10.0, gsd = 1.5 }}\n\
         attributes = {{ treatment = \"a\" }}\n{extra}"
    );
    Scenario::read(&d.write(file, &text)).expect("valid scenario")
}

fn compare(s: &[Scenario], replicates: Option<usize>) -> Comparison {
    let o = CompareOptions {
        replicates,
        threads: Some(2),
        ..CompareOptions::default()
    };
    compare_scenarios(s, &o, &|_, _| {}).expect("comparison runs")
}

/// With 2 replicates, type-7 p05 = x₍₁₎ + 0.05(x₍₂₎ − x₍₁₎) and p95 = x₍₁₎ + 0.95(x₍₂₎ − x₍₁₎)
/// (derived analytically): both are 0 only if x₍₁₎ = x₍₂₎ = 0, i.e. every replicate's paired
/// difference is exactly zero.
fn every_replicate_zero(c: &Comparison, before_year: f64) -> bool {
    c.differences
        .iter()
        .filter(|d| d.year < before_year)
        .all(|d| d.mean == Some(0.0) && d.p05 == Some(0.0) && d.p95 == Some(0.0))
}

#[test]
fn an_identical_copy_differs_by_exactly_zero_in_every_replicate() {
    let d = Dir::new();
    // The copy has its own name and seed: the comparison's one seed (the baseline's) applies.
    let base = scenario(&d, "a.toml", "base", 7, "");
    let copy = scenario(&d, "b.toml", "copy", 99, "");
    for replicates in [Some(2), None] {
        let c = compare(&[base.clone(), copy.clone()], replicates);
        assert_eq!(c.seed, 7, "the baseline's seed is used for every scenario");
        assert_eq!(
            c.differences.len(),
            9 * Metric::ALL.len(),
            "9 years × 7 metrics"
        );
        assert!(every_replicate_zero(&c, f64::INFINITY));
        // Identical draws give identical summaries, SD and percentiles included.
        assert_eq!(c.results[0].years, c.results[1].years);
        assert_eq!(c.results[0].classes, c.results[1].classes);
    }
    let c = compare(&[base, copy], None);
    assert!(c.warnings.iter().any(|w| w.contains("seed 99")));
}

#[test]
fn a_set_action_at_year_20_leaves_earlier_years_exactly_paired() {
    let d = Dir::new();
    let base = scenario(&d, "a.toml", "base", 3, "");
    let later = scenario(
        &d,
        "b.toml",
        "treated at 20",
        3,
        "\n[[actions]]\nyear = 20\nset = { treatment = \"b\" }\n",
    );
    for replicates in [Some(2), None] {
        let c = compare(&[base.clone(), later.clone()], replicates);
        // `set` changes attributes, not the stand, so year 20 itself still pairs exactly.
        assert!(every_replicate_zero(&c, 20.5));
        let after = c
            .differences
            .iter()
            .filter(|d| d.year > 20.0 && d.metric == Metric::StemsPerHa);
        assert!(
            after.clone().all(|d| d.mean.is_some_and(|m| m < 0.0)),
            "treatment b lowers survival (coefficient −0.8), so fewer stems after year 20"
        );
    }
}

#[test]
fn mean_difference_is_the_difference_of_means() {
    // Derived analytically: mean(b − a) = mean(b) − mean(a) over the same replicates when no
    // value is missing (stems/ha and basal area are never NaN).
    let d = Dir::new();
    let base = scenario(&d, "a.toml", "base", 11, "");
    let thinned = scenario(
        &d,
        "b.toml",
        "thinned",
        11,
        "\n[[actions]]\nyear = 10\nthin = { from = \"below\", to_stems_per_ha = 500 }\n",
    );
    let c = compare(&[base, thinned], None);
    for m in [Metric::StemsPerHa, Metric::BasalArea] {
        for (ya, yb) in c.results[0].years.iter().zip(&c.results[1].years) {
            let row = c
                .differences
                .iter()
                .find(|d| d.year == ya.year && d.metric == m)
                .expect("a row per year and metric");
            let expected = yb.get(m).mean.unwrap() - ya.get(m).mean.unwrap();
            let got = row.mean.unwrap();
            assert!((got - expected).abs() <= 1e-9 * expected.abs().max(1.0));
            assert!(row.p05.unwrap() <= got && got <= row.p95.unwrap());
        }
    }
}

#[test]
fn different_attributes_do_not_move_any_draw() {
    // Survival is an intercept only (the same 5-year probability for every tree in both
    // scenarios) while growth depends on the attribute. If draws depended on anything but
    // (seed, purpose, stand, replicate, record, sub-step), the survivors would differ; with
    // common random numbers the same records die in both, so stems/ha and cumulative
    // survival pair exactly in every replicate while basal area differs (derived analytically).
    let d = Dir::new();
    d.write("s.toml", &crate::project_common::constant_survival(0.9, 5));
    d.write("g.toml", &growth());
    let text = |name: &str, level: &str| {
        format!(
            "name = \"{name}\"\nhorizon_years = 30\nstep_years = 5\nreplicates = 2\nseed = 4\n\n\
             [models]\nsurvival = \"s.toml\"\ngrowth = \"g.toml\"\n\n\
             [uncertainty]\nprocess = true\nparameters = false\ngrowth_residual = true\n\n\
             [cohort]\nstems_per_ha = 1000\nrecords = 120\n\
             dbh = {{ distribution = \"lognormal\", median = 12.0, gsd = 1.4 }}\n\
             attributes = {{ treatment = \"{level}\" }}\n"
        )
    };
    let a = Scenario::read(&d.write("a.toml", &text("a", "a"))).expect("valid");
    let b = Scenario::read(&d.write("b.toml", &text("b", "b"))).expect("valid");
    let c = compare(&[a, b], None);
    for d in &c.differences {
        let zero = d.mean == Some(0.0) && d.p05 == Some(0.0) && d.p95 == Some(0.0);
        match d.metric {
            Metric::StemsPerHa | Metric::CumulativeSurvival => assert!(zero, "{d:?}"),
            Metric::BasalArea if d.year > 0.0 => {
                assert!(
                    d.mean.is_some_and(|m| m < 0.0),
                    "treatment b grows slower: {d:?}"
                )
            }
            _ => {}
        }
    }
}
