//! `stemcast compare`: the files it writes, and bad input refused (exit 2) before anything
//! runs or is written.

use crate::common::{stderr, stdout, Sandbox};

/// A scenario file using `s.toml`/`g.toml` (PROJECT-W2's models, `docs/performance.md#project-w2`)
/// on a small cohort.
fn scenario(name: &str, horizon: u32, step: u32, extra: &str) -> String {
    format!(
        "name = \"{name}\"\nhorizon_years = {horizon}\nstep_years = {step}\nreplicates = 20\nseed = 5\n\n\
         [models]\nsurvival = \"s.toml\"\ngrowth = \"g.toml\"\n\n\
         [cohort]\nstems_per_ha = 1600\nrecords = 80\n\
         dbh = {{ distribution = \"lognormal\", median = 8.0, gsd = 1.5 }}\n{extra}"
    )
}

fn sandbox() -> Sandbox {
    let s = Sandbox::new();
    s.write("s.toml", &crate::project_common::w2_survival());
    s.write("g.toml", &crate::project_common::w2_growth());
    s
}

fn lines(p: &std::path::Path) -> Vec<String> {
    std::fs::read_to_string(p)
        .expect("output file")
        .lines()
        .map(str::to_string)
        .collect()
}

#[test]
fn compare_writes_long_summaries_and_paired_differences() {
    let s = sandbox();
    s.write("a.toml", &scenario("open", 20, 5, ""));
    s.write(
        "b.toml",
        &scenario(
            "thinned",
            20,
            5,
            "\n[[actions]]\nyear = 10\nthin = { from = \"below\", to_stems_per_ha = 600 }\n",
        ),
    );
    let o = s.run(&[
        "compare",
        "a.toml",
        "b.toml",
        "--out",
        "cmp",
        "--replicates",
        "12",
        "--threads",
        "2",
    ]);
    assert!(o.status.success(), "{}", stderr(&o));
    assert!(stdout(&o).contains("12 paired replicates, seed 5"));
    let dir = s.path("cmp");
    for f in [
        "summary.csv",
        "classes.csv",
        "harvest.csv",
        "differences.csv",
        "run.json",
        "survival.svg",
        "stems.svg",
        "difference_stems.svg",
        "difference_survival.svg",
        "distributions.svg",
        "report.html",
    ] {
        assert!(dir.join(f).is_file(), "{f} written");
    }
    let summary = lines(&dir.join("summary.csv"));
    assert_eq!(
        summary[0],
        "scenario,driver,year,age,metric,mean,sd,p05,p50,p95"
    );
    // One header, then 2 scenarios × 5 years (0, 5, …, 20) × 7 metrics.
    assert_eq!(summary.len(), 1 + 2 * 5 * 7);
    assert!(summary[1].starts_with("open,monte_carlo,0,"));
    assert!(summary[36].starts_with("thinned,monte_carlo,0,"));
    let classes = lines(&dir.join("classes.csv"));
    assert_eq!(
        classes
            .iter()
            .filter(|l| l.starts_with("scenario,"))
            .count(),
        1
    );
    assert!(classes.iter().any(|l| l.starts_with("thinned,")));
    let diffs = lines(&dir.join("differences.csv"));
    assert_eq!(
        diffs[0],
        "year,metric,scenario,baseline,mean_difference,p05,p95"
    );
    // 5 years × 7 metrics for the one non-baseline scenario.
    assert_eq!(diffs.len(), 1 + 5 * 7);
    // Year 0 precedes every action: identical draws, so exactly zero (derived analytically).
    assert_eq!(diffs[1], "0,stems_per_ha,thinned,open,0,0,0");
    let thinned_at_10: Vec<&str> = diffs
        .iter()
        .find(|l| l.starts_with("10,stems_per_ha,"))
        .expect("year 10 row")
        .split(',')
        .collect();
    let mean: f64 = thinned_at_10[4].parse().unwrap();
    assert!(mean < 0.0, "thinning to 600/ha lowers stems/ha: {mean}");
    let run: serde_json::Value =
        serde_json::from_slice(&std::fs::read(dir.join("run.json")).unwrap()).unwrap();
    assert_eq!(run["seed"], 5);
    assert_eq!(run["replicates"], 12);
    assert_eq!(run["baseline"], "open");
    assert_eq!(run["scenarios"].as_array().unwrap().len(), 2);
}

/// Runs `compare` on the given scenario texts; asserts exit 2, a message containing `needle`
/// and no output folder.
fn refused(files: &[(&str, String)], needle: &str) {
    let s = sandbox();
    for (name, text) in files {
        s.write(name, text);
    }
    let mut args = vec!["compare"];
    args.extend(files.iter().map(|(n, _)| *n));
    args.extend(["--out", "cmp"]);
    let o = s.run(&args);
    assert_eq!(o.status.code(), Some(2), "{}", stderr(&o));
    assert!(stderr(&o).contains(needle), "{}", stderr(&o));
    assert!(!s.path("cmp").exists(), "nothing written");
}

#[test]
fn fewer_than_two_scenarios_are_refused() {
    refused(
        &[("a.toml", scenario("a", 20, 5, ""))],
        "compare needs at least two scenario files",
    );
}

#[test]
fn differing_horizons_or_steps_are_refused() {
    refused(
        &[
            ("a.toml", scenario("a", 20, 5, "")),
            ("b.toml", scenario("b", 30, 5, "")),
        ],
        "b.toml: horizon_years = 30, but the baseline",
    );
    refused(
        &[
            ("a.toml", scenario("a", 20, 5, "")),
            ("b.toml", scenario("b", 20, 10, "")),
        ],
        "b.toml: step_years = 10, but the baseline",
    );
}

#[test]
fn duplicate_names_are_refused() {
    refused(
        &[
            ("a.toml", scenario("same", 20, 5, "")),
            ("b.toml", scenario("other", 20, 5, "")),
            ("c.toml", scenario("same", 20, 5, "")),
        ],
        "two scenarios are named \"same\"",
    );
}
