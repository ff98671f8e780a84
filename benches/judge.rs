//! The judge workloads: the Firth fit on 100,000 records (target under 2 s, penalised
//! likelihood-ratio tests included) and the annualised survival fit on 1,000,000 records with
//! remeasurement intervals of 3–10 years (target under 1 s). Data generated from seeds, one
//! core.

use std::time::Duration;

use criterion::{criterion_group, criterion_main, Criterion};
use ndarray::{Array1, Array2};
use rand::{RngExt, SeedableRng};
use rand_chacha::ChaCha8Rng;
use stemcast::model::annualized::fit_annualized;
use stemcast::model::firth::fit_firth;
use stemcast::model::glm::GlmData;

#[path = "../tests/glm_common/fit1m.rs"]
mod fit1m;

/// Annual survival logit of the annualised workload (FIT-1M's predictors, a higher intercept
/// so that survival over 10 years stays common).
const ANNUAL_BETA: [f64; 5] = [3.0, 0.15, -0.0012, -0.04, -0.6];

/// The FIT-1M design with whole-year intervals uniform on 3–10 and outcomes drawn from
/// P = p^L, p = logistic(xᵀβ).
fn annualized_workload(n: usize, seed: u64) -> (Array2<f64>, Array1<f64>, Array1<f64>) {
    let (x, _) = fit1m::generate(n, seed);
    let mut rng = ChaCha8Rng::seed_from_u64(seed + 1);
    let mut y = Array1::zeros(n);
    let mut years = Array1::zeros(n);
    for (i, row) in x.rows().into_iter().enumerate() {
        let eta: f64 = row.iter().zip(ANNUAL_BETA).map(|(v, b)| v * b).sum();
        let l = f64::from(rng.random_range(3u32..=10));
        let survive = (1.0 / (1.0 + (-eta).exp())).powf(l);
        years[i] = l;
        y[i] = f64::from(u8::from(rng.random::<f64>() < survive));
    }
    (x, y, years)
}

fn judge(c: &mut Criterion) {
    let terms = fit1m::terms();
    let mut group = c.benchmark_group("judge");
    group
        .sample_size(10)
        .warm_up_time(Duration::from_millis(500))
        .measurement_time(Duration::from_secs(3));

    let (x, y) = fit1m::generate(100_000, 20_261_202);
    let data = GlmData {
        x: x.view(),
        terms: &terms,
        y: y.view(),
        trials: None,
        weights: None,
        offset: None,
    };
    let fit = fit_firth(&data).expect("the Firth workload fits");
    assert_eq!(fit.plr_p_values.len(), 5);
    group.bench_function("Firth 100k", |b| {
        b.iter(|| fit_firth(&data).map(|f| f.iterations))
    });

    let (x, y, years) = annualized_workload(1_000_000, 20_261_203);
    let data = GlmData {
        x: x.view(),
        terms: &terms,
        y: y.view(),
        trials: None,
        weights: None,
        offset: None,
    };
    let fit = fit_annualized(&data, years.view()).expect("the annualised workload fits");
    for (b, truth) in fit
        .coefficients
        .iter()
        .zip(fit.std_errors.iter().zip(ANNUAL_BETA))
    {
        // The generating coefficients are recovered within 5 standard errors.
        assert!((b - truth.1).abs() < 5.0 * truth.0, "{b} vs {}", truth.1);
    }
    group.bench_function("annualised 1M", |b| {
        b.iter(|| fit_annualized(&data, years.view()).map(|f| f.iterations))
    });
    group.finish();
}

criterion_group!(benches, judge);
criterion_main!(benches);
