//! Outputs (docs/commands.md#exit-codes): an output path that is an input is refused, a
//! closed standard output ends quietly with 0, a full one fails with 1 naming it.

use std::io::Read;
use std::process::{Command, Stdio};

use crate::common::{stderr, Sandbox};

/// Survival records in which `x` raises survival without separating it (typed for the test).
const DATA: &str = "stand,tree,dbh,alive,years,x\n\
    1,1,10,1,5,0.1\n1,2,11,0,5,0.4\n1,3,12,1,5,0.9\n1,4,13,1,5,0.3\n\
    2,5,10,0,5,0.2\n2,6,14,1,5,0.8\n2,7,15,0,5,0.7\n2,8,9,1,5,0.5\n";

#[test]
fn an_output_that_is_the_input_is_refused_and_left_alone() {
    let sb = Sandbox::new();
    sb.write("data.csv", DATA);
    let out = sb.run(&[
        "fit", "survival", "data.csv", "-p", "x", "--out", "data.csv",
    ]);
    assert_eq!(out.status.code(), Some(2), "{}", stderr(&out));
    assert!(stderr(&out).contains("is the input"), "{}", stderr(&out));
    assert_eq!(std::fs::read_to_string(sb.path("data.csv")).unwrap(), DATA);
    // The same file under another spelling is still the same file.
    let out = sb.run(&[
        "fit",
        "survival",
        "data.csv",
        "-p",
        "x",
        "--out",
        "./data.csv",
    ]);
    assert_eq!(out.status.code(), Some(2), "{}", stderr(&out));
}

#[test]
fn a_full_standard_output_fails_naming_it() {
    let sb = Sandbox::new();
    sb.write("data.csv", DATA);
    let Ok(full) = std::fs::OpenOptions::new().write(true).open("/dev/full") else {
        panic!("/dev/full is missing on this system");
    };
    let out = Command::new(env!("CARGO_BIN_EXE_stemcast"))
        .args(["fit", "survival", "data.csv", "-p", "x"])
        .current_dir(sb.root())
        .stdout(full)
        .output()
        .unwrap();
    assert_eq!(out.status.code(), Some(1), "{}", stderr(&out));
    let e = stderr(&out);
    assert!(
        e.contains("standard output") && !e.contains("panicked"),
        "{e}"
    );
}

#[test]
fn a_closed_standard_output_ends_quietly() {
    let sb = Sandbox::new();
    sb.write("data.csv", DATA);
    let mut child = Command::new(env!("CARGO_BIN_EXE_stemcast"))
        .args(["fit", "survival", "data.csv", "-p", "x"])
        .current_dir(sb.root())
        .stdout(Stdio::piped())
        .stderr(Stdio::piped())
        .spawn()
        .unwrap();
    drop(child.stdout.take()); // the reader goes away before anything is printed
    let status = child.wait().unwrap();
    let mut e = String::new();
    child.stderr.take().unwrap().read_to_string(&mut e).unwrap();
    assert_eq!(status.code(), Some(0), "{e}");
    assert!(e.is_empty(), "{e}");
}
