//! Regenerate the bundled demo data: `cargo run --example simulate_trial > scenarios/trial.csv`.

fn main() {
    print!(
        "{}",
        stemcast::demo::simulate::simulate_trial(stemcast::demo::simulate::TRIAL_SEED)
    );
}
