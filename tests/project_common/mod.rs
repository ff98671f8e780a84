//! Helpers shared by the projection and scenario tests (tests/project_*.rs,
//! tests/scenario_*.rs): temp folders with model and scenario files.
#![allow(dead_code)]

use std::path::{Path, PathBuf};

/// A temp folder holding one test's files.
pub struct Dir {
    pub dir: tempfile::TempDir,
}

impl Dir {
    pub fn new() -> Dir {
        Dir {
            dir: tempfile::tempdir().expect("temp dir"),
        }
    }

    pub fn path(&self) -> &Path {
        self.dir.path()
    }

    /// Write `text` to `name` inside the folder and return its path.
    pub fn write(&self, name: &str, text: &str) -> PathBuf {
        let p = self.dir.path().join(name);
        if let Some(parent) = p.parent() {
            std::fs::create_dir_all(parent).expect("mkdir");
        }
        std::fs::write(&p, text).expect("write");
        p
    }
}

/// A model file from (term, estimate) pairs, with extra header lines.
pub fn model_toml(header: &str, coefs: &[(&str, f64)]) -> String {
    let mut s = header.to_string();
    s.push('\n');
    for (t, b) in coefs {
        s.push_str(&format!(
            "[[coefficients]]\nterm = {}\nestimate = {b:?}\n",
            toml_string(t)
        ));
    }
    s
}

fn toml_string(t: &str) -> String {
    format!("\"{}\"", t.replace('\\', "\\\\").replace('"', "\\\""))
}

/// The PROJECT-W2 survival model (`docs/performance.md#project-w2`), built exactly as
/// conformance.py `check_w2` does.
pub fn w2_survival() -> String {
    model_toml(
        "kind = \"survival\"\nlink = \"logit\"\nperiod_years = 5",
        &[
            ("(intercept)", 1.2),
            ("dbh", 0.15),
            ("dbh^2", -0.0012),
            ("bal", -0.04),
        ],
    )
}

/// The PROJECT-W2 growth model (`docs/performance.md#project-w2`).
pub fn w2_growth() -> String {
    model_toml(
        "kind = \"growth\"\nresponse = \"ln_bai\"\nperiod_years = 5\nresidual_sd = 0.4",
        &[
            ("(intercept)", -0.5 + (std::f64::consts::PI / 4.0).ln()),
            ("ln(dbh)", 1.1),
            ("dbh^2", -0.0005),
            ("bal", -0.02),
        ],
    )
}

/// The fixture folder.
pub fn fixtures() -> PathBuf {
    Path::new(env!("CARGO_MANIFEST_DIR")).join("tests/fixtures/projection")
}

/// Relative comparison |a − b| ≤ rtol·|b| + atol.
pub fn close(a: f64, b: f64, rtol: f64, atol: f64) -> bool {
    (a - b).abs() <= atol + rtol * b.abs()
}

/// A scenario file: name, horizon, step, replicates, seed, extra top-level lines, the models
/// `s.toml` and `g.toml`, the given uncertainty and cohort tables.
pub fn scenario_toml(
    horizon: u32,
    step: u32,
    replicates: u32,
    uncertainty: &str,
    cohort: &str,
) -> String {
    format!(
        "name = \"t\"\nhorizon_years = {horizon}\nstep_years = {step}\nreplicates = {replicates}\nseed = 42\n\n[models]\nsurvival = \"s.toml\"\ngrowth = \"g.toml\"\n\n[uncertainty]\n{uncertainty}\n\n[cohort]\n{cohort}\n"
    )
}

/// Survival model with a constant probability `p` per `period` years (logit intercept).
pub fn constant_survival(p: f64, period: u32) -> String {
    model_toml(
        &format!("kind = \"survival\"\nlink = \"logit\"\nperiod_years = {period}"),
        &[("(intercept)", (p / (1.0 - p)).ln())],
    )
}

/// Growth model: annual increment `cm_per_year` + `slope`·dbh, residual SD `sd`.
pub fn linear_growth(cm_per_year: f64, slope: f64, sd: f64, period: u32) -> String {
    model_toml(
        &format!("kind = \"growth\"\nresponse = \"annual_increment\"\nperiod_years = {period}\nresidual_sd = {sd:?}"),
        &[("(intercept)", cm_per_year), ("dbh", slope)],
    )
}

/// Read a scenario written into `d` as `sc.toml`.
pub fn scenario_in(d: &Dir, text: &str) -> stemcast::scenario::Scenario {
    let p = d.write("sc.toml", text);
    stemcast::scenario::Scenario::read(&p).expect("valid scenario")
}

/// Options for the expected driver.
pub fn expected() -> stemcast::project::RunOptions {
    stemcast::project::RunOptions {
        expected: true,
        ..Default::default()
    }
}

/// Options for Monte Carlo with `threads`.
pub fn monte_carlo(threads: usize) -> stemcast::project::RunOptions {
    stemcast::project::RunOptions {
        threads: Some(threads),
        ..Default::default()
    }
}
