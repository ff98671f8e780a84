//! `rank` on FIT-1M (`docs/performance.md#fit-1m`): 5 candidates, 10 folds grouped by stand, end to
//! end from the CSV (read once). Target (issue 4): under 15 s on the project machine.

use std::collections::BTreeMap;
use std::io::Write;
use std::time::Duration;

use criterion::{criterion_group, criterion_main, Criterion};
use rand::{RngExt, SeedableRng};
use rand_chacha::ChaCha8Rng;
use rand_distr::{Distribution, LogNormal};
use stemcast::data::{ColumnNames, Outcome, Units};
use stemcast::fit::rank::{rank, RankSpec};
use stemcast::fit::survival::{SurvivalResponse, SurvivalSpec};
use stemcast::fit::{DataOptions, Years};
use stemcast::model::file::IntervalKind;
use stemcast::model::glm::FitControl;
use stemcast::model::link::Link;

/// FIT-1M as CSV: stands of 200 trees, dbh lognormal (median 15 cm, geometric SD 1.8, redrawn
/// outside 1–120 cm), bal uniform 0–40, treatment a/b alternating, years 5, alive ~
/// Bernoulli(logistic(1.2 + 0.15·dbh − 0.0012·dbh² − 0.04·bal − 0.6·[b])).
fn fit_1m_csv(n: usize, seed: u64) -> Vec<u8> {
    let mut rng = ChaCha8Rng::seed_from_u64(seed);
    let dbh_dist = LogNormal::new(15f64.ln(), 1.8f64.ln()).expect("valid lognormal");
    let mut out = Vec::with_capacity(n * 32);
    out.extend_from_slice(b"stand,dbh,bal,treatment,alive,years\n");
    for i in 0..n {
        let dbh = loop {
            let d: f64 = dbh_dist.sample(&mut rng);
            if (1.0..=120.0).contains(&d) {
                break d;
            }
        };
        let bal = 40.0 * rng.random::<f64>();
        let b = i % 2;
        let eta = 1.2 + 0.15 * dbh - 0.0012 * dbh * dbh - 0.04 * bal - 0.6 * b as f64;
        let alive = rng.random::<f64>() < 1.0 / (1.0 + (-eta).exp());
        let level = if b == 1 { "b" } else { "a" };
        writeln!(
            out,
            "{},{dbh:.2},{bal:.3},{level},{},5",
            i / 200,
            u8::from(alive)
        )
        .expect("write to memory");
    }
    out
}

fn rank_fit_1m(c: &mut Criterion) {
    let dir = tempfile::tempdir().expect("temp dir");
    let path = dir.path().join("fit1m.csv");
    std::fs::write(&path, fit_1m_csv(1_000_000, 20_240_501)).expect("write CSV");
    let spec = RankSpec {
        plot_effect: None,
        survival: SurvivalSpec {
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
            predictors: String::new(),
            response: SurvivalResponse::Status {
                outcome: Outcome::Alive,
            },
            weights: None,
            offset: None,
            years: Years::Default,
            interval: IntervalKind::Fixed,
            link: Link::Logit,
        },
        candidates: [
            "dbh",
            "dbh, dbh^2",
            "dbh, dbh^2, bal",
            "dbh, dbh^2, bal, treatment",
            "ln(dbh), bal, treatment",
        ]
        .iter()
        .map(|s| s.to_string())
        .collect(),
        folds: 10,
        seed: 1,
        control: FitControl::default(),
    };
    let mut group = c.benchmark_group("rank");
    group
        .sample_size(10)
        .warm_up_time(Duration::from_millis(100))
        .measurement_time(Duration::from_secs(20));
    group.bench_function("FIT-1M 5 candidates 10 folds", |b| {
        b.iter(|| rank(&spec).map(|r| r.rows.len()))
    });
    group.finish();
}

criterion_group!(benches, rank_fit_1m);
criterion_main!(benches);
