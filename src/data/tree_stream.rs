//! Streaming a tree list one stand at a time (batch runs over many stands).

use std::collections::HashSet;
use std::io::Read;
use std::path::Path;

use super::table::{csv_reader, read_header};
use super::trees::{line_of, open, read_record, Layout, TreeListSpec, TreeRecords};
use super::DataError;

/// Reads a tree list one stand at a time, for batch runs over many stands: memory holds one
/// stand's records plus the set of stand ids already seen. The rows of each stand must be
/// contiguous (e.g. the file sorted by stand).
pub struct TreeListStream<R: Read> {
    reader: csv::Reader<R>,
    layout: Layout,
    /// The first record of the next stand, read while finishing the previous one.
    pending: Option<(csv::ByteRecord, u64)>,
    seen: HashSet<Vec<u8>>,
    failed: bool,
}

// The stream ends after an error; `seen` also tells whether any stand was read, so that a
// file with a header and no records is reported rather than taken as zero stands.

impl TreeListStream<std::io::BufReader<std::fs::File>> {
    /// Open the tree list at `path` and check its header.
    ///
    /// # Errors
    /// [`DataError::Io`], and the header errors of [`read_tree_lists`](super::read_tree_lists).
    pub fn open(path: &Path, spec: &TreeListSpec) -> Result<Self, DataError> {
        let file = open(path)?;
        Self::from_reader(
            std::io::BufReader::new(file),
            &path.display().to_string(),
            spec,
        )
    }
}

impl<R: Read> TreeListStream<R> {
    /// Stream stands from any reader, named `source` in messages.
    ///
    /// # Errors
    /// The header errors of [`read_tree_lists`](super::read_tree_lists).
    pub fn from_reader(input: R, source: &str, spec: &TreeListSpec) -> Result<Self, DataError> {
        let mut reader = csv_reader(input);
        let header = read_header(&mut reader, source)?;
        let layout = Layout::new(&header, source, spec)?;
        Ok(TreeListStream {
            reader,
            layout,
            pending: None,
            seen: HashSet::new(),
            failed: false,
        })
    }

    fn next_stand(&mut self) -> Result<Option<TreeRecords>, DataError> {
        let mut records = Vec::new();
        if let Some(first) = self.pending.take() {
            records.push(first);
        }
        let mut record = csv::ByteRecord::new();
        while read_record(&mut self.reader, &mut record, &self.layout)? {
            let line = line_of(&record);
            let key = self.layout.stand_key(&record, line)?;
            let same = match records.first() {
                None => true,
                Some((r, l)) => self.layout.stand_key(r, *l)? == key,
            };
            if same {
                records.push((record.clone(), line));
            } else {
                self.pending = Some((record.clone(), line));
                break;
            }
        }
        let Some((first, line)) = records.first() else {
            if self.seen.is_empty() {
                return Err(DataError::file(
                    &self.layout.source,
                    "the file has a header but no records",
                ));
            }
            return Ok(None);
        };
        let key = self.layout.stand_key(first, *line)?.to_vec();
        if !self.seen.insert(key.clone()) {
            return Err(DataError::cell(
                &self.layout.source,
                *line,
                &self.layout.names.stand,
                format!(
                    "stand \"{}\" appears again after other stands; the rows of a stand must be together (sort the file by stand)",
                    String::from_utf8_lossy(&key)
                ),
            ));
        }
        self.layout.build(&records).map(Some)
    }
}

impl<R: Read> Iterator for TreeListStream<R> {
    type Item = Result<TreeRecords, DataError>;

    /// The next stand; after an error the stream ends.
    fn next(&mut self) -> Option<Self::Item> {
        if self.failed {
            return None;
        }
        let item = self.next_stand().transpose();
        if matches!(item, Some(Err(_))) {
            self.failed = true;
        }
        item
    }
}
