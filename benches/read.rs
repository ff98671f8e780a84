//! Reading the FIT-1M remeasurement file (`docs/performance.md#fit-1m`): 1,000,000 rows with
//! columns stand, tree, dbh, bal, treatment, years, alive. Target
//! (`docs/performance.md#targets`): well under 1 s on one core.
//!
//! The file is generated, seeded, into a temporary folder before timing.

use std::io::Write;
use std::path::Path;

use criterion::{criterion_group, criterion_main, Criterion};
use stemcast::data::{
    load_remeasurement, read_table, DerivedCovariate, Purpose, RemeasureSpec, Required,
    TableOptions,
};

const ROWS: usize = 1_000_000;
const TREES_PER_STAND: usize = 200;

/// SplitMix64: a small seeded generator, enough to make bench data reproducible.
struct SplitMix(u64);

impl SplitMix {
    fn next_u64(&mut self) -> u64 {
        self.0 = self.0.wrapping_add(0x9E37_79B9_7F4A_7C15);
        let mut z = self.0;
        z = (z ^ (z >> 30)).wrapping_mul(0xBF58_476D_1CE4_E5B9);
        z = (z ^ (z >> 27)).wrapping_mul(0x94D0_49BB_1331_11EB);
        z ^ (z >> 31)
    }

    /// Uniform on (0, 1).
    fn uniform(&mut self) -> f64 {
        ((self.next_u64() >> 11) as f64 + 0.5) / (1u64 << 53) as f64
    }

    /// Standard normal by Box–Muller.
    fn normal(&mut self) -> f64 {
        let (u, v) = (self.uniform(), self.uniform());
        (-2.0 * u.ln()).sqrt() * (std::f64::consts::TAU * v).cos()
    }
}

/// Write FIT-1M as in `docs/performance.md#fit-1m` (lognormal dbh, median 15 cm, geometric SD 1.8,
/// truncated to 1–120 cm; bal uniform 0–40; treatment a/b; years 5; alive Bernoulli(logistic(η))).
fn write_fit_1m(path: &Path) {
    let file = std::fs::File::create(path).unwrap();
    let mut out = std::io::BufWriter::new(file);
    let mut rng = SplitMix(20_261_202);
    writeln!(out, "stand,tree,dbh,bal,treatment,years,alive").unwrap();
    for i in 0..ROWS {
        let dbh = loop {
            let d = 15.0 * (1.8f64.ln() * rng.normal()).exp();
            if (1.0..=120.0).contains(&d) {
                break d;
            }
        };
        let bal = 40.0 * rng.uniform();
        let b = i % 2 == 1;
        let eta = 1.2 + 0.15 * dbh - 0.0012 * dbh * dbh - 0.04 * bal - if b { 0.6 } else { 0.0 };
        let alive = rng.uniform() < 1.0 / (1.0 + (-eta).exp());
        writeln!(
            out,
            "{},{},{:.1},{:.3},{},5,{}",
            i / TREES_PER_STAND + 1,
            i % TREES_PER_STAND + 1,
            dbh,
            bal,
            if b { "b" } else { "a" },
            u8::from(alive)
        )
        .unwrap();
    }
    out.flush().unwrap();
}

fn read(c: &mut Criterion) {
    let dir = tempfile::tempdir().unwrap();
    let path = dir.path().join("fit1m.csv");
    write_fit_1m(&path);

    let mut group = c.benchmark_group("read FIT-1M");
    group
        .sample_size(10)
        .warm_up_time(std::time::Duration::from_secs(1))
        .measurement_time(std::time::Duration::from_secs(3));
    group.bench_function("read_table (all columns)", |b| {
        b.iter(|| read_table(&path, &TableOptions::default()).unwrap())
    });
    let spec = RemeasureSpec {
        purpose: Purpose::Survival,
        required: ["dbh", "treatment"]
            .iter()
            .map(|c| Required::new(*c, "term"))
            .collect(),
        derived: vec![DerivedCovariate::Bal],
        ..RemeasureSpec::default()
    };
    group.bench_function("load_remeasurement (survival: dbh, bal, treatment)", |b| {
        b.iter(|| load_remeasurement(&path, &spec).unwrap())
    });
    group.finish();
}

criterion_group!(benches, read);
criterion_main!(benches);
