//! Statistical checks of the drivers with analytic or handbook values (sources beside each).

use crate::project_common::*;
use stemcast::project::{run_scenario, Metric, ProjectionResult};

fn means(r: &ProjectionResult, m: Metric) -> Vec<f64> {
    r.years.iter().map(|y| y.get(m).mean.unwrap()).collect()
}

const COHORT_40: &str =
    "stems_per_ha = 1000\nrecords = 40\ndbh = { distribution = \"lognormal\", median = 12, gsd = 1.4 }";

#[test]
fn constant_survival_compounds_exactly_in_the_expected_driver() {
    // Derived analytically: with P = p per 5-year period, cumulative survival after k periods
    // is p^k and stems/ha 1000·p^k.
    let d = Dir::new();
    let p = 0.9;
    d.write("s.toml", &constant_survival(p, 5));
    d.write("g.toml", &linear_growth(0.3, 0.0, 0.0, 5));
    let s = scenario_in(&d, &scenario_toml(30, 5, 1, "", COHORT_40));
    let r = run_scenario(&s, &expected()).unwrap();
    for (k, (c, n)) in means(&r, Metric::CumulativeSurvival)
        .iter()
        .zip(means(&r, Metric::StemsPerHa))
        .enumerate()
    {
        let want = p.powi(k as i32);
        assert!(close(*c, want, 1e-12, 0.0), "year {}: {c} vs {want}", 5 * k);
        assert!(close(n, 1000.0 * want, 1e-12, 0.0));
    }
    // Growth of 0.3 cm/year for every record: QMD of a shifted list is not the shift of QMD,
    // but the mean DBH is; check one record in trees.csv rows instead.
    let last = r
        .trees
        .iter()
        .filter(|t| t.year == 30.0)
        .collect::<Vec<_>>();
    let first = r.trees.iter().filter(|t| t.year == 0.0).collect::<Vec<_>>();
    for (a, b) in first.iter().zip(&last) {
        assert!(close(b.dbh_cm - a.dbh_cm, 9.0, 1e-12, 1e-12));
    }
}

#[test]
fn constant_survival_monte_carlo_is_within_four_standard_errors() {
    // Derived analytically: each of 40 records survives k periods with probability p^k,
    // independently, so the replicate mean of cumulative survival has SE √(p^k(1−p^k)/(40R)).
    let d = Dir::new();
    let p = 0.8;
    d.write("s.toml", &constant_survival(p, 5));
    d.write("g.toml", &linear_growth(0.3, 0.0, 0.1, 5));
    let s = scenario_in(&d, &scenario_toml(20, 5, 400, "", COHORT_40));
    let r = run_scenario(&s, &monte_carlo(2)).unwrap();
    for (k, c) in means(&r, Metric::CumulativeSurvival).iter().enumerate() {
        let pk = p.powi(k as i32);
        let se = (pk * (1.0 - pk) / (40.0 * 400.0)).sqrt();
        assert!(
            (c - pk).abs() <= 4.0 * se + 1e-12,
            "k {k}: {c} vs {pk} (se {se})"
        );
    }
}

/// Three records with expansion 25, 25, 50 and 5-year survival .95, .90, .80 (through a
/// categorical attribute and indicator terms).
fn handbook_stand(d: &Dir, replicates: u32, extra: &str) -> stemcast::scenario::Scenario {
    let logit = |p: f64| (p / (1.0 - p)).ln();
    let survival = model_toml(
        "kind = \"survival\"\nlink = \"logit\"\nperiod_years = 5",
        &[
            ("(intercept)", logit(0.95)),
            ("group=b", logit(0.90) - logit(0.95)),
            ("group=c", logit(0.80) - logit(0.95)),
        ],
    ) + "[categorical.group]\nlevels = [\"a\", \"b\", \"c\"]\nreference = \"a\"\n";
    d.write("s.toml", &survival);
    d.write("g.toml", &linear_growth(0.2, 0.0, 0.0, 5));
    d.write(
        "trees.csv",
        "tree,dbh,expansion,group\n1,10,25,a\n2,12,25,b\n3,14,50,c\n",
    );
    scenario_in(
        d,
        &scenario_toml(5, 5, replicates, extra, "trees = \"trees.csv\""),
    )
}

#[test]
fn expected_survivors_and_variance_match_the_handbook_example() {
    // handbook-checks.md "Projection of tree lists": w = (25, 25, 50), P = (.95, .90, .80) →
    // E = 86.25 /ha, Var = Σ w² P (1 − P) = 485.9375 (derived).
    let d = Dir::new();
    let s = handbook_stand(&d, 20_000, "");
    let e = run_scenario(&s, &expected()).unwrap();
    assert!(close(
        e.years[1].get(Metric::StemsPerHa).mean.unwrap(),
        86.25,
        1e-12,
        0.0
    ));
    let r = run_scenario(&s, &monte_carlo(2)).unwrap();
    let y = r.years[1].get(Metric::StemsPerHa);
    let (mean, sd) = (y.mean.unwrap(), y.sd.unwrap());
    let se = (485.9375f64 / 20_000.0).sqrt();
    assert!((mean - 86.25).abs() <= 4.0 * se, "{mean}");
    // The sample variance of 20 000 draws has a relative SE of about √((κ − 1)/n) ≈ 1.5 %
    // for this skewed three-point distribution (kurtosis κ ≈ 5); allow 4 SE.
    assert!(close(sd * sd, 485.9375, 0.06, 0.0), "variance {}", sd * sd);
}

#[test]
fn monte_carlo_mean_equals_expected_without_stand_feedback() {
    // docs/maths.md#monte-carlo-driver (Fortin & Langevin 2012): without stand covariates and with
    // growth at the mean, each record's survival path is independent of the others, so the Monte
    // Carlo mean estimates the expected trajectory; SE from the replicate SD.
    let d = Dir::new();
    d.write(
        "s.toml",
        &model_toml(
            "kind = \"survival\"\nlink = \"logit\"\nperiod_years = 5",
            &[("(intercept)", 0.5), ("dbh", 0.12)],
        ),
    );
    d.write(
        "g.toml",
        &model_toml(
            "kind = \"growth\"\nresponse = \"ln_bai\"\nperiod_years = 5\nresidual_sd = 0.3",
            &[("(intercept)", 0.2), ("ln(dbh)", 1.0)],
        ),
    );
    let s = scenario_in(
        &d,
        &scenario_toml(40, 5, 300, "growth_residual = false", COHORT_40),
    );
    assert!(!s.depends_on_stand());
    let e = run_scenario(&s, &expected()).unwrap();
    let r = run_scenario(&s, &monte_carlo(2)).unwrap();
    for (ye, yr) in e.years.iter().zip(&r.years) {
        let want = ye.get(Metric::StemsPerHa).mean.unwrap();
        let got = yr.get(Metric::StemsPerHa);
        let se = got.sd.unwrap() / 300f64.sqrt();
        assert!(
            (got.mean.unwrap() - want).abs() <= 4.0 * se + 1e-9,
            "year {}: {} vs {want} (se {se})",
            ye.year,
            got.mean.unwrap()
        );
    }
}

#[test]
fn binomial_whole_stems_with_area_have_the_right_mean() {
    // docs/maths.md#binomial-survival-of-whole-stems: with area_ha, record i stands for e_i·area
    // stems; survivors ~ Binomial(n_i, p), so stems/ha after one period has mean 1000·p and, over
    // 40 records of 25 stems/ha on 0.4 ha (10 stems each), SE √(1000·p(1−p)/0.4 / R) per hectare.
    let d = Dir::new();
    let p = 0.7;
    d.write("s.toml", &constant_survival(p, 5));
    d.write("g.toml", &linear_growth(0.3, 0.0, 0.0, 5));
    let cohort = format!("{COHORT_40}\narea_ha = 0.4");
    let s = scenario_in(&d, &scenario_toml(5, 5, 400, "", &cohort));
    let r = run_scenario(&s, &monte_carlo(2)).unwrap();
    let got = r.years[1].get(Metric::StemsPerHa).mean.unwrap();
    let se = (1000.0 * p * (1.0 - p) / 0.4 / 400.0).sqrt();
    assert!((got - 700.0).abs() <= 4.0 * se, "{got} (se {se})");
}

#[test]
fn ten_year_steps_equal_the_five_year_projection_at_shared_years() {
    // docs/maths.md#the-projection-step: outputs sit at step boundaries of the same 5-year
    // sub-steps, and draws are keyed by sub-step, so both drivers give identical values at years
    // 10, 20, ….
    let d = Dir::new();
    d.write("s.toml", &w2_survival());
    d.write("g.toml", &w2_growth());
    let five = scenario_in(&d, &scenario_toml(40, 5, 20, "", COHORT_40));
    let ten = scenario_in(&d, &scenario_toml(40, 10, 20, "", COHORT_40));
    for o in [expected(), monte_carlo(1)] {
        let a = run_scenario(&five, &o).unwrap();
        let b = run_scenario(&ten, &o).unwrap();
        assert_eq!(b.years.len(), 5);
        for yb in &b.years {
            let ya = a.years.iter().find(|y| y.year == yb.year).unwrap();
            assert_eq!(ya.metrics, yb.metrics, "year {}", yb.year);
        }
    }
}
