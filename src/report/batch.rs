//! `batch.csv`: the summary rows of every stand, one long file appended stand by stand in
//! input order, beside its run record `batch.csv.run.json` (`docs/outputs.md#batch`).
//!
//! The output is written in place and flushed after every stand, so that a run killed at any
//! point can be resumed (`--resume` cuts an incomplete last stand and appends the rest) and
//! ends byte-identical to an uninterrupted run. The run record is checked first: a resume
//! with other settings or inputs is refused. While a run writes, it holds an advisory lock on
//! the output (released by the kernel when the process ends), so a second writer is refused.

use std::collections::HashSet;
use std::fs::{File, OpenOptions};
use std::io::{Read, Seek, SeekFrom, Write};
use std::path::{Path, PathBuf};

use fs4::fs_std::FileExt;

use super::tables::summary_rows;
use crate::project::{Metric, ProjectionResult, RunRecord};
use crate::scenario::Scenario;
use crate::Error;

/// The columns of `batch.csv` (carried stand columns go between `stand` and `scenario`).
pub const BATCH_COLUMNS: [&str; 11] = [
    "stand", "scenario", "driver", "year", "age", "metric", "mean", "sd", "p05", "p50", "p95",
];

/// The rows of one stand's projection in `batch.csv` (no header): `summary.csv` rows with
/// the stand id and the carried values in front.
pub fn batch_rows(r: &ProjectionResult, carried: &[String]) -> Vec<u8> {
    let mut w = csv::Writer::from_writer(Vec::new());
    for row in summary_rows(r) {
        let front = std::iter::once(r.stand.as_str()).chain(carried.iter().map(|s| s.as_str()));
        // Writing to memory cannot fail; an error here would be a bug in csv.
        let _ = w.write_record(front.chain(row.iter().map(|s| s.as_str())));
    }
    w.into_inner().unwrap_or_default()
}

/// Rows one stand of `s` adds to `batch.csv`: one per metric and reported year.
pub fn rows_per_stand(s: &Scenario) -> usize {
    let steps = (s.horizon_years / s.step_years).round() as usize;
    (steps + 1) * Metric::ALL.len()
}

/// The run record beside an output: `<out>.run.json`.
pub fn record_path(out: &Path) -> PathBuf {
    sibling(out, ".run.json")
}

/// `<out><suffix>`.
pub(crate) fn sibling(out: &Path, suffix: &str) -> PathBuf {
    let mut name = out.as_os_str().to_os_string();
    name.push(suffix);
    PathBuf::from(name)
}

/// Read a run record.
///
/// # Errors
/// [`Error::Io`]; [`Error::Usage`] when the file is not an intact run record.
pub fn read_record(path: &Path) -> Result<RunRecord, Error> {
    let text = std::fs::read_to_string(path).map_err(|e| Error::io(path, e))?;
    let record: RunRecord = serde_json::from_str(&text).map_err(|e| {
        Error::Usage(format!(
            "{}: not a stemcast batch run record ({e})",
            path.display()
        ))
    })?;
    if !record.is_intact() {
        return Err(Error::Usage(format!(
            "{}: the run record was edited (its fingerprint does not match its fields)",
            path.display()
        )));
    }
    Ok(record)
}

/// An open `batch.csv` being written, locked against other writers.
#[derive(Debug)]
pub struct BatchOutput {
    file: File,
    target: PathBuf,
    /// True when this run started the file (it is removed by [`BatchOutput::discard`]).
    fresh: bool,
}

impl BatchOutput {
    /// Open the output at `path` for the run `record`, with `carry` columns after `stand`.
    /// Without `resume`, or when there is nothing to resume, the file is started afresh
    /// (record, then header). With `resume`, returns the ids of the stands it holds in full,
    /// after cutting off an incomplete last stand.
    ///
    /// # Errors
    /// [`Error::Io`], also when another process holds the lock (exit 1); [`Error::Usage`] when
    /// resuming a file written by a different run (naming what differs), a file that is not a
    /// batch output with these columns, or one whose stand other than the last is incomplete.
    pub fn open(
        path: &Path,
        record: &RunRecord,
        resume: bool,
        carry: &[String],
        rows_per_stand: usize,
    ) -> Result<(BatchOutput, HashSet<String>), Error> {
        let mut file = OpenOptions::new()
            .read(true)
            .write(true)
            .create(true)
            .truncate(false)
            .open(path)
            .map_err(|e| Error::io(path, e))?;
        match file.try_lock_exclusive() {
            Ok(true) => {}
            Ok(false) => {
                return Err(Error::io(
                    path,
                    std::io::Error::new(
                        std::io::ErrorKind::WouldBlock,
                        "another stemcast run is writing this file (it is locked); wait for it \
                         to end or choose another --out",
                    ),
                ))
            }
            Err(e) => return Err(Error::io(path, e)),
        }
        let columns = columns(carry);
        let header = header(&columns);
        let rec_path = record_path(path);
        if resume {
            let mut bytes = Vec::new();
            file.read_to_end(&mut bytes)
                .map_err(|e| Error::io(path, e))?;
            let started = !header.starts_with(&bytes);
            let old = if rec_path.exists() {
                Some(read_record(&rec_path)?)
            } else {
                None
            };
            match (old, started) {
                (Some(old), _) => {
                    let mut diffs = old.differences(record);
                    if old.shard != record.shard {
                        diffs.push(format!(
                            "shard {} then, {} now",
                            old.shard.as_deref().unwrap_or("none"),
                            record.shard.as_deref().unwrap_or("none")
                        ));
                    }
                    if !diffs.is_empty() {
                        return Err(Error::Usage(format!(
                            "{}: cannot resume: it was written by a different run: {}; run \
                             without --resume to start afresh",
                            path.display(),
                            diffs.join("; ")
                        )));
                    }
                }
                (None, true) => {
                    return Err(Error::Usage(format!(
                        "{}: cannot resume: there is no run record {} beside it",
                        path.display(),
                        rec_path.display()
                    )))
                }
                (None, false) => {}
            }
            if started {
                let shown = path.display().to_string();
                let (done, keep) = complete_stands(&bytes, &shown, &columns, rows_per_stand)?;
                file.set_len(keep as u64).map_err(|e| Error::io(path, e))?;
                file.seek(SeekFrom::End(0))
                    .map_err(|e| Error::io(path, e))?;
                let out = BatchOutput {
                    file,
                    target: path.to_path_buf(),
                    fresh: false,
                };
                return Ok((out, done));
            }
        }
        // A fresh start: the old record goes first, so that a kill from here on never leaves
        // an old record beside new rows.
        match std::fs::remove_file(&rec_path) {
            Err(e) if e.kind() != std::io::ErrorKind::NotFound => {
                return Err(Error::io(&rec_path, e))
            }
            _ => {}
        }
        file.set_len(0).map_err(|e| Error::io(path, e))?;
        file.seek(SeekFrom::Start(0))
            .map_err(|e| Error::io(path, e))?;
        let json = serde_json::to_string_pretty(record)
            .map_err(|e| Error::Usage(format!("cannot encode the run record: {e}")))?;
        crate::atomic::write_atomic(&rec_path, format!("{json}\n").as_bytes())?;
        let mut out = BatchOutput {
            file,
            target: path.to_path_buf(),
            fresh: !resume,
        };
        out.write(&header)?;
        Ok((out, HashSet::new()))
    }

    /// Append one stand's rows and flush them to the file.
    ///
    /// # Errors
    /// [`Error::Io`].
    pub fn append(&mut self, r: &ProjectionResult, carried: &[String]) -> Result<(), Error> {
        self.write(&batch_rows(r, carried))
    }

    /// Close the output, synced to the device.
    ///
    /// # Errors
    /// [`Error::Io`].
    pub fn finish(self) -> Result<PathBuf, Error> {
        self.file
            .sync_all()
            .map_err(|e| Error::io(&self.target, e))?;
        Ok(self.target.clone())
    }

    /// Give up after bad input: a file this run started is removed with its run record (a
    /// resumed file is left as it was, plus any complete stands).
    pub fn discard(self) {
        if self.fresh {
            let _ = std::fs::remove_file(&self.target);
            let _ = std::fs::remove_file(record_path(&self.target));
        }
    }

    /// True when this run started the file.
    pub fn is_fresh(&self) -> bool {
        self.fresh
    }

    fn write(&mut self, bytes: &[u8]) -> Result<(), Error> {
        self.file
            .write_all(bytes)
            .and_then(|()| self.file.flush())
            .map_err(|e| Error::io(&self.target, e))
    }
}

fn columns(carry: &[String]) -> Vec<String> {
    let mut c: Vec<String> = vec![BATCH_COLUMNS[0].to_string()];
    c.extend(carry.iter().cloned());
    c.extend(BATCH_COLUMNS[1..].iter().map(|s| s.to_string()));
    c
}

fn header(columns: &[String]) -> Vec<u8> {
    let mut w = csv::Writer::from_writer(Vec::new());
    // Writing to memory cannot fail.
    let _ = w.write_record(columns);
    w.into_inner().unwrap_or_default()
}

/// The stands held in full by a `batch.csv`, and the length in bytes to keep (up to the end of
/// the last complete stand).
fn complete_stands(
    bytes: &[u8],
    shown: &str,
    columns: &[String],
    rows_per_stand: usize,
) -> Result<(HashSet<String>, usize), Error> {
    let bad = |m: String| Error::Usage(format!("{shown}: cannot resume: {m}"));
    let mut reader = csv::ReaderBuilder::new()
        .flexible(true)
        .has_headers(false)
        .from_reader(bytes);
    let mut record = csv::ByteRecord::new();
    let read = |reader: &mut csv::Reader<&[u8]>, record: &mut csv::ByteRecord| {
        reader
            .read_byte_record(record)
            .map_err(|e| bad(format!("not a CSV file ({e})")))
    };
    if !read(&mut reader, &mut record)? || record.iter().ne(columns.iter().map(|c| c.as_bytes())) {
        return Err(bad(format!(
            "the first line is not the batch header {}",
            columns.join(",")
        )));
    }
    let mut done = HashSet::new();
    // The stand being read: its id, the byte offset of its first row, its rows so far and
    // whether all of them have every column.
    let mut current: Option<(Vec<u8>, usize, usize, bool)> = None;
    let mut keep = reader.position().byte() as usize;
    loop {
        let start = reader.position().byte() as usize;
        let more = read(&mut reader, &mut record)?;
        let end = reader.position().byte() as usize;
        let id = more.then(|| record.get(0).unwrap_or_default().to_vec());
        let well = record.len() == columns.len();
        match (current.as_mut(), &id) {
            (Some((stand, _, rows, all)), Some(id)) if stand == id => {
                *rows += 1;
                *all &= well;
                if *all && *rows == rows_per_stand && bytes[..end].ends_with(b"\n") {
                    keep = end;
                }
                continue;
            }
            _ => {}
        }
        if let Some((stand, first, rows, all)) = current.take() {
            let name = String::from_utf8_lossy(&stand).into_owned();
            if all && rows == rows_per_stand && keep > first {
                done.insert(name);
            } else if more {
                return Err(bad(format!(
                    "stand \"{name}\" has {rows} rows, not {rows_per_stand}, and is not the last"
                )));
            } else {
                keep = first;
            }
        }
        let Some(id) = id else { break };
        if well && rows_per_stand == 1 && bytes[..end].ends_with(b"\n") {
            keep = end;
        }
        current = Some((id, start, 1, well));
    }
    Ok((done, keep))
}
