//! `stemcast batch`: every stand's rows equal `stemcast project` on that stand alone, and
//! neither sharding, thread count nor resuming changes a byte; bad input is refused with
//! exit 2 and no output file.
//!
//! The check values are not numbers from an outside reference: each is the output of
//! `stemcast project` (or of an unsharded, uninterrupted `batch` run) on the same inputs, so
//! these tests pin the rule of `docs/maths.md#random-numbers` that a stand's draws depend only
//! on (seed, purpose, stand, replicate, tree, sub-step).

use crate::common::{stderr, Sandbox};

const STANDS: [&str; 3] = ["s1", "B 2", "s2"];

/// A scenario on PROJECT-W2's growth model (`docs/performance.md#project-w2`) and its survival
/// model plus a treatment term, so that stands must carry the attribute `treatment` with a known
/// level.
fn scenario(trees: &str) -> String {
    format!(
        "name = \"w2\"\nhorizon_years = 20\nstep_years = 5\nreplicates = 30\nseed = 9\n\n\
         [models]\nsurvival = \"s.toml\"\ngrowth = \"g.toml\"\n\n\
         [cohort]\ntrees = \"{trees}\"\n\n\
         [[actions]]\nyear = 10\nthin = {{ from = \"below\", to_stems_per_ha = 500 }}\n"
    )
}

/// Rows for one stand: `n` trees, diameters spread over 4–30 cm, 1,600/n stems/ha each.
fn stand_rows(stand: &str, n: usize, treatment: &str) -> String {
    (0..n)
        .map(|i| {
            let dbh = 4.0 + 26.0 * ((i * 7) % n) as f64 / n as f64;
            format!("{stand},t{i},{dbh},{},{treatment}\n", 1600.0 / n as f64)
        })
        .collect()
}

const HEADER: &str = "stand,tree,dbh,expansion,treatment\n";

fn sandbox() -> Sandbox {
    let s = Sandbox::new();
    let mut survival = crate::project_common::w2_survival();
    survival.push_str(
        "[[coefficients]]\nterm = \"treatment=b\"\nestimate = -0.6\n\n\
         [categorical.treatment]\nlevels = [\"a\", \"b\"]\nreference = \"a\"\n",
    );
    s.write("s.toml", &survival);
    s.write("g.toml", &crate::project_common::w2_growth());
    let mut all = HEADER.to_string();
    for (k, stand) in STANDS.iter().enumerate() {
        let rows = stand_rows(stand, 15 + 5 * k, if k == 1 { "b" } else { "a" });
        s.write(&format!("stand{k}.csv"), &format!("{HEADER}{rows}"));
        all.push_str(&rows);
    }
    s.write("trees.csv", &all);
    s.write("batch.toml", &scenario("stand0.csv"));
    s
}

fn read(s: &Sandbox, name: &str) -> String {
    std::fs::read_to_string(s.path(name)).expect("output file")
}

fn batch(s: &Sandbox, extra: &[&str]) -> std::process::Output {
    let mut args = vec!["batch", "batch.toml", "--trees", "trees.csv"];
    args.extend_from_slice(extra);
    s.run(&args)
}

fn ok(o: &std::process::Output) {
    assert!(o.status.success(), "stderr: {}", stderr(o));
}

#[test]
fn each_stand_equals_project_on_that_stand_alone() {
    let s = sandbox();
    for expected in [false, true] {
        let flag: &[&str] = if expected { &["--expected"] } else { &[] };
        ok(&batch(&s, flag));
        let out = read(&s, "batch.csv");
        let mut lines = out.lines();
        assert_eq!(
            lines.next(),
            Some("stand,scenario,driver,year,age,metric,mean,sd,p05,p50,p95")
        );
        let body: Vec<&str> = lines.collect();
        for (k, stand) in STANDS.iter().enumerate() {
            let (file, dir) = (format!("one{k}.toml"), format!("p{k}"));
            s.write(&file, &scenario(&format!("stand{k}.csv")));
            let mut argv = vec!["project", file.as_str(), "--out", dir.as_str()];
            argv.extend_from_slice(flag);
            ok(&s.run(&argv));
            let summary = read(&s, &format!("{dir}/summary.csv"));
            // No stand id here needs quoting in CSV (no comma, quote or line end).
            let prefix = format!("{stand},");
            let mine: Vec<String> = body
                .iter()
                .filter_map(|l| l.strip_prefix(&prefix).map(str::to_string))
                .collect();
            let project: Vec<String> = summary.lines().skip(1).map(str::to_string).collect();
            assert_eq!(project.len(), 5 * 7, "5 years × 7 metrics: docs/outputs.md");
            assert_eq!(mine, project, "stand {stand}, expected driver: {expected}");
        }
    }
}

#[test]
fn threads_and_shards_do_not_change_the_rows() {
    let s = sandbox();
    ok(&batch(&s, &["--threads", "1", "--out", "one.csv"]));
    ok(&batch(&s, &["--threads", "2", "--out", "two.csv"]));
    let whole = read(&s, "one.csv");
    assert_eq!(whole, read(&s, "two.csv"));
    ok(&batch(&s, &["--shard", "1/2", "--out", "a.csv"]));
    ok(&batch(&s, &["--shard", "2/2", "--out", "b.csv"]));
    let (a, b) = (read(&s, "a.csv"), read(&s, "b.csv"));
    // With these ids each part gets at least one stand, so the split is not trivial.
    assert!(a.lines().count() > 1 && b.lines().count() > 1);
    let mut parts: Vec<&str> = a.lines().skip(1).chain(b.lines().skip(1)).collect();
    let mut rows: Vec<&str> = whole.lines().skip(1).collect();
    assert_eq!(parts.len(), rows.len());
    parts.sort_unstable();
    rows.sort_unstable();
    assert_eq!(parts, rows);
}

#[test]
fn resume_completes_a_truncated_run_to_the_same_bytes() {
    let s = sandbox();
    ok(&batch(&s, &[]));
    let whole = read(&s, "batch.csv");
    let lines: Vec<&str> = whole.split_inclusive('\n').collect();
    // Header plus the first stand's 5 years × 7 metrics (docs/outputs.md#batch).
    let first: String = lines[..1 + 35].concat();
    // ... and the same cut in the middle of a row of the second stand.
    let partial = format!("{first}{}{}", lines[36], &lines[37][..9]);
    for cut in [first, partial] {
        s.write("batch.csv", &cut);
        let o = batch(&s, &["--resume"]);
        ok(&o);
        assert_eq!(read(&s, "batch.csv"), whole);
    }
    // Resuming a complete file projects nothing and changes nothing.
    ok(&batch(&s, &["--resume"]));
    assert_eq!(read(&s, "batch.csv"), whole);
}

/// `batch` with these arguments exits 2, says `needles`, and writes no output.
fn refused(trees: &str, extra: &[&str], needles: &[&str]) {
    let s = sandbox();
    s.write("bad.csv", trees);
    let mut args = vec!["batch", "batch.toml", "--trees", "bad.csv"];
    args.extend_from_slice(extra);
    let o = s.run(&args);
    let err = stderr(&o);
    assert_eq!(o.status.code(), Some(2), "stderr: {err}");
    for n in needles {
        assert!(err.contains(n), "{n:?} not in {err:?}");
    }
    assert!(!s.path("batch.csv").exists(), "an output file was left");
    let left: Vec<_> = std::fs::read_dir(s.root())
        .expect("sandbox")
        .filter_map(|e| e.ok())
        .filter(|e| e.file_name().to_string_lossy().contains("batch.csv"))
        .collect();
    assert!(left.is_empty(), "temp files left: {left:?}");
}

#[test]
fn stand_rows_apart_are_refused() {
    let trees = format!(
        "{HEADER}{}{}{}",
        stand_rows("x", 5, "a"),
        stand_rows("y", 5, "a"),
        stand_rows("x", 1, "a").replace("t0", "t9")
    );
    refused(&trees, &[], &["bad.csv: line 12", "\"stand\"", "\"x\""]);
}

#[test]
fn a_duplicate_tree_in_a_stand_is_refused() {
    let rows = stand_rows("x", 5, "a").replace("t3", "t1");
    let trees = format!("{HEADER}{}{rows}", stand_rows("w", 3, "a"));
    refused(&trees, &[], &["bad.csv: line 8", "\"tree\"", "t1"]);
}

#[test]
fn shards_outside_one_to_n_are_refused() {
    let trees = format!("{HEADER}{}", stand_rows("x", 5, "a"));
    refused(&trees, &["--shard", "3/2"], &["--shard 3/2"]);
    refused(&trees, &["--shard", "0/2"], &["--shard 0/2"]);
    refused(&trees, &["--shard", "two"], &["--shard two"]);
}

#[test]
fn a_tree_list_column_overrides_the_template_cohort_attribute() {
    // A batch template whose generated cohort sets treatment = "a" for the models' sake: each
    // stand's own treatment column wins, so stand "B 2" (treatment b) projects exactly as it
    // does with the scenario that reads its tree list directly.
    let sb = sandbox();
    sb.write(
        "template.toml",
        &scenario("stand0.csv").replace(
            "trees = \"stand0.csv\"",
            "stems_per_ha = 1600\nrecords = 20\ndbh = { distribution = \"fixed\", value = 10.0 }\nattributes = { treatment = \"a\" }",
        ),
    );
    let a = sb.run(&[
        "batch",
        "template.toml",
        "--trees",
        "trees.csv",
        "--out",
        "t.csv",
    ]);
    assert_eq!(a.status.code(), Some(0), "{}", stderr(&a));
    let b = sb.run(&[
        "batch",
        "batch.toml",
        "--trees",
        "trees.csv",
        "--out",
        "b.csv",
    ]);
    assert_eq!(b.status.code(), Some(0), "{}", stderr(&b));
    let rows = |f: &str| -> Vec<String> {
        std::fs::read_to_string(sb.path(f))
            .unwrap()
            .lines()
            .filter(|l| l.starts_with("B 2,"))
            .map(|l| l.replacen(",w2,", ",", 1))
            .collect()
    };
    assert!(!rows("t.csv").is_empty());
    assert_eq!(rows("t.csv"), rows("b.csv"));
}
