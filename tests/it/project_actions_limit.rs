//! The density limit (issue 5, item 1): `density_limit = { max_sdi = … }` holds Reineke's SDI
//! at the limit in the expected driver and at or below it in Monte Carlo, its stems go to
//! `density_limit_stems_per_ha` and `harvest.csv`, never to `cumulative_survival`.

use crate::project_common::*;
use stemcast::project::{run_scenario, HarvestAction, Metric, ProjectionResult, RunOptions};

const COHORT: &str =
    "stems_per_ha = 1000\nrecords = 40\ndbh = { distribution = \"lognormal\", median = 12, gsd = 1.4 }";

/// Survival `p` per 5 years, growth 0.5 cm/year (residual SD 0.2 for Monte Carlo), 30 years
/// in steps of `step`, with `actions` appended.
fn run(p: f64, step: u32, actions: &str, options: &RunOptions) -> ProjectionResult {
    let d = Dir::new();
    let survival = if p == 1.0 {
        // logistic(40) rounds to exactly 1.0: every tree survives every draw.
        model_toml(
            "kind = \"survival\"\nlink = \"logit\"\nperiod_years = 5",
            &[("(intercept)", 40.0)],
        )
    } else {
        constant_survival(p, 5)
    };
    d.write("s.toml", &survival);
    d.write("g.toml", &linear_growth(0.5, 0.0, 0.2, 5));
    let text = scenario_toml(30, step, 20, "", COHORT) + "\n" + actions + "\n";
    run_scenario(&scenario_in(&d, &text), options).unwrap()
}

fn means(r: &ProjectionResult, m: Metric) -> Vec<f64> {
    r.years.iter().map(|y| y.get(m).mean.unwrap()).collect()
}

const LIMIT: &str = "[[actions]]\nyear = 5\ndensity_limit = { max_sdi = 450 }";

#[test]
fn expected_driver_holds_sdi_at_the_limit() {
    // Without the limit SDI rises past 450 (first assert); with it, once it binds, SDI after
    // every step equals 450 to 1e-9 (derived: the boundary record's weight is solved so that
    // N·(QMD/25.4)^1.605 = max_sdi).
    let free = run(0.99, 5, "", &expected());
    assert!(means(&free, Metric::Sdi).last().unwrap() > &500.0);
    let r = run(0.99, 5, LIMIT, &expected());
    let (sdi, died) = (means(&r, Metric::Sdi), means(&r, Metric::DensityLimit));
    let mut bound = 0;
    for (k, (&s, &n)) in sdi.iter().zip(&died).enumerate() {
        assert!(s <= 450.0 * (1.0 + 1e-9), "year {}: SDI {s}", 5 * k);
        if n > 0.0 {
            bound += 1;
            assert!(close(s, 450.0, 1e-9, 0.0), "year {}: SDI {s}", 5 * k);
        }
    }
    assert!(bound >= 3, "the limit bound in {bound} steps");
    // Stems balance, one sub-step per step: N(t) = 0.99·N(t − 5) − died(t) (derived), and
    // cumulative survival is the model's alone, 0.99^k (derived analytically).
    let (stems, cumulative) = (
        means(&r, Metric::StemsPerHa),
        means(&r, Metric::CumulativeSurvival),
    );
    for k in 1..stems.len() {
        assert!(close(stems[k], 0.99 * stems[k - 1] - died[k], 1e-12, 1e-9));
        assert!(close(cumulative[k], 0.99f64.powi(k as i32), 1e-12, 0.0));
    }
    assert!(means(&r, Metric::Removed).iter().all(|&x| x == 0.0));
    // harvest.csv has one density_limit row per year at which the limit removed stems, with
    // the same stems as the summary.
    let rows: Vec<_> = r
        .harvest
        .iter()
        .filter(|h| h.action == HarvestAction::DensityLimit)
        .collect();
    assert_eq!(rows.len(), bound);
    for h in rows {
        let k = (h.year / 5.0) as usize;
        assert_eq!(h.stems_per_ha.mean, Some(died[k]));
        assert!(h.basal_area_m2_ha.mean.unwrap() > 0.0 && h.stems_per_ha.p05.is_none());
    }
}

#[test]
fn the_limit_applies_at_every_sub_step_and_a_later_one_replaces_it() {
    // Steps of 10 years with 5-year models: two sub-steps per step, the limit after each, so
    // the reported SDI is at the limit too; from year 20 the lower limit 400 is in force.
    let actions = format!(
        "{}\n\n[[actions]]\nyear = 20\ndensity_limit = {{ max_sdi = 400 }}",
        LIMIT.replace("year = 5", "year = 10")
    );
    let r = run(0.99, 10, &actions, &expected());
    let sdi = means(&r, Metric::Sdi);
    assert!(close(sdi[1], 450.0, 1e-9, 0.0), "{sdi:?}");
    assert!(close(sdi[2], 400.0, 1e-9, 0.0), "{sdi:?}");
    assert!(close(sdi[3], 400.0, 1e-9, 0.0), "{sdi:?}");
    // Harvest rows at the sub-step ends (years 10, 15, 20, 25, 30), not only at output years.
    let years: Vec<f64> = r.harvest.iter().map(|h| h.year).collect();
    assert!(years.contains(&15.0) && years.contains(&25.0), "{years:?}");
}

#[test]
fn monte_carlo_never_exceeds_the_limit() {
    // Whole records leave until SDI ≤ limit, so no replicate is above it: each run here has
    // one replicate, so its mean is that replicate's value.
    for seed in 1..=6 {
        let options = RunOptions {
            replicates: Some(1),
            seed: Some(seed),
            threads: Some(1),
            ..RunOptions::default()
        };
        let r = run(0.99, 5, LIMIT, &options);
        for (k, s) in means(&r, Metric::Sdi).into_iter().enumerate() {
            assert!(
                s <= 450.0 * (1.0 + 1e-12),
                "seed {seed}, year {}: {s}",
                5 * k
            );
        }
    }
    let r = run(0.99, 5, LIMIT, &monte_carlo(2));
    let h = r
        .harvest
        .iter()
        .find(|h| h.action == HarvestAction::DensityLimit)
        .unwrap();
    assert!(h.stems_per_ha.p95.is_some() && h.basal_area_m2_ha.p05.is_some());
}

#[test]
fn removed_stems_never_enter_cumulative_survival() {
    // Every tree survives the model (p = 1), while a thinning and the density limit take stems out:
    // cumulative survival stays exactly 1 in every replicate (docs/maths.md#cumulative-survival).
    let actions = format!(
        "[[actions]]\nyear = 10\nthin = {{ from = \"above\", to_stems_per_ha = 800 }}\n\n{LIMIT}"
    );
    for options in [monte_carlo(2), expected()] {
        let r = run(1.0, 5, &actions, &options);
        assert!(means(&r, Metric::Removed)[2] > 0.0);
        assert!(means(&r, Metric::DensityLimit).iter().sum::<f64>() > 0.0);
        for y in &r.years {
            let c = y.get(Metric::CumulativeSurvival);
            assert_eq!(c.mean, Some(1.0), "year {}", y.year);
            assert!(c.p05.is_none_or(|p| p == 1.0), "year {}", y.year);
        }
        if options.expected {
            assert!(r.trees.iter().all(|t| t.cumulative_survival == 1.0));
        }
    }
}
