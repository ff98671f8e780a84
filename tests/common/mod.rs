//! Helpers shared by the command-line integration tests: a temp folder per test, running the
//! built binary, and reading its output.

#![allow(dead_code)]

pub mod fixtures;

use std::path::{Path, PathBuf};
use std::process::Output;

/// A temporary folder that lives as long as the value.
pub struct Sandbox {
    dir: tempfile::TempDir,
}

impl Sandbox {
    /// A new empty folder.
    pub fn new() -> Self {
        Sandbox {
            dir: tempfile::tempdir().expect("temp dir"),
        }
    }

    /// Path of `name` inside the folder.
    pub fn path(&self, name: &str) -> PathBuf {
        self.dir.path().join(name)
    }

    /// Write a file and return its path.
    pub fn write(&self, name: &str, text: &str) -> PathBuf {
        let p = self.path(name);
        if let Some(parent) = p.parent() {
            std::fs::create_dir_all(parent).expect("mkdir");
        }
        std::fs::write(&p, text).expect("write");
        p
    }

    /// Run stemcast with `args` in this folder.
    pub fn run(&self, args: &[&str]) -> Output {
        std::process::Command::new(env!("CARGO_BIN_EXE_stemcast"))
            .args(args)
            .current_dir(self.dir.path())
            .output()
            .expect("run stemcast")
    }

    /// The folder itself.
    pub fn root(&self) -> &Path {
        self.dir.path()
    }
}

/// Standard error as text.
pub fn stderr(o: &Output) -> String {
    String::from_utf8_lossy(&o.stderr).into_owned()
}

/// Standard output as text.
pub fn stdout(o: &Output) -> String {
    String::from_utf8_lossy(&o.stdout).into_owned()
}
