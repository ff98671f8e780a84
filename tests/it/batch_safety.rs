//! `stemcast batch` under kills, concurrent writers, changed settings and failing stands
//! (`docs/outputs.md#batch`).
//!
//! The check values are not numbers from an outside reference: the bytes an interrupted and
//! resumed run must equal are those of an uninterrupted run on the same inputs, and the ages
//! are derived analytically (age in year y = starting age + y, `docs/outputs.md`).

use std::process::{Command, Stdio};
use std::time::{Duration, Instant};

use crate::common::{stderr, Sandbox};

const HEADER: &str = "stand,tree,dbh,expansion,treatment,region,planted\n";

/// `n` trees of one stand, diameters spread over 4–30 cm, 1,600/n stems/ha each.
fn stand_rows(stand: &str, n: usize, treatment: &str, age: u32) -> String {
    (0..n)
        .map(|i| {
            let dbh = 4.0 + 26.0 * ((i * 7) % n) as f64 / n as f64;
            let region = if age > 30 { "north" } else { "south" };
            format!(
                "{stand},t{i},{dbh},{},{treatment},{region},{age}\n",
                1600.0 / n as f64
            )
        })
        .collect()
}

/// The PROJECT-W2 models (`docs/performance.md#project-w2`) with a treatment term, a
/// scenario with `replicates`, and `stands` stands in `trees.csv`.
pub(crate) fn sandbox(stands: usize, replicates: usize, target: u32) -> Sandbox {
    let s = Sandbox::new();
    let mut survival = crate::project_common::w2_survival();
    survival.push_str(
        "[[coefficients]]\nterm = \"treatment=b\"\nestimate = -0.6\n\n\
         [categorical.treatment]\nlevels = [\"a\", \"b\"]\nreference = \"a\"\n",
    );
    s.write("s.toml", &survival);
    s.write("g.toml", &crate::project_common::w2_growth());
    let mut all = HEADER.to_string();
    for k in 0..stands {
        let t = if k % 2 == 1 { "b" } else { "a" };
        all.push_str(&stand_rows(
            &format!("s{k}"),
            20 + k % 7,
            t,
            20 + 3 * k as u32,
        ));
    }
    s.write("trees.csv", &all);
    s.write(
        "batch.toml",
        &format!(
            "name = \"w2\"\nhorizon_years = 20\nstep_years = 5\nreplicates = {replicates}\nseed = 9\n\n\
             [models]\nsurvival = \"s.toml\"\ngrowth = \"g.toml\"\n\n\
             [cohort]\nstems_per_ha = 1600\nrecords = 20\n\
             dbh = {{ distribution = \"fixed\", value = 10.0 }}\nattributes = {{ treatment = \"a\" }}\n\n\
             [[actions]]\nyear = 10\nthin = {{ from = \"below\", to_stems_per_ha = {target} }}\n"
        ),
    );
    s
}

fn batch(s: &Sandbox, extra: &[&str]) -> std::process::Output {
    let mut args = vec!["batch", "batch.toml", "--trees", "trees.csv"];
    args.extend_from_slice(extra);
    s.run(&args)
}

fn read(s: &Sandbox, name: &str) -> Vec<u8> {
    std::fs::read(s.path(name)).unwrap_or_default()
}

fn spawn(s: &Sandbox, extra: &[&str]) -> std::process::Child {
    Command::new(env!("CARGO_BIN_EXE_stemcast"))
        .args([
            "batch",
            "batch.toml",
            "--trees",
            "trees.csv",
            "--threads",
            "1",
        ])
        .args(extra)
        .current_dir(s.root())
        .stdout(Stdio::null())
        .stderr(Stdio::null())
        .spawn()
        .expect("start stemcast")
}

#[test]
fn ten_kills_then_resume_give_the_uninterrupted_bytes() {
    let s = sandbox(16, 200, 500);
    let o = batch(&s, &["--threads", "1", "--out", "whole.csv"]);
    assert!(o.status.success(), "{}", stderr(&o));
    let whole = read(&s, "whole.csv");
    let whole_warnings = read(&s, "whole.csv.warnings.csv");
    // Each run is killed once the output has grown past a point drawn from a fixed linear
    // congruential sequence between its current and its final length (any points do; fixed
    // ones keep a failure reproducible).
    let mut x: u64 = 12345;
    let mut interrupted = 0;
    let mut fresh = true;
    // Up to 60 runs until ten kills have landed mid-run; a run that finished before its kill
    // (a fast machine) starts over from nothing, so every counted kill interrupted a run.
    for _ in 0..60 {
        if interrupted >= 10 {
            break;
        }
        let have = if fresh {
            0
        } else {
            read(&s, "batch.csv").len() as u64
        };
        x = x
            .wrapping_mul(6364136223846793005)
            .wrapping_add(1442695040888963407);
        let target = have + (x >> 33) % (whole.len() as u64 - have).max(1);
        let resume: &[&str] = if fresh { &[] } else { &["--resume"] };
        let mut child = spawn(&s, resume);
        let t = Instant::now();
        while (read(&s, "batch.csv").len() as u64) < target
            && t.elapsed() < Duration::from_secs(30)
            && child.try_wait().ok().flatten().is_none()
        {
            std::thread::sleep(Duration::from_micros(200));
        }
        // Child::kill sends SIGKILL on Unix.
        let _ = child.kill();
        let _ = child.wait();
        if read(&s, "batch.csv") == whole {
            for f in ["batch.csv", "batch.csv.run.json", "batch.csv.warnings.csv"] {
                let _ = std::fs::remove_file(s.path(f));
            }
            fresh = true;
        } else {
            interrupted += 1;
            fresh = false;
        }
    }
    assert!(
        interrupted >= 10,
        "only {interrupted} kills interrupted the run"
    );
    let last: &[&str] = if fresh {
        &["--threads", "1"]
    } else {
        &["--threads", "1", "--resume"]
    };
    let o = batch(&s, last);
    assert!(o.status.success(), "{}", stderr(&o));
    assert_eq!(
        String::from_utf8_lossy(&read(&s, "batch.csv")),
        String::from_utf8_lossy(&whole)
    );
    assert_eq!(read(&s, "batch.csv.warnings.csv"), whole_warnings);
}

#[test]
fn a_resume_with_other_settings_is_refused_naming_them() {
    let s = sandbox(3, 10, 500);
    assert!(batch(&s, &[]).status.success());
    let before = read(&s, "batch.csv");
    let o = batch(&s, &["--resume", "--seed", "10", "--replicates", "11"]);
    let err = stderr(&o);
    assert_eq!(o.status.code(), Some(2), "{err}");
    assert!(err.contains("seed 9 then, 10 now"), "{err}");
    assert!(err.contains("replicates 10 then, 11 now"), "{err}");
    let trees = String::from_utf8_lossy(&read(&s, "trees.csv")).replace("t1,", "t1x,");
    s.write("trees.csv", &trees);
    let o = batch(&s, &["--resume"]);
    let err = stderr(&o);
    assert_eq!(o.status.code(), Some(2), "{err}");
    assert!(err.contains("the trees file differs"), "{err}");
    assert_eq!(
        read(&s, "batch.csv"),
        before,
        "a refused resume changed the output"
    );
}

#[test]
fn a_second_writer_is_refused_while_the_first_runs() {
    let s = sandbox(40, 400, 500);
    let mut first = spawn(&s, &[]);
    // The run record appears only after the first run holds the lock.
    let t = Instant::now();
    while !s.path("batch.csv.run.json").exists() && t.elapsed() < Duration::from_secs(20) {
        std::thread::sleep(Duration::from_millis(5));
    }
    let o = batch(&s, &["--resume"]);
    let running = first.try_wait().ok().flatten().is_none();
    let _ = first.kill();
    let _ = first.wait();
    assert!(
        running,
        "the first run ended before the second started; make it longer"
    );
    let err = stderr(&o);
    assert_eq!(o.status.code(), Some(1), "{err}");
    assert!(err.contains("locked"), "{err}");
    // The kernel released the lock with the killed process.
    assert!(batch(&s, &["--resume"]).status.success());
}

#[test]
fn a_stand_with_an_unknown_level_fails_alone_with_its_tree_list_location() {
    let s = sandbox(3, 10, 500);
    let good = read(&s, "trees.csv");
    assert!(batch(&s, &["--out", "good.csv"]).status.success());
    // Line 1 is the header, stand s0 has 20 trees (lines 2–21): s1's first tree is line 22.
    let bad = String::from_utf8_lossy(&good).replace(",b,", ",c,");
    s.write("trees.csv", &bad);
    let o = batch(&s, &[]);
    let err = stderr(&o);
    assert_eq!(o.status.code(), Some(2), "{err}");
    assert!(err.contains("1 stand failed"), "{err}");
    let failed = String::from_utf8_lossy(&read(&s, "batch.csv.failed.csv")).into_owned();
    assert!(failed.starts_with("stand,error\ns1,"), "{failed}");
    assert!(
        failed.contains("trees.csv: line 22, column \"\"treatment\"\"")
            && failed.contains("\"\"c\"\""),
        "{failed}"
    );
    let out = String::from_utf8_lossy(&read(&s, "batch.csv")).into_owned();
    let good_out = String::from_utf8_lossy(&read(&s, "good.csv")).into_owned();
    let others: Vec<&str> = good_out.lines().filter(|l| !l.starts_with("s1,")).collect();
    assert_eq!(out.lines().collect::<Vec<_>>(), others);
}

#[test]
fn warnings_are_one_line_per_kind_with_stand_counts() {
    // A thinning target far above the 1,600 stems/ha every stand starts with: it removes
    // nothing in any replicate of any stand.
    let s = sandbox(3, 10, 5000);
    let o = batch(&s, &[]);
    let err = stderr(&o);
    assert!(o.status.success(), "{err}");
    let lines: Vec<&str> = err.lines().filter(|l| l.starts_with("warning:")).collect();
    assert_eq!(lines.len(), 2, "{err}");
    assert!(
        lines[0].starts_with("warning: 3 stands: action 1 (thin at year 10)")
            && lines[0].contains("10 of 10 replicates"),
        "{err}"
    );
    let list = String::from_utf8_lossy(&read(&s, "batch.csv.warnings.csv")).into_owned();
    assert_eq!(list.lines().count(), 1 + 3, "{list}");
}

#[test]
fn age_and_carried_columns_come_from_the_tree_list() {
    let s = sandbox(3, 10, 500);
    let o = batch(&s, &["--age", "planted", "--carry", "region", "--expected"]);
    assert!(o.status.success(), "{}", stderr(&o));
    let out = String::from_utf8_lossy(&read(&s, "batch.csv")).into_owned();
    let mut lines = out.lines();
    assert_eq!(
        lines.next(),
        Some("stand,region,scenario,driver,year,age,metric,mean,sd,p05,p50,p95")
    );
    for line in lines {
        let f: Vec<&str> = line.split(',').collect();
        let k: u32 = f[0][1..].parse().expect("stand number");
        let planted = 20 + 3 * k;
        assert_eq!(f[1], if planted > 30 { "north" } else { "south" });
        let year: f64 = f[4].parse().expect("year");
        let age: f64 = f[5].parse().expect("age");
        // Derived analytically: age in year y = starting age + y.
        assert_eq!(age, planted as f64 + year, "{line}");
    }
}

#[test]
fn merge_gives_the_one_machine_bytes_and_refuses_bad_part_sets() {
    let s = sandbox(9, 10, 500);
    assert!(batch(&s, &["--out", "one.csv"]).status.success());
    for k in 1..=3 {
        let (part, out) = (format!("{k}/3"), format!("p{k}.csv"));
        let o = batch(&s, &["--shard", &part, "--out", &out]);
        assert!(o.status.success(), "{}", stderr(&o));
    }
    let o = s.run(&["merge", "p3.csv", "p1.csv", "p2.csv", "--out", "m.csv"]);
    assert!(o.status.success(), "{}", stderr(&o));
    assert_eq!(
        String::from_utf8_lossy(&read(&s, "m.csv")),
        String::from_utf8_lossy(&read(&s, "one.csv"))
    );
    assert_eq!(
        read(&s, "m.csv.warnings.csv"),
        read(&s, "one.csv.warnings.csv")
    );
    let refused = |args: &[&str], needle: &str| {
        let mut argv = vec!["merge"];
        argv.extend_from_slice(args);
        argv.extend_from_slice(&["--out", "bad.csv"]);
        let o = s.run(&argv);
        let err = stderr(&o);
        assert_eq!(o.status.code(), Some(2), "{err}");
        assert!(err.contains(needle), "{needle:?} not in {err}");
        assert!(!s.path("bad.csv").exists());
    };
    refused(&["p1.csv", "p2.csv"], "missing shard 3/3");
    refused(
        &["p1.csv", "p2.csv", "p2.csv", "p3.csv"],
        "shard 2/3 is given twice",
    );
    // A part of another run: another seed.
    let o = batch(&s, &["--shard", "3/3", "--seed", "10", "--out", "q3.csv"]);
    assert!(o.status.success(), "{}", stderr(&o));
    refused(&["p1.csv", "p2.csv", "q3.csv"], "seed 9 then, 10 now");
}
