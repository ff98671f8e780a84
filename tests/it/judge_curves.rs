//! The fitted survival curves behind `--calibration-svg`, through the library.

use std::collections::BTreeMap;

use stemcast::data::{ColumnNames, Outcome, Units};
use stemcast::fit::survival::{fit_survival_with, FitOptions, SurvivalResponse, SurvivalSpec};
use stemcast::fit::{DataOptions, Years};
use stemcast::model::file::IntervalKind;
use stemcast::model::link::Link;

fn trees() -> String {
    let mut csv = String::from("stand,tree,dbh,grp,bal,alive,years\n");
    for i in 0..60u32 {
        let dbh = 5.0 + f64::from(i % 20) * 1.5;
        let grp = ["a", "b", "c"][(i % 3) as usize];
        let bal = f64::from(i % 7) * 3.0;
        let alive = u8::from((i * 37 + 11) % 10 < 7 || dbh > 25.0);
        csv.push_str(&format!("{},{i},{dbh},{grp},{bal},{alive},5\n", i / 10));
    }
    csv
}

fn logistic(x: f64) -> f64 {
    1.0 / (1.0 + (-x).exp())
}

#[test]
fn curves_follow_the_coefficients_per_level_with_other_covariates_at_their_mean() {
    let dir = tempfile::tempdir().unwrap();
    let path = dir.path().join("trees.csv");
    std::fs::write(&path, trees()).unwrap();
    let spec = SurvivalSpec {
        data: DataOptions {
            path,
            names: ColumnNames::default(),
            use_columns: vec!["bal".into()],
            categorical: Vec::new(),
            references: BTreeMap::new(),
            intercept: true,
            units: Units::Metric,
            input: Default::default(),
        },
        predictors: "dbh, grp, bal".into(),
        response: SurvivalResponse::Status {
            outcome: Outcome::Alive,
        },
        weights: None,
        offset: None,
        years: Years::Default,
        interval: IntervalKind::Fixed,
        link: Link::Logit,
    };
    let fit = fit_survival_with(
        &spec,
        &FitOptions {
            curves: true,
            ..FitOptions::default()
        },
    )
    .unwrap();
    let curves = fit.curves.as_ref().unwrap();
    assert_eq!(curves.by.as_deref(), Some("grp"));
    assert_eq!(curves.period, "over 5 years");
    let b = &fit.glm.coefficients; // (intercept), dbh, grp=b, grp=c, bal
    assert_eq!(
        fit.glm.terms,
        ["(intercept)", "dbh", "grp=b", "grp=c", "bal"]
    );
    // Mean bal over the 60 records of trees(): (i mod 7)·3 averaged over i = 0..59.
    let mean_bal = (0..60).map(|i| f64::from(i % 7) * 3.0).sum::<f64>() / 60.0;
    // Derived analytically: P = logistic(b0 + b1·dbh + b_level + b4·mean bal), with the
    // reference level a contributing 0.
    for (level, points) in &curves.curves {
        let shift = match level.as_str() {
            "a" => 0.0,
            "b" => b[2],
            "c" => b[3],
            other => panic!("unexpected level {other}"),
        };
        assert_eq!(points.len(), 120);
        assert_eq!(points[0].0, 5.0);
        assert_eq!(points[119].0, 33.5);
        for &(d, p) in points {
            let want = logistic(b[0] + b[1] * d + shift + b[4] * mean_bal);
            assert!((p - want).abs() < 1e-12, "{level} at {d}: {p} vs {want}");
        }
    }
}
