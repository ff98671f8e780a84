//! Fitting FIT-1M (`docs/performance.md#fit-1m`): 1,000,000 records, logit on dbh, dbh², bal,
//! treatment, data in memory, one core. Target: under 0.2 s per fit.

use std::time::Duration;

use criterion::{criterion_group, criterion_main, Criterion};
use stemcast::model::glm::{fit_glm, GlmData, GlmOptions};

#[path = "../tests/glm_common/fit1m.rs"]
mod fit1m;

fn fit_1m(c: &mut Criterion) {
    let (x, y) = fit1m::generate(1_000_000, 20_240_501);
    let terms = fit1m::terms();
    let data = GlmData {
        x: x.view(),
        terms: &terms,
        y: y.view(),
        trials: None,
        weights: None,
        offset: None,
    };
    let opts = GlmOptions::default();
    let mut group = c.benchmark_group("fit");
    group
        .sample_size(10)
        .warm_up_time(Duration::from_millis(500))
        .measurement_time(Duration::from_secs(3));
    group.bench_function("FIT-1M logit", |b| {
        b.iter(|| fit_glm(&data, &opts).map(|f| f.iterations))
    });
    group.finish();
}

criterion_group!(benches, fit_1m);
criterion_main!(benches);
