//! `stemcast demo` runs the whole chain from any folder (its data are embedded) and writes
//! data, model files and projections.

mod common;

use common::{stderr, stdout, Sandbox};

#[test]
fn demo_runs_from_an_empty_folder_and_writes_everything() {
    let sb = Sandbox::new();
    let out = sb.run(&["demo", "--out", "d"]);
    assert_eq!(out.status.code(), Some(0), "{}", stderr(&out));
    let text = stdout(&out);
    for needle in [
        "survival fit",
        "growth fit",
        "projection \"released\"",
        "projection \"unreleased\"",
        "Caution",
    ] {
        assert!(text.contains(needle), "missing `{needle}` in:\n{text}");
    }
    for file in [
        "d/trial.csv",
        "d/models/survival.toml",
        "d/models/growth.toml",
        "d/scenarios/released.toml",
        "d/projections/released/summary.csv",
        "d/projections/unreleased/classes.csv",
        "d/projections/unreleased/run.json",
    ] {
        assert!(sb.path(file).exists(), "{file} missing");
    }
    // The bundled data written out are byte-identical to the embedded copy.
    let written = std::fs::read_to_string(sb.path("d/trial.csv")).unwrap();
    assert_eq!(written, stemcast::demo::TRIAL_CSV);
}
