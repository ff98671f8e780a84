//! Fitting a survival GLMM (docs/mixed-models.md): 100,000 trees in 2,000 plots of 50, logit,
//! random plot intercept, adaptive Gauss–Hermite quadrature with 15 nodes, started from the
//! GLM (whose fit is included). Target: under 2 s per fit.
//!
//! Measured on the two-core development machine (load average about 5 from other work):
//! median 0.38 s (criterion, 10 samples), σ̂ = 0.607272 (true 0.6), 5 quasi-Newton
//! iterations. R 4.2.2 lme4 1.1-31 `glmer(alive ~ dbh + bal + (1 | plot), binomial)` on the
//! same data written to CSV took 31.8 s with `nAGQ = 1` and 62.0 s with `nAGQ = 15` on the
//! same machine at the same time, both with convergence warnings (σ̂ = 0.6072729 for
//! nAGQ = 15).

use std::time::Duration;

use criterion::{criterion_group, criterion_main, Criterion};
use ndarray::ArrayView1;
use stemcast::model::glm::{fit_glm, GlmData, GlmOptions};
use stemcast::model::mixed::simulate::{simulate_glmm, GlmmSimulation};
use stemcast::model::mixed::{fit_glmm, GlmmColumns, GlmmData, GlmmOptions};

fn glmm_100k(c: &mut Criterion) {
    let spec = GlmmSimulation {
        plots: 2_000,
        trees: 50,
        ..GlmmSimulation::default()
    };
    let sim = simulate_glmm(&spec, 20_250_611).expect("simulation");
    let terms: Vec<String> = ["(intercept)", "dbh", "bal"].map(String::from).to_vec();
    let fit = || {
        let glm = fit_glm(
            &GlmData {
                x: sim.x.view(),
                terms: &terms,
                y: ArrayView1::from(&sim.y),
                trials: None,
                weights: None,
                offset: None,
            },
            &GlmOptions::default(),
        )
        .expect("GLM");
        let data = GlmmData::new(
            spec.family,
            &GlmmColumns {
                x: sim.x.view(),
                y: &sim.y,
                trials: None,
                weights: None,
                offset: None,
                years: &[],
                plots: &sim.plots,
            },
        )
        .expect("data");
        fit_glmm(
            &data,
            &glm.coefficients,
            &glm.covariance,
            &GlmmOptions::default(),
        )
        .expect("GLMM")
    };
    let once = fit();
    eprintln!(
        "GLMM 100k: sd {:.4} (true {}), beta {:?}, {} iterations",
        once.sd, spec.sd, once.coefficients, once.iterations
    );
    let mut group = c.benchmark_group("mixed");
    group
        .sample_size(10)
        .warm_up_time(Duration::from_millis(500))
        .measurement_time(Duration::from_secs(5));
    group.bench_function("GLMM 100k trees, 2000 plots, AGQ 15", |b| {
        b.iter(|| fit().log_likelihood)
    });
    group.finish();
}

criterion_group!(benches, glmm_100k);
criterion_main!(benches);
