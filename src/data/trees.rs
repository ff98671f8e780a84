//! Tree lists (projection input): per-stand arrays of tree ids, diameters, expansion factors
//! and attribute columns, read whole or streamed one stand at a time.

use std::collections::{BTreeMap, HashMap};
use std::io::Read;
use std::path::Path;

use super::columns::{parse_number, trim_cell, ColumnBuilder};
use super::frame::FrameColumn;
use super::remeasure::ColumnNames;
use super::table::{csv_reader, next_record, read_header};
use super::DataError;

/// What to read from a tree list.
#[derive(Debug, Clone, Default)]
pub struct TreeListSpec {
    /// Role column names; only `stand` (optional in the file), `tree`, `dbh` and `expansion`
    /// are used here.
    pub names: ColumnNames,
    /// Attribute columns to keep as text even when numeric (e.g. the categorical attributes
    /// of the models, so that level "1" stays "1").
    pub categorical: Vec<String>,
}

/// The trees of one stand, as a structure of arrays in file order.
#[derive(Debug, Clone, PartialEq)]
pub struct TreeRecords {
    /// The file name used in messages.
    pub source: String,
    /// The stand id; `None` when the file has no stand column.
    pub stand: Option<String>,
    /// Tree ids (unique within the stand).
    pub tree: Vec<String>,
    /// Diameters (cm or in), all finite and > 0.
    pub dbh: Vec<f64>,
    /// Stems per area unit each record represents, all finite and > 0.
    pub expansion: Vec<f64>,
    /// 1-based CSV line of each tree.
    pub lines: Vec<u64>,
    /// Every other column, numeric or text as in [`FrameColumn`], typed and with text levels
    /// from this stand's rows only (declare a column categorical in [`TreeListSpec`] to keep
    /// it text in every stand).
    pub attributes: BTreeMap<String, FrameColumn>,
}

impl TreeRecords {
    /// Number of trees.
    pub fn len(&self) -> usize {
        self.tree.len()
    }

    /// True without trees.
    pub fn is_empty(&self) -> bool {
        self.tree.is_empty()
    }
}

/// Where the role columns are in a file.
#[derive(Debug, Clone)]
pub(super) struct Layout {
    pub(super) source: String,
    stand: Option<usize>,
    tree: usize,
    dbh: usize,
    expansion: usize,
    /// (file index, name, declared categorical) of the attribute columns.
    attributes: Vec<(usize, String, bool)>,
    pub(super) names: ColumnNames,
    width: usize,
}

impl Layout {
    pub(super) fn new(
        header: &[String],
        source: &str,
        spec: &TreeListSpec,
    ) -> Result<Self, DataError> {
        let find = |c: &str| header.iter().position(|h| h == c);
        let need = |c: &str| {
            find(c).ok_or_else(|| DataError::MissingColumn {
                file: source.to_string(),
                column: c.to_string(),
                why: "every tree list needs tree, dbh and expansion".to_string(),
                available: header.join(", "),
            })
        };
        let names = spec.names.clone();
        let stand = find(&names.stand);
        let (tree, dbh, expansion) = (
            need(&names.tree)?,
            need(&names.dbh)?,
            need(&names.expansion)?,
        );
        let attributes = header
            .iter()
            .enumerate()
            .filter(|(i, _)| ![stand, Some(tree), Some(dbh), Some(expansion)].contains(&Some(*i)))
            .map(|(i, h)| (i, h.clone(), spec.categorical.contains(h)))
            .collect();
        Ok(Layout {
            source: source.to_string(),
            stand,
            tree,
            dbh,
            expansion,
            attributes,
            names,
            width: header.len(),
        })
    }

    /// The stand key of a record (trimmed bytes); empty when the file has no stand column.
    pub(super) fn stand_key<'r>(
        &self,
        record: &'r csv::ByteRecord,
        line: u64,
    ) -> Result<&'r [u8], DataError> {
        let Some(s) = self.stand else {
            return Ok(&[]);
        };
        let key = trim_cell(&record[s]);
        if key.is_empty() {
            return Err(DataError::cell(
                &self.source,
                line,
                &self.names.stand,
                "the stand is empty",
            ));
        }
        Ok(key)
    }

    /// Build one stand's tree list from its records.
    pub(super) fn build(
        &self,
        records: &[(csv::ByteRecord, u64)],
    ) -> Result<TreeRecords, DataError> {
        let n = records.len();
        let stand = match (self.stand, records.first()) {
            (Some(s), Some((r, _))) => Some(String::from_utf8_lossy(trim_cell(&r[s])).into_owned()),
            _ => None,
        };
        let mut list = TreeRecords {
            source: self.source.clone(),
            stand,
            tree: Vec::with_capacity(n),
            dbh: Vec::with_capacity(n),
            expansion: Vec::with_capacity(n),
            lines: Vec::with_capacity(n),
            attributes: BTreeMap::new(),
        };
        let mut seen: HashMap<String, u64> = HashMap::with_capacity(n);
        for (record, line) in records {
            let line = *line;
            let id = String::from_utf8_lossy(trim_cell(&record[self.tree])).into_owned();
            let error = |column: &str, message: String| {
                DataError::cell(&self.source, line, column, message)
            };
            if id.is_empty() {
                return Err(error(&self.names.tree, "the tree id is empty".into()));
            }
            if let Some(first) = seen.insert(id.clone(), line) {
                let within = list
                    .stand
                    .as_ref()
                    .map(|s| format!(" in stand \"{s}\""))
                    .unwrap_or_default();
                return Err(error(
                    &self.names.tree,
                    format!("tree id \"{id}\" appears twice{within} (lines {first} and {line}); tree ids must be unique within a stand"),
                ));
            }
            list.tree.push(id);
            for (index, name, what, max, out) in [
                (
                    self.dbh,
                    &self.names.dbh,
                    "a positive diameter",
                    super::limits::MAX_DBH_CM,
                    &mut list.dbh,
                ),
                (
                    self.expansion,
                    &self.names.expansion,
                    "a positive expansion factor",
                    super::limits::MAX_STEMS_PER_HA,
                    &mut list.expansion,
                ),
            ] {
                let cell = trim_cell(&record[index]);
                let text = String::from_utf8_lossy(cell);
                match parse_number(cell) {
                    _ if cell.is_empty() => {
                        return Err(error(name, format!("the cell is empty; it needs {what}")))
                    }
                    None => return Err(error(name, format!("\"{text}\" is not a number"))),
                    Some(v) if !(v.is_finite() && v > 0.0) => {
                        return Err(error(name, format!("{text} is not {what}")))
                    }
                    Some(v) if v > max => {
                        return Err(error(
                            name,
                            format!(
                            "{text} is above the physical limit of {max} (docs/scenario.md#limits)"
                        ),
                        ))
                    }
                    Some(v) => out.push(v),
                }
            }
            list.lines.push(line);
        }
        for (index, name, text) in &self.attributes {
            let mut builder = ColumnBuilder::new(*text, n);
            for (record, line) in records {
                builder.push(&record[*index], *line);
            }
            let rows = builder.backfill_rows();
            for (row, (record, _)) in records.iter().take(rows).enumerate() {
                builder.backfill(row, &record[*index]);
            }
            list.attributes.insert(name.clone(), builder.finish());
        }
        Ok(list)
    }
}

/// Read every stand of the tree list at `path`, in the order of each stand's first row (the
/// file need not be sorted). Without a stand column the whole file is one stand.
///
/// # Errors
/// [`DataError::Io`]; [`DataError::File`]/[`DataError::Record`] for an empty file, duplicate
/// column names or ragged rows; [`DataError::MissingColumn`] without `tree`, `dbh` or
/// `expansion`; [`DataError::Cell`] for an empty stand or tree id, a tree id repeated within a
/// stand, and a `dbh` or `expansion` that is not a positive number.
pub fn read_tree_lists(path: &Path, spec: &TreeListSpec) -> Result<Vec<TreeRecords>, DataError> {
    let source = path.display().to_string();
    let file = open(path)?;
    let mut reader = csv_reader(std::io::BufReader::new(file));
    let header = read_header(&mut reader, &source)?;
    let layout = Layout::new(&header, &source, spec)?;
    let mut groups: Vec<Vec<(csv::ByteRecord, u64)>> = Vec::new();
    let mut index: HashMap<Vec<u8>, usize> = HashMap::new();
    let mut record = csv::ByteRecord::new();
    while read_record(&mut reader, &mut record, &layout)? {
        let line = line_of(&record);
        let key = layout.stand_key(&record, line)?;
        let g = match index.get(key) {
            Some(&g) => g,
            None => {
                index.insert(key.to_vec(), groups.len());
                groups.push(Vec::new());
                groups.len() - 1
            }
        };
        groups[g].push((record.clone(), line));
    }
    if groups.is_empty() {
        return Err(DataError::file(
            &source,
            "the file has a header but no records",
        ));
    }
    groups.iter().map(|g| layout.build(g)).collect()
}

/// Read a tree list that must hold exactly one stand (`stemcast project`).
///
/// # Errors
/// As [`read_tree_lists`], and [`DataError::File`] when the file holds several stands.
pub fn read_single_stand(path: &Path, spec: &TreeListSpec) -> Result<TreeRecords, DataError> {
    let mut lists = read_tree_lists(path, spec)?;
    if lists.len() > 1 {
        const SHOWN: usize = 5;
        let mut ids: Vec<String> = lists
            .iter()
            .take(SHOWN)
            .map(|l| format!("\"{}\"", l.stand.as_deref().unwrap_or_default()))
            .collect();
        if lists.len() > SHOWN {
            ids.push(format!("… {} in all", lists.len()));
        }
        return Err(DataError::cell(
            path.display().to_string(),
            lists[1].lines.first().copied().unwrap_or(0),
            spec.names.stand.clone(),
            format!(
                "stand \"{}\" is a second stand (stands: {}); `stemcast project` takes one stand: use `stemcast batch` for several",
                lists[1].stand.as_deref().unwrap_or_default(),
                ids.join(", ")
            ),
        ));
    }
    lists
        .pop()
        .ok_or_else(|| DataError::file(path.display().to_string(), "no trees"))
}

pub(super) fn open(path: &Path) -> Result<std::fs::File, DataError> {
    std::fs::File::open(path).map_err(|e| DataError::Io {
        file: path.display().to_string(),
        source: e,
    })
}

pub(super) fn line_of(record: &csv::ByteRecord) -> u64 {
    record.position().map_or(0, |p| p.line())
}

/// Read the next non-blank record and check its width; false at the end.
pub(super) fn read_record<R: Read>(
    reader: &mut csv::Reader<R>,
    record: &mut csv::ByteRecord,
    layout: &Layout,
) -> Result<bool, DataError> {
    Ok(next_record(reader, record, &layout.source, layout.width)?.is_some())
}
