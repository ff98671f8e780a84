//! Reading a whole CSV file into columns.

use std::collections::{BTreeMap, HashMap};
use std::path::Path;

use sha2::{Digest, Sha256};

use super::columns::{trim_cell, ColumnBuilder};
use super::frame::Frame;
use super::DataError;

/// What to read from a CSV table.
#[derive(Debug, Clone, Default)]
pub struct TableOptions {
    /// Columns to read as text (categorical) even when every cell is a number.
    pub categorical: Vec<String>,
    /// Read only these columns (others are checked for the field count but not parsed);
    /// `None` reads every column. Names the file does not have are ignored here: the caller
    /// compares against [`Table::header`].
    pub columns: Option<Vec<String>>,
}

/// A CSV file in column form.
#[derive(Debug, Clone)]
pub struct Table {
    /// The records: every data row, with its line, and the columns that were read.
    pub frame: Frame,
    /// Every column name of the file, in file order.
    pub header: Vec<String>,
    /// SHA-256 of the file's bytes, 64 lowercase hex digits.
    pub sha256: String,
}

impl Table {
    /// True when the file has a column called `name`.
    pub fn has_column(&self, name: &str) -> bool {
        self.header.iter().any(|h| h == name)
    }

    /// The file's column names, comma separated, for messages.
    pub fn header_list(&self) -> String {
        self.header.join(", ")
    }
}

/// The SHA-256 of `bytes` as 64 lowercase hex digits (for the provenance of model files).
pub fn sha256_hex(bytes: &[u8]) -> String {
    use std::fmt::Write;
    let digest = Sha256::digest(bytes);
    let mut out = String::with_capacity(64);
    for b in digest.iter() {
        let _ = write!(out, "{b:02x}");
    }
    out
}

/// Read the file at `path` into a [`Table`]. Messages name the file as `path` is written.
///
/// # Errors
/// [`DataError::Io`] when the file cannot be read, and the errors of [`parse_table`].
pub fn read_table(path: &Path, options: &TableOptions) -> Result<Table, DataError> {
    let source = path.display().to_string();
    let bytes = read_bytes(path)?;
    parse_table(&bytes, &source, options)
}

/// The whole file at `path`, or [`DataError::Io`] naming it.
pub(super) fn read_bytes(path: &Path) -> Result<Vec<u8>, DataError> {
    std::fs::read(path).map_err(|e| DataError::Io {
        file: path.display().to_string(),
        source: e,
    })
}

/// Parse CSV `bytes` (named `source` in messages) into a [`Table`].
///
/// Each column becomes [`FrameColumn::Numeric`](super::FrameColumn::Numeric) when every
/// non-empty cell is a number (empty cells are `NaN`), else
/// [`FrameColumn::Text`](super::FrameColumn::Text). Cells are trimmed of surrounding spaces.
///
/// # Errors
/// [`DataError::File`] for an empty file, a header without records, duplicate column names or
/// malformed CSV; [`DataError::Record`] for a row with a different number of fields than the
/// header.
///
/// # Examples
/// ```
/// use stemcast::data::{parse_table, FrameColumn, TableOptions};
/// let t = parse_table(b"dbh,plot\n12.5,a\n,b\n", "trees.csv", &TableOptions::default()).unwrap();
/// assert_eq!(t.frame.lines, [2, 3]);
/// assert_eq!(t.frame.numeric("dbh").unwrap()[0], 12.5);
/// assert!(matches!(t.frame.column("plot"), Some(FrameColumn::Text { .. })));
/// ```
pub fn parse_table(bytes: &[u8], source: &str, options: &TableOptions) -> Result<Table, DataError> {
    let mut reader = csv_reader(bytes);
    let header = read_header(&mut reader, source)?;

    let wanted = |name: &str| match &options.columns {
        None => true,
        Some(list) => list.iter().any(|c| c == name),
    };
    // For each file column, the index of its builder when it is read.
    let mut slot: Vec<Option<usize>> = Vec::with_capacity(header.len());
    let mut names = Vec::new();
    // Line breaks bound the number of records (quoted breaks only make it an overestimate).
    let capacity = bytes.iter().filter(|&&b| b == b'\n').count() + 1;
    let mut builders = Vec::new();
    for name in &header {
        if wanted(name) {
            slot.push(Some(builders.len()));
            names.push(name.clone());
            let text = options.categorical.iter().any(|c| c == name);
            builders.push(ColumnBuilder::new(text, capacity));
        } else {
            slot.push(None);
        }
    }

    let mut lines = Vec::with_capacity(capacity);
    let mut record = csv::ByteRecord::new();
    while let Some(line) = next_record(&mut reader, &mut record, source, header.len())? {
        for (i, cell) in record.iter().enumerate() {
            if let Some(b) = slot[i] {
                builders[b].push(cell, line);
            }
        }
        lines.push(line);
    }
    if lines.is_empty() {
        return Err(DataError::file(
            source,
            "the file has a header but no records",
        ));
    }

    backfill(bytes, source, &slot, &mut builders)?;

    let columns: BTreeMap<_, _> = names
        .into_iter()
        .zip(builders)
        .map(|(name, b)| (name, b.finish()))
        .collect();
    Ok(Table {
        frame: Frame {
            source: source.to_string(),
            lines,
            columns,
        },
        header,
        sha256: sha256_hex(bytes),
    })
}

/// The checked header of CSV `bytes` (see [`parse_table`] for the errors).
pub(super) fn parse_header(bytes: &[u8], source: &str) -> Result<Vec<String>, DataError> {
    read_header(&mut csv_reader(bytes), source)
}

/// A CSV reader as every reader in this module uses it: header row, ragged rows reported by
/// us rather than by csv (so the message can say what the header has), and records ended by
/// `\n` alone. With csv's default CRLF terminator a record's position points at the `\n` of
/// the previous `\r\n`, so its line number would be one short; here the `\r` stays at the end
/// of the last cell, where trimming removes it, and [`next_record`] skips the blank lines
/// (`\r` alone) that this leaves as records.
pub(super) fn csv_reader<R: std::io::Read>(input: R) -> csv::Reader<R> {
    csv::ReaderBuilder::new()
        .has_headers(true)
        .flexible(true)
        .terminator(csv::Terminator::Any(b'\n'))
        .from_reader(input)
}

/// Read the next non-blank record into `record` and check it has `width` fields. Returns its
/// 1-based line, or `None` at the end.
pub(super) fn next_record<R: std::io::Read>(
    reader: &mut csv::Reader<R>,
    record: &mut csv::ByteRecord,
    source: &str,
    width: usize,
) -> Result<Option<u64>, DataError> {
    loop {
        if !reader
            .read_byte_record(record)
            .map_err(|e| csv_error(source, &e))?
        {
            return Ok(None);
        }
        if record.len() == 1 && trim_cell(&record[0]).is_empty() && width > 1 {
            continue;
        }
        let line = record.position().map_or(0, |p| p.line());
        check_width(source, line, record.len(), width)?;
        return Ok(Some(line));
    }
}

/// Read and check the header: not empty, names unique.
pub(super) fn read_header<R: std::io::Read>(
    reader: &mut csv::Reader<R>,
    source: &str,
) -> Result<Vec<String>, DataError> {
    let raw = reader
        .byte_headers()
        .map_err(|e| csv_error(source, &e))?
        .clone();
    if raw.is_empty() || (raw.len() == 1 && trim_cell(&raw[0]).is_empty()) {
        return Err(DataError::file(
            source,
            "the file is empty (no header line)",
        ));
    }
    let header: Vec<String> = raw
        .iter()
        .map(|h| String::from_utf8_lossy(trim_cell(h)).into_owned())
        .collect();
    let mut seen: HashMap<&str, usize> = HashMap::new();
    for (i, name) in header.iter().enumerate() {
        if let Some(first) = seen.insert(name.as_str(), i) {
            return Err(DataError::Record {
                file: source.to_string(),
                line: 1,
                message: format!(
                    "column name \"{name}\" appears twice (columns {} and {}); column names must be unique",
                    first + 1,
                    i + 1
                ),
            });
        }
    }
    Ok(header)
}

/// Error unless a record has as many fields as the header.
pub(super) fn check_width(
    source: &str,
    line: u64,
    fields: usize,
    expected: usize,
) -> Result<(), DataError> {
    if fields == expected {
        return Ok(());
    }
    Err(DataError::Record {
        file: source.to_string(),
        line,
        message: format!(
            "{fields} field{}, but the header has {expected}",
            if fields == 1 { "" } else { "s" }
        ),
    })
}

/// A csv parse or read error as a [`DataError`] with the line where it can tell.
pub(super) fn csv_error(source: &str, e: &csv::Error) -> DataError {
    let line = e.position().map(|p| p.line());
    let message = match e.kind() {
        csv::ErrorKind::Io(io) => io.to_string(),
        _ => e.to_string(),
    };
    match line {
        Some(line) => DataError::Record {
            file: source.to_string(),
            line,
            message,
        },
        None => DataError::file(source, message),
    }
}

/// Second pass over the leading records of the columns that turned from numbers to text, so
/// their early cells keep their exact text ("007" stays "007").
fn backfill(
    bytes: &[u8],
    source: &str,
    slot: &[Option<usize>],
    builders: &mut [ColumnBuilder],
) -> Result<(), DataError> {
    let rows = builders
        .iter()
        .map(ColumnBuilder::backfill_rows)
        .max()
        .unwrap_or(0);
    if rows == 0 {
        return Ok(());
    }
    let mut reader = csv_reader(bytes);
    let mut record = csv::ByteRecord::new();
    for row in 0..rows {
        if next_record(&mut reader, &mut record, source, slot.len())?.is_none() {
            break;
        }
        for (i, cell) in record.iter().enumerate() {
            if let Some(b) = slot[i] {
                if row < builders[b].backfill_rows() {
                    builders[b].backfill(row, cell);
                }
            }
        }
    }
    Ok(())
}
