//! `report.html` of `compare` and `project`: self-contained (no scripts, no external
//! resources) and rendered cleanly by a real browser (headless Chromium; skipped with the
//! reason where it is absent).

use crate::browser::{render, Rendered};
use crate::common::{stderr, Sandbox};

fn scenario(name: &str, extra: &str) -> String {
    format!(
        "name = \"{name}\"\nhorizon_years = 30\nstep_years = 5\nreplicates = 30\nseed = 9\nstart_age_years = 10\n\n\
         [models]\nsurvival = \"s.toml\"\ngrowth = \"g.toml\"\n\n\
         [cohort]\nstems_per_ha = 1600\nrecords = 100\n\
         dbh = {{ distribution = \"lognormal\", median = 8.0, gsd = 1.5 }}\n{extra}"
    )
}

fn sandbox() -> Sandbox {
    let s = Sandbox::new();
    s.write("s.toml", &crate::project_common::w2_survival());
    s.write("g.toml", &crate::project_common::w2_growth());
    s.write("open.toml", &scenario("open", ""));
    s.write(
        "thin.toml",
        &scenario(
            "thinned at 10",
            "\n[[actions]]\nyear = 10\nthin = { from = \"below\", to_stems_per_ha = 700 }\n",
        ),
    );
    s
}

/// Nothing in the page can trigger a request or run code.
fn assert_self_contained(html: &str) {
    for forbidden in [
        "<script", " src=", " href=", "url(", "@import", "<link", "<iframe",
    ] {
        assert!(!html.contains(forbidden), "report contains {forbidden}");
    }
    assert!(html.contains("valid only within the range of the fitting data"));
}

/// Render and check: loaded without console messages, at least `svgs` charts, a real image.
fn check_render(s: &Sandbox, html: &std::path::Path, svgs: usize) {
    match render(html, &s.path("page.png")) {
        Rendered::Skipped(reason) => crate::browser::skipped(&reason),
        Rendered::Done { dom, console, png } => {
            assert!(console.is_empty(), "console messages: {console:?}");
            assert!(dom.contains("</main>"), "page loaded completely");
            let n = dom.matches("<svg").count();
            assert!(n >= svgs, "{n} charts in the DOM, expected at least {svgs}");
            let bytes = std::fs::metadata(&png).expect("screenshot written").len();
            // A blank 1280×4000 PNG compresses to a few kB; charts and tables take far more.
            assert!(bytes > 50_000, "screenshot is only {bytes} bytes");
        }
    }
}

#[test]
fn compare_report_is_self_contained_and_renders() {
    let s = sandbox();
    let o = s.run(&["compare", "open.toml", "thin.toml", "--out", "cmp"]);
    assert!(o.status.success(), "{}", stderr(&o));
    let path = s.path("cmp/report.html");
    let html = std::fs::read_to_string(&path).expect("report.html");
    assert_self_contained(&html);
    for part in [
        "Differences from the baseline",
        "Per-step summaries",
        "thinned at 10",
        "year 10: thin from below to 700 stems/ha",
        "Survival model",
        "Growth model",
        "dbh^2",
    ] {
        assert!(html.contains(part), "report mentions {part}");
    }
    check_render(&s, &path, 4);
}

#[test]
fn project_report_is_self_contained_and_renders() {
    let s = sandbox();
    let o = s.run(&["project", "open.toml", "--out", "one"]);
    assert!(o.status.success(), "{}", stderr(&o));
    let path = s.path("one/report.html");
    let html = std::fs::read_to_string(&path).expect("report.html");
    assert_self_contained(&html);
    assert!(html.contains("Per-step summaries") && html.contains("Models"));
    check_render(&s, &path, 3);
}
