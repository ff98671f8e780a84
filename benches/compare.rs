//! `compare` against one projection: PROJECT-W2 (`docs/performance.md#project-w2`; 1,000 records ×
//! 1,000 replicates × 10 sub-steps, Monte Carlo, dynamic BAL, stochastic growth and survival)
//! alone, then four W2-sized scenarios compared with common random numbers (one untouched, three
//! thinned at different years, so the trajectories really differ; thinned stands are cheaper to
//! step), and four unthinned copies (the full workload four times: the worst case for the ratio).
//! Target: compare ≤ 4.5 × one projection.

use std::path::Path;

#[path = "common/w2.rs"]
mod w2;

use criterion::{criterion_group, criterion_main, Criterion};
use stemcast::project::{compare_scenarios, run_scenario, CompareOptions, RunOptions};
use stemcast::scenario::Scenario;

fn scenario(dir: &Path, name: &str, actions: &str) -> Scenario {
    let text = format!(
        "name = \"{name}\"\nhorizon_years = 50\nstep_years = 5\nreplicates = 1000\nseed = 1\n\
[models]\nsurvival = \"s.toml\"\ngrowth = \"g.toml\"\n\
[uncertainty]\nprocess = true\nparameters = false\ngrowth_residual = true\n\
[cohort]\ntrees = \"trees.csv\"\n{actions}"
    );
    let path = dir.join(format!("{name}.toml"));
    std::fs::write(&path, text).expect("write scenario");
    Scenario::read(&path).expect("valid W2 scenario")
}

fn compare(c: &mut Criterion) {
    let dir = tempfile::tempdir().expect("temp dir");
    let d = dir.path();
    w2::write_inputs(d);
    let thin = |year: u32| {
        format!(
            "[[actions]]\nyear = {year}\nthin = {{ from = \"below\", to_stems_per_ha = 900 }}\n"
        )
    };
    let scenarios = vec![
        scenario(d, "w2", ""),
        scenario(d, "thin10", &thin(10)),
        scenario(d, "thin20", &thin(20)),
        scenario(d, "thin30", &thin(30)),
    ];
    let mut g = c.benchmark_group("compare_w2");
    g.sample_size(10)
        .warm_up_time(std::time::Duration::from_millis(500))
        .measurement_time(std::time::Duration::from_secs(4));
    g.bench_function("one_projection", |b| {
        b.iter(|| run_scenario(&scenarios[0], &RunOptions::default()).expect("projection"))
    });
    g.bench_function("compare_4_scenarios", |b| {
        b.iter(|| {
            compare_scenarios(&scenarios, &CompareOptions::default(), &|_, _| {})
                .expect("comparison")
        })
    });
    // Worst case for the ratio: four scenarios with the unthinned workload (names differ only).
    let copies = vec![
        scenarios[0].clone(),
        scenario(d, "copy1", ""),
        scenario(d, "copy2", ""),
        scenario(d, "copy3", ""),
    ];
    g.bench_function("compare_4_unthinned_copies", |b| {
        b.iter(|| {
            compare_scenarios(&copies, &CompareOptions::default(), &|_, _| {}).expect("comparison")
        })
    });
    g.finish();
}

/// The ratio compare ÷ one projection measured in alternation, so that load from other
/// processes (which shifts whole criterion groups) hits both sides alike; the median of five.
fn interleaved_ratio(c: &mut Criterion) {
    let _ = c;
    let dir = tempfile::tempdir().expect("temp dir");
    let d = dir.path();
    w2::write_inputs(d);
    let s: Vec<Scenario> = ["w2", "b", "c", "d"]
        .iter()
        .map(|n| scenario(d, n, ""))
        .collect();
    let mut ratios: Vec<f64> = (0..5)
        .map(|_| {
            let t = std::time::Instant::now();
            run_scenario(&s[0], &RunOptions::default()).expect("projection");
            let one = t.elapsed().as_secs_f64();
            let t = std::time::Instant::now();
            compare_scenarios(&s, &CompareOptions::default(), &|_, _| {}).expect("comparison");
            t.elapsed().as_secs_f64() / one
        })
        .collect();
    ratios.sort_by(f64::total_cmp);
    println!(
        "compare_w2/interleaved ratio (4 unthinned scenarios ÷ one projection): median {:.2}, range {:.2}–{:.2} (target ≤ 4.5)",
        ratios[2], ratios[0], ratios[4]
    );
}

criterion_group!(benches, compare, interleaved_ratio);
criterion_main!(benches);
