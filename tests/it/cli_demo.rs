//! `stemcast demo` runs the whole chain from any folder (its data are embedded) and writes
//! data, model files and projections.

use crate::browser::{render, Rendered};
use crate::common::{stderr, stdout, Sandbox};

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
        "d/scenarios/density_limit.toml",
        "d/comparison/summary.csv",
        "d/comparison/differences.csv",
        "d/comparison/harvest.csv",
        "d/comparison/classes.csv",
        "d/comparison/run.json",
        "d/comparison/report.html",
    ] {
        assert!(sb.path(file).exists(), "{file} missing");
    }
    // The bundled data written out are byte-identical to the embedded copy.
    let written = std::fs::read_to_string(sb.path("d/trial.csv")).unwrap();
    assert_eq!(written, stemcast::demo::TRIAL_CSV);
}

#[test]
fn demo_report_opens_in_a_browser_with_its_charts() {
    let sb = Sandbox::new();
    let out = sb.run(&["demo", "--out", "d"]);
    assert_eq!(out.status.code(), Some(0), "{}", stderr(&out));
    let html = sb.path("d/comparison/report.html");
    match render(&html, &sb.path("report.png")) {
        Rendered::Skipped(why) => crate::browser::skipped(&why),
        Rendered::Done { dom, console, png } => {
            assert!(console.is_empty(), "console messages: {console:?}");
            // Five charts: survival, stems/ha, two differences, diameter distributions.
            assert!(
                dom.matches("<svg").count() >= 5,
                "charts missing from the DOM"
            );
            assert!(dom.contains("Caution"));
            let size = std::fs::metadata(png).map(|m| m.len()).unwrap_or(0);
            assert!(size > 50_000, "screenshot of {size} bytes");
        }
    }
}
