//! The run record of a batch: everything that decides the bytes of `batch.csv`
//! (`docs/outputs.md#batch-run-record`), and its fingerprint, so that `--resume` and `merge`
//! never mix rows of different runs.

use std::io::Read;
use std::path::Path;

use serde::{Deserialize, Serialize};
use sha2::{Digest, Sha256};

use super::RunOptions;
use crate::scenario::Scenario;
use crate::Error;

/// The name of the random-number scheme of `docs/maths.md#random-numbers`; a change to the
/// scheme must change this name.
pub const RNG_ID: &str = "stemcast-counter-mix64/1";

/// One input file of a run: its role, the path as given and the SHA-256 of its bytes.
#[derive(Debug, Clone, PartialEq, Eq, Serialize, Deserialize)]
pub struct RecordedFile {
    /// `scenario`, `survival model`, `growth model` or `trees`.
    pub role: String,
    /// The path as given (shown in messages, not part of the fingerprint).
    pub path: String,
    /// Lower-case hex SHA-256 of the file's bytes.
    pub sha256: String,
}

/// What decides the rows of a batch output. Two runs with equal records write equal rows for
/// every stand; the shard is kept beside it (it decides which stands, not their rows).
#[derive(Debug, Clone, PartialEq, Eq, Serialize, Deserialize)]
pub struct RunRecord {
    /// Always `stemcast batch run`.
    pub format: String,
    /// SHA-256 over every other field but `shard` (see [`RunRecord::fingerprint_of`]).
    pub fingerprint: String,
    /// The crate version that wrote the output.
    pub stemcast: String,
    /// [`RNG_ID`].
    pub rng: String,
    /// `monte-carlo` or `expected`.
    pub driver: String,
    /// Seed in effect.
    pub seed: u64,
    /// Replicates in effect (1 for the expected driver).
    pub replicates: usize,
    /// Scenario, models and tree list.
    pub files: Vec<RecordedFile>,
    /// Options that change the rows, as `name=value` (stand column, age, carried columns).
    pub options: Vec<String>,
    /// `K/N` when the run is one part of a sharded batch.
    pub shard: Option<String>,
}

const FORMAT: &str = "stemcast batch run";

impl RunRecord {
    /// The record of projecting `scenario` with `run` for every stand of `trees`.
    ///
    /// # Errors
    /// [`Error::Io`] when the tree list cannot be read.
    pub fn new(
        scenario: &Scenario,
        trees: &Path,
        run: &RunOptions,
        options: Vec<String>,
        shard: Option<String>,
    ) -> Result<RunRecord, Error> {
        let mut files: Vec<RecordedFile> = scenario
            .inputs
            .iter()
            .filter(|f| f.role != "trees")
            .map(|f| RecordedFile {
                role: f.role.clone(),
                path: f.path.display().to_string(),
                sha256: f.sha256.clone(),
            })
            .collect();
        files.push(RecordedFile {
            role: "trees".into(),
            path: trees.display().to_string(),
            sha256: hash_file(trees)?,
        });
        let mut r = RunRecord {
            format: FORMAT.into(),
            fingerprint: String::new(),
            stemcast: env!("CARGO_PKG_VERSION").into(),
            rng: RNG_ID.into(),
            driver: if run.expected {
                "expected"
            } else {
                "monte-carlo"
            }
            .into(),
            seed: run.seed.unwrap_or(scenario.seed),
            replicates: if run.expected {
                1
            } else {
                run.replicates.unwrap_or(scenario.replicates)
            },
            files,
            options,
            shard,
        };
        r.fingerprint = r.fingerprint_of();
        Ok(r)
    }

    /// SHA-256 (hex) of the fields that decide the rows: version, generator, driver, seed,
    /// replicates, each file's role and hash, and the options, each on its own line.
    pub fn fingerprint_of(&self) -> String {
        let mut h = Sha256::new();
        let mut line = |s: &str| {
            h.update(s.as_bytes());
            h.update(b"\n");
        };
        line(FORMAT);
        line(&self.stemcast);
        line(&self.rng);
        line(&self.driver);
        line(&self.seed.to_string());
        line(&self.replicates.to_string());
        for f in &self.files {
            line(&format!("{} {}", f.role, f.sha256));
        }
        for o in &self.options {
            line(o);
        }
        h.finalize().iter().map(|b| format!("{b:02x}")).collect()
    }

    /// True when the stored fingerprint matches the fields (the record was not edited).
    pub fn is_intact(&self) -> bool {
        self.format == FORMAT && self.fingerprint == self.fingerprint_of()
    }

    /// What differs between the run that wrote `self` and `now`, one phrase per field, empty
    /// when the rows would be the same.
    pub fn differences(&self, now: &RunRecord) -> Vec<String> {
        let mut out = Vec::new();
        let mut cmp = |what: &str, a: String, b: String| {
            if a != b {
                out.push(format!("{what} {a} then, {b} now"));
            }
        };
        cmp(
            "stemcast version",
            self.stemcast.clone(),
            now.stemcast.clone(),
        );
        cmp("random generator", self.rng.clone(), now.rng.clone());
        cmp("driver", self.driver.clone(), now.driver.clone());
        cmp("seed", self.seed.to_string(), now.seed.to_string());
        cmp(
            "replicates",
            self.replicates.to_string(),
            now.replicates.to_string(),
        );
        for f in &now.files {
            match self.files.iter().find(|g| g.role == f.role) {
                Some(g) if g.sha256 == f.sha256 => {}
                Some(g) => out.push(format!(
                    "the {} file differs ({} then, {} now; SHA-256 {} then, {} now)",
                    f.role,
                    g.path,
                    f.path,
                    short(&g.sha256),
                    short(&f.sha256)
                )),
                None => out.push(format!("no {} file then", f.role)),
            }
        }
        if self.options != now.options {
            out.push(format!(
                "options [{}] then, [{}] now",
                self.options.join(", "),
                now.options.join(", ")
            ));
        }
        out
    }
}

fn short(hex: &str) -> &str {
    hex.get(..12).unwrap_or(hex)
}

/// SHA-256 (hex) of a file, read in blocks so that memory does not grow with its size.
///
/// # Errors
/// [`Error::Io`].
pub fn hash_file(path: &Path) -> Result<String, Error> {
    let mut file = std::fs::File::open(path).map_err(|e| Error::io(path, e))?;
    let mut h = Sha256::new();
    let mut buf = vec![0u8; 1 << 16];
    loop {
        let n = file.read(&mut buf).map_err(|e| Error::io(path, e))?;
        if n == 0 {
            break;
        }
        h.update(&buf[..n]);
    }
    Ok(h.finalize().iter().map(|b| format!("{b:02x}")).collect())
}
