//! Measurement histories (docs/histories.md): pairing into intervals, derived covariates per
//! plot occasion, ingrowth, status codes, duplicates, missing trees, screening, and the fits
//! and rankings read from a history.
//!
//! The invented agency-style data in tests/fixtures/histories/ were made by `simulate.py`
//! there, which also paired them into `pairs.csv` and counted ingrowth by its own reading of
//! the rules (not by stemcast); `reference.py` computed the growth-ranking numbers with NumPy
//! and SciPy. See that folder's README.

mod errors;
mod fits;
mod pairing;
mod screening;

use std::path::PathBuf;

/// A file of tests/fixtures/histories as a path string.
pub fn fixture(name: &str) -> String {
    PathBuf::from(env!("CARGO_MANIFEST_DIR"))
        .join("tests/fixtures/histories")
        .join(name)
        .display()
        .to_string()
}

/// The flags that read the invented history.
pub const HISTORY: [&str; 17] = [
    "--history",
    "--stand",
    "PLOT",
    "--tree",
    "TREE_NO",
    "--time-col",
    "MEAS_YR",
    "--dbh",
    "DBH_IN",
    "--status",
    "STATUS",
    "--status-codes",
    "1=alive,2=dead,3=cut",
    "--expansion",
    "TPA",
    "--units",
    "imperial",
];

/// The flags that read the script's pair file of the same data.
pub const PAIRS: [&str; 18] = [
    "--stand",
    "PLOT_PERIOD",
    "--plot",
    "PLOT",
    "--tree",
    "TREE_NO",
    "--dbh",
    "DBH1_IN",
    "--status",
    "STATUS2",
    "--status-codes",
    "1=alive,2=dead,3=cut",
    "--years-col",
    "MEAS_INT",
    "--expansion",
    "TPA",
    "--units",
    "imperial",
];

/// Relative difference, for comparing two fits that should agree to rounding.
pub fn rel(a: f64, b: f64) -> f64 {
    (a - b).abs() / b.abs().max(1e-300)
}
