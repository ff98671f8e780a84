//! The PROJECT-W2 models and tree list (`docs/performance.md#project-w2`), written into a
//! folder for the benches.

use std::path::Path;

const SURVIVAL: &str = "kind = \"survival\"\nlink = \"logit\"\nperiod_years = 5\n\
[[coefficients]]\nterm = \"(intercept)\"\nestimate = 1.2\n\
[[coefficients]]\nterm = \"dbh\"\nestimate = 0.15\n\
[[coefficients]]\nterm = \"dbh^2\"\nestimate = -0.0012\n\
[[coefficients]]\nterm = \"bal\"\nestimate = -0.04\n";

fn growth() -> String {
    format!(
        "kind = \"growth\"\nresponse = \"ln_bai\"\nperiod_years = 5\nresidual_sd = 0.4\n\
[[coefficients]]\nterm = \"(intercept)\"\nestimate = {:?}\n\
[[coefficients]]\nterm = \"ln(dbh)\"\nestimate = 1.1\n\
[[coefficients]]\nterm = \"dbh^2\"\nestimate = -0.0005\n\
[[coefficients]]\nterm = \"bal\"\nestimate = -0.02\n",
        -0.5 + (std::f64::consts::PI / 4.0).ln()
    )
}

/// Write `s.toml`, `g.toml` and `trees.csv` (the W2 tree list of tests/fixtures) into `dir`.
pub fn write_inputs(dir: &Path) {
    let trees = Path::new(env!("CARGO_MANIFEST_DIR"))
        .join("tests/fixtures/projection/projection_w2_trees.csv");
    std::fs::write(dir.join("s.toml"), SURVIVAL).expect("write survival model");
    std::fs::write(dir.join("g.toml"), growth()).expect("write growth model");
    std::fs::copy(trees, dir.join("trees.csv")).expect("copy tree list");
}
