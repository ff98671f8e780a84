//! `batch.csv`: the summary rows of every stand, one long file appended stand by stand.
//!
//! A fresh run writes to a hidden temp file in the target folder and renames it into place at
//! the end, so a failed run leaves no output. A resumed run appends to the existing file and
//! flushes after every stand, so an interrupted run can be resumed again.

use std::collections::HashSet;
use std::fs::{File, OpenOptions};
use std::io::Write;
use std::path::{Path, PathBuf};

use super::tables::summary_rows;
use crate::project::{Metric, ProjectionResult};
use crate::scenario::Scenario;
use crate::Error;

/// The columns of `batch.csv`.
pub const BATCH_COLUMNS: [&str; 11] = [
    "stand", "scenario", "driver", "year", "age", "metric", "mean", "sd", "p05", "p50", "p95",
];

/// The rows of one stand's projection in `batch.csv` (no header): `summary.csv` rows with
/// the stand id in front.
pub fn batch_rows(r: &ProjectionResult) -> Vec<u8> {
    let mut w = csv::Writer::from_writer(Vec::new());
    for row in summary_rows(r) {
        // Writing to memory cannot fail; an error here would be a bug in csv.
        let _ =
            w.write_record(std::iter::once(r.stand.as_str()).chain(row.iter().map(|s| s.as_str())));
    }
    w.into_inner().unwrap_or_default()
}

/// Rows one stand of `s` adds to `batch.csv`: one per metric and reported year.
pub fn rows_per_stand(s: &Scenario) -> usize {
    let steps = (s.horizon_years / s.step_years).round() as usize;
    (steps + 1) * Metric::ALL.len()
}

/// An open `batch.csv` being written.
#[derive(Debug)]
pub struct BatchOutput {
    file: File,
    target: PathBuf,
    /// The temp file of a fresh run, renamed to `target` by [`BatchOutput::finish`].
    temp: Option<PathBuf>,
}

impl BatchOutput {
    /// Start a fresh output: a hidden temp file next to `path`, holding the header.
    ///
    /// # Errors
    /// [`Error::Io`] when the folder cannot be written.
    pub fn create(path: &Path) -> Result<BatchOutput, Error> {
        let dir = match path.parent() {
            Some(d) if !d.as_os_str().is_empty() => d,
            _ => Path::new("."),
        };
        let name = path
            .file_name()
            .map(|n| n.to_string_lossy().into_owned())
            .ok_or_else(|| Error::Usage(format!("{}: not a file name", path.display())))?;
        let temp = dir.join(format!(".{name}.tmp-{}", std::process::id()));
        let file = File::create(&temp).map_err(|e| Error::io(&temp, e))?;
        let mut out = BatchOutput {
            file,
            target: path.to_path_buf(),
            temp: Some(temp),
        };
        out.write(&header())?;
        Ok(out)
    }

    /// Continue the output at `path`: the ids of the stands it holds in full (each with
    /// `rows_per_stand` rows and a final line end), after cutting off an incomplete last
    /// stand. Without a file at `path`, start one in place (header only).
    ///
    /// # Errors
    /// [`Error::Io`]; [`Error::Usage`] when the file is not a `batch.csv` (another header)
    /// or a stand other than the last is incomplete.
    pub fn resume(
        path: &Path,
        rows_per_stand: usize,
    ) -> Result<(BatchOutput, HashSet<String>), Error> {
        let shown = path.display().to_string();
        if !path.exists() {
            let file = File::create(path).map_err(|e| Error::io(path, e))?;
            let mut out = BatchOutput {
                file,
                target: path.to_path_buf(),
                temp: None,
            };
            out.write(&header())?;
            return Ok((out, HashSet::new()));
        }
        let bytes = std::fs::read(path).map_err(|e| Error::io(path, e))?;
        let (done, keep) = complete_stands(&bytes, &shown, rows_per_stand)?;
        let file = OpenOptions::new()
            .write(true)
            .open(path)
            .map_err(|e| Error::io(path, e))?;
        file.set_len(keep as u64).map_err(|e| Error::io(path, e))?;
        let file = OpenOptions::new()
            .append(true)
            .open(path)
            .map_err(|e| Error::io(path, e))?;
        let out = BatchOutput {
            file,
            target: path.to_path_buf(),
            temp: None,
        };
        Ok((out, done))
    }

    /// Append one stand's rows and flush them to the file.
    ///
    /// # Errors
    /// [`Error::Io`].
    pub fn append(&mut self, r: &ProjectionResult) -> Result<(), Error> {
        self.write(&batch_rows(r))
    }

    /// Close the output; a fresh run's temp file is renamed into place.
    ///
    /// # Errors
    /// [`Error::Io`]; the temp file is then removed.
    pub fn finish(mut self) -> Result<PathBuf, Error> {
        self.file
            .sync_all()
            .map_err(|e| Error::io(&self.target, e))?;
        if let Some(temp) = self.temp.take() {
            if let Err(e) = std::fs::rename(&temp, &self.target) {
                let _ = std::fs::remove_file(&temp);
                return Err(Error::io(&self.target, e));
            }
        }
        Ok(self.target.clone())
    }

    fn write(&mut self, bytes: &[u8]) -> Result<(), Error> {
        let shown = self.temp.as_ref().unwrap_or(&self.target).clone();
        self.file
            .write_all(bytes)
            .and_then(|()| self.file.flush())
            .map_err(|e| Error::io(shown, e))
    }
}

impl Drop for BatchOutput {
    /// A fresh run that did not finish leaves no file behind.
    fn drop(&mut self) {
        if let Some(temp) = self.temp.take() {
            let _ = std::fs::remove_file(temp);
        }
    }
}

fn header() -> Vec<u8> {
    let mut line = BATCH_COLUMNS.join(",");
    line.push('\n');
    line.into_bytes()
}

/// The stands held in full by a `batch.csv`, and the length in bytes to keep (up to the end of
/// the last complete stand).
fn complete_stands(
    bytes: &[u8],
    shown: &str,
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
    if !read(&mut reader, &mut record)?
        || record.iter().ne(BATCH_COLUMNS.iter().map(|c| c.as_bytes()))
    {
        return Err(bad(format!(
            "the first line is not the batch header {}",
            BATCH_COLUMNS.join(",")
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
        let well = record.len() == BATCH_COLUMNS.len();
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
