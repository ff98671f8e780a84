//! A real Slurm job array (`scripts/slurm-batch.sh`, 4 tasks) merged with `stemcast merge`
//! equals the one-machine `batch` run byte for byte (`docs/commands.md#merge`). Runs only when
//! `STEMCAST_SLURM_TEST` is set (`.ci/run` sets it after starting a single-node Slurm); then a
//! missing `sbatch` fails the test.
//!
//! The check value is the output of the unsharded run on the same inputs.

use std::process::Command;

use crate::common::stderr;

#[test]
fn a_four_task_array_merges_to_the_one_machine_bytes() {
    if std::env::var_os("STEMCAST_SLURM_TEST").is_none() {
        return;
    }
    let found = Command::new("sbatch").arg("--version").output();
    assert!(
        found.as_ref().is_ok_and(|o| o.status.success()),
        "STEMCAST_SLURM_TEST is set but sbatch does not run: {found:?}"
    );
    let s = crate::batch_safety::sandbox(12, 20, 500);
    let o = s.run(&[
        "batch",
        "batch.toml",
        "--trees",
        "trees.csv",
        "--out",
        "one.csv",
    ]);
    assert!(o.status.success(), "{}", stderr(&o));
    let script = concat!(env!("CARGO_MANIFEST_DIR"), "/scripts/slurm-batch.sh");
    // An array numbered from 0, so that --shard from-env must use SLURM_ARRAY_TASK_MIN.
    let o = Command::new("sbatch")
        .args(["--wait", "--array=0-3", "--chdir"])
        .arg(s.root())
        .args([script, "batch.toml", "trees.csv", "arr"])
        .env("STEMCAST", env!("CARGO_BIN_EXE_stemcast"))
        .output()
        .expect("sbatch");
    // The tasks' logs (`stemcast-batch-JOB_TASK.log`), shown when something fails.
    let logs: String = std::fs::read_dir(s.root())
        .into_iter()
        .flatten()
        .flatten()
        .filter(|e| e.file_name().to_string_lossy().ends_with(".log"))
        .filter_map(|e| std::fs::read_to_string(e.path()).ok())
        .collect();
    assert!(o.status.success(), "sbatch: {}\n{logs}", stderr(&o));
    let parts: Vec<String> = (0..4).map(|k| format!("arr.part{k}.csv")).collect();
    let mut argv = vec!["merge"];
    argv.extend(parts.iter().map(String::as_str));
    argv.extend(["--out", "arr.csv"]);
    let o = s.run(&argv);
    assert!(o.status.success(), "{}\n{logs}", stderr(&o));
    let read = |f: &str| std::fs::read(s.path(f)).unwrap_or_default();
    assert!(!read("one.csv").is_empty());
    assert_eq!(read("arr.csv"), read("one.csv"));
    assert_eq!(read("arr.csv.warnings.csv"), read("one.csv.warnings.csv"));
}
