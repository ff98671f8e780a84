//! PROJECT-W2 (`docs/performance.md#project-w2`): 1,000 records × 1,000 replicates × 10 sub-steps,
//! Monte Carlo with dynamic BAL, stochastic growth and random survival, parameters off; at 1 and 2
//! threads. Throughput = records × replicates × sub-steps / time.

use std::path::Path;

#[path = "common/w2.rs"]
mod w2;

use criterion::{criterion_group, criterion_main, Criterion, Throughput};
use stemcast::project::{run_scenario, RunOptions};
use stemcast::scenario::Scenario;

const SCENARIO: &str =
    "name = \"w2\"\nhorizon_years = 50\nstep_years = 5\nreplicates = 1000\nseed = 1\n\
[models]\nsurvival = \"s.toml\"\ngrowth = \"g.toml\"\n\
[uncertainty]\nprocess = true\nparameters = false\ngrowth_residual = true\n\
[cohort]\ntrees = \"trees.csv\"\n";

fn scenario(dir: &Path) -> Scenario {
    w2::write_inputs(dir);
    std::fs::write(dir.join("w2.toml"), SCENARIO).expect("write scenario");
    Scenario::read(&dir.join("w2.toml")).expect("valid W2 scenario")
}

fn w2(c: &mut Criterion) {
    let dir = tempfile::tempdir().expect("temp dir");
    let s = scenario(dir.path());
    let mut g = c.benchmark_group("project_w2");
    g.sample_size(10)
        .warm_up_time(std::time::Duration::from_millis(500))
        .measurement_time(std::time::Duration::from_secs(2))
        .throughput(Throughput::Elements(1_000 * 1_000 * 10));
    for threads in [1, 2] {
        let o = RunOptions {
            threads: Some(threads),
            ..RunOptions::default()
        };
        g.bench_function(format!("monte_carlo_{threads}_threads"), |b| {
            b.iter(|| run_scenario(&s, &o).expect("projection"))
        });
    }
    g.finish();
}

criterion_group!(benches, w2);
criterion_main!(benches);
