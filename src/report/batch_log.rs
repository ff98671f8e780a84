//! The side files of a batch run (`docs/outputs.md#batch`): `<out>.warnings.csv` (stand,
//! warning: every warning of every stand, in input order) and `<out>.failed.csv` (stand,
//! error: the stands that could not be projected), and the aggregated warning lines printed at
//! the end (one per distinct warning, with the number of stands and the range of each number).

use std::collections::{BTreeMap, HashSet};
use std::fs::{File, OpenOptions};
use std::io::Write;
use std::path::{Path, PathBuf};

use super::batch::sibling;
use crate::Error;

/// The warnings file beside an output.
pub fn warnings_path(out: &Path) -> PathBuf {
    sibling(out, ".warnings.csv")
}

/// The failed-stands file beside an output.
pub fn failed_path(out: &Path) -> PathBuf {
    sibling(out, ".failed.csv")
}

/// One distinct warning: how many stands gave it, and the smallest and largest value (with the
/// text as printed) at each of its numbers.
#[derive(Debug, Clone)]
struct Seen {
    stands: usize,
    last_stand: String,
    ranges: Vec<[(f64, String); 2]>,
}

/// The side files of a batch being written.
#[derive(Debug)]
pub struct BatchLog {
    warnings: File,
    warnings_path: PathBuf,
    failed: Option<File>,
    failed_path: PathBuf,
    seen: BTreeMap<String, Seen>,
    order: Vec<String>,
}

impl BatchLog {
    /// Open the side files of `out`. The warnings of the stands in `done` (a resumed output)
    /// are kept, every other row is dropped; the failed-stands file of an earlier run is
    /// removed (its stands are tried again).
    ///
    /// # Errors
    /// [`Error::Io`].
    pub fn open(out: &Path, done: &HashSet<String>) -> Result<BatchLog, Error> {
        let warnings_path = warnings_path(out);
        let failed_path = failed_path(out);
        match std::fs::remove_file(&failed_path) {
            Err(e) if e.kind() != std::io::ErrorKind::NotFound => {
                return Err(Error::io(&failed_path, e))
            }
            _ => {}
        }
        let mut kept = Vec::new();
        if !done.is_empty() {
            if let Ok(bytes) = std::fs::read(&warnings_path) {
                let mut r = csv::Reader::from_reader(bytes.as_slice());
                for row in r.records().flatten() {
                    if let (Some(stand), Some(w)) = (row.get(0), row.get(1)) {
                        if done.contains(stand) {
                            kept.push((stand.to_string(), w.to_string()));
                        }
                    }
                }
            }
        }
        let mut bytes = csv_line(&["stand", "warning"]);
        for (stand, w) in &kept {
            bytes.extend(csv_line(&[stand, w]));
        }
        // The kept rows are written whole before the file is opened for appending, so that a kill
        // at any point leaves either the old or the new list.
        crate::atomic::write_atomic(&warnings_path, &bytes)?;
        let warnings = OpenOptions::new()
            .append(true)
            .open(&warnings_path)
            .map_err(|e| Error::io(&warnings_path, e))?;
        let mut log = BatchLog {
            warnings,
            warnings_path,
            failed: None,
            failed_path,
            seen: BTreeMap::new(),
            order: Vec::new(),
        };
        for (stand, w) in &kept {
            log.count(w, stand);
        }
        Ok(log)
    }

    /// Record the warnings of one projected stand (flushed before its rows are written).
    ///
    /// # Errors
    /// [`Error::Io`].
    pub fn warn(&mut self, stand: &str, warnings: &[String]) -> Result<(), Error> {
        let mut bytes = Vec::new();
        for w in warnings {
            bytes.extend(csv_line(&[stand, w]));
            self.count(w, stand);
        }
        let path = self.warnings_path.clone();
        self.warnings
            .write_all(&bytes)
            .and_then(|()| self.warnings.flush())
            .map_err(|e| Error::io(path, e))
    }

    /// Record a stand that failed.
    ///
    /// # Errors
    /// [`Error::Io`].
    pub fn fail(&mut self, stand: &str, error: &Error) -> Result<(), Error> {
        let path = self.failed_path.clone();
        if self.failed.is_none() {
            let mut f = File::create(&path).map_err(|e| Error::io(&path, e))?;
            f.write_all(&csv_line(&["stand", "error"]))
                .map_err(|e| Error::io(&path, e))?;
            self.failed = Some(f);
        }
        let line = csv_line(&[stand, &error.to_string()]);
        match self.failed.as_mut() {
            Some(f) => f
                .write_all(&line)
                .and_then(|()| f.flush())
                .map_err(|e| Error::io(path, e)),
            None => Ok(()),
        }
    }

    /// One line per distinct warning, in order of first appearance: the number of stands, then
    /// the warning with each number that varied shown as `min–max`.
    pub fn summary(&self) -> Vec<String> {
        self.order
            .iter()
            .filter_map(|key| {
                let seen = self.seen.get(key)?;
                let mut parts = key.split('\u{0}');
                let mut text = parts.next().unwrap_or_default().to_string();
                for (part, [lo, hi]) in parts.zip(&seen.ranges) {
                    if lo.1 == hi.1 {
                        text.push_str(&lo.1);
                    } else {
                        text.push_str(&format!("{}–{}", lo.1, hi.1));
                    }
                    text.push_str(part);
                }
                let n = seen.stands;
                Some(format!(
                    "{n} stand{}: {text}",
                    if n == 1 { "" } else { "s" }
                ))
            })
            .collect()
    }

    /// The failed-stands file, when a stand failed.
    pub fn failed_file(&self) -> Option<&Path> {
        self.failed.as_ref().map(|_| self.failed_path.as_path())
    }

    /// The warnings file.
    pub fn warnings_file(&self) -> &Path {
        &self.warnings_path
    }

    /// Remove both files (a fresh run that ended on bad input).
    pub fn discard(self) {
        let _ = std::fs::remove_file(&self.warnings_path);
        let _ = std::fs::remove_file(&self.failed_path);
    }

    /// Count `warning` of `stand` (the rows of a stand come together).
    fn count(&mut self, warning: &str, stand: &str) {
        let (key, numbers) = template(warning);
        let seen = self.seen.entry(key.clone()).or_insert_with(|| {
            self.order.push(key);
            Seen {
                stands: 0,
                last_stand: String::new(),
                ranges: numbers.iter().map(|n| [n.clone(), n.clone()]).collect(),
            }
        });
        if seen.stands == 0 || seen.last_stand != stand {
            seen.stands += 1;
            seen.last_stand = stand.to_string();
        }
        for (r, n) in seen.ranges.iter_mut().zip(numbers) {
            if n.0 < r[0].0 {
                r[0] = n.clone();
            }
            if n.0 > r[1].0 {
                r[1] = n;
            }
        }
    }
}

/// A warning with its numbers cut out (the key, parts joined by NUL) and the numbers.
fn template(w: &str) -> (String, Vec<(f64, String)>) {
    let b = w.as_bytes();
    let (mut key, mut numbers, mut i, mut from) = (String::new(), Vec::new(), 0, 0);
    while i < b.len() {
        let prev_word = i > 0 && (b[i - 1].is_ascii_alphanumeric() || b"_.-".contains(&b[i - 1]));
        let starts =
            b[i].is_ascii_digit() || (b[i] == b'-' && b.get(i + 1).is_some_and(u8::is_ascii_digit));
        if !starts || prev_word {
            i += 1;
            continue;
        }
        let mut j = i + 1;
        while j < b.len() && b[j].is_ascii_digit() {
            j += 1;
        }
        if j + 1 < b.len() && b[j] == b'.' && b[j + 1].is_ascii_digit() {
            j += 1;
            while j < b.len() && b[j].is_ascii_digit() {
                j += 1;
            }
        }
        let text = &w[i..j];
        match text.parse::<f64>() {
            Ok(v) if !(j < b.len() && b[j].is_ascii_alphabetic()) => {
                key.push_str(&w[from..i]);
                key.push('\u{0}');
                numbers.push((v, text.to_string()));
                from = j;
            }
            _ => {}
        }
        i = j;
    }
    key.push_str(&w[from..]);
    (key, numbers)
}

fn csv_line(fields: &[&str]) -> Vec<u8> {
    let mut w = csv::Writer::from_writer(Vec::new());
    // Writing to memory cannot fail.
    let _ = w.write_record(fields);
    w.into_inner().unwrap_or_default()
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn numbers_are_cut_out_of_words_but_not_names() {
        let (key, n) = template("model g2.toml: `dbh` over [3.5, -12] in 7 of 30");
        assert_eq!(key, "model g2.toml: `dbh` over [\0, \0] in \0 of \0");
        let v: Vec<f64> = n.iter().map(|x| x.0).collect();
        assert_eq!(v, [3.5, -12.0, 7.0, 30.0]);
    }

    #[test]
    fn the_summary_gives_stand_counts_and_ranges() {
        let dir = tempfile::tempdir().expect("temp dir");
        let out = dir.path().join("b.csv");
        let mut log = BatchLog::open(&out, &HashSet::new()).expect("open");
        log.warn("a", &["x at 3.5 of 30".into(), "y".into()])
            .expect("warn");
        log.warn("b", &["x at 1.25 of 30".into()]).expect("warn");
        assert_eq!(
            log.summary(),
            ["2 stands: x at 1.25–3.5 of 30", "1 stand: y"]
        );
        let text = std::fs::read_to_string(warnings_path(&out)).expect("file");
        assert_eq!(
            text,
            "stand,warning\na,x at 3.5 of 30\na,y\nb,x at 1.25 of 30\n"
        );
    }
}
