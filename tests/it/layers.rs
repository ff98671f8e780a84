//! The module graph points one way (docs/architecture.md): data → model → scenario → project →
//! report, with the fit pipelines on data, model and report, and the demo and command line on
//! top. A lower layer that names a higher one (`crate::project` inside `src/scenario/`) fails.

use std::path::Path;

/// (folder, layers it must not name).
const FORBIDDEN: &[(&str, &[&str])] = &[
    (
        "data",
        &["model", "scenario", "project", "report", "fit", "demo"],
    ),
    ("model", &["scenario", "project", "report", "fit", "demo"]),
    ("scenario", &["project", "report", "fit", "demo"]),
    ("project", &["report", "fit", "demo"]),
    ("report", &["fit", "demo"]),
    ("fit", &["scenario", "project", "demo"]),
];

fn sources(dir: &Path, out: &mut Vec<std::path::PathBuf>) {
    for entry in std::fs::read_dir(dir).expect("src folder") {
        let p = entry.expect("entry").path();
        if p.is_dir() {
            sources(&p, out);
        } else if p.extension().is_some_and(|e| e == "rs") {
            out.push(p);
        }
    }
}

#[test]
fn no_layer_imports_a_higher_one() {
    let src = Path::new(env!("CARGO_MANIFEST_DIR")).join("src");
    let mut found = Vec::new();
    for (layer, higher) in FORBIDDEN {
        let mut files = Vec::new();
        sources(&src.join(layer), &mut files);
        assert!(!files.is_empty(), "src/{layer} has no sources");
        for f in files {
            let text = std::fs::read_to_string(&f).expect("readable source");
            for (n, line) in text.lines().enumerate() {
                for h in *higher {
                    if line.contains(&format!("crate::{h}::"))
                        || line.contains(&format!("crate::{h};"))
                    {
                        found.push(format!("{}:{}: {}", f.display(), n + 1, line.trim()));
                    }
                }
            }
        }
    }
    for base in ["atomic.rs", "tolerance.rs"] {
        let text = std::fs::read_to_string(src.join(base)).expect("readable source");
        for h in [
            "data", "model", "scenario", "project", "report", "fit", "demo",
        ] {
            assert!(
                !text.contains(&format!("crate::{h}::")),
                "src/{base} names crate::{h}"
            );
        }
    }
    assert!(
        found.is_empty(),
        "imports that run up the layers:\n{}",
        found.join("\n")
    );
}
