//! A validated, column-oriented table of the records that enter a fit or a projection.

use std::borrow::Cow;
use std::collections::BTreeMap;

use super::columns::{parse_number, EMPTY_CODE};

/// One column of a [`Frame`].
#[derive(Debug, Clone, PartialEq)]
pub enum FrameColumn {
    /// Every non-empty cell parsed as a number. Empty cells are `NaN`.
    Numeric(Vec<f64>),
    /// At least one cell is not a number (or the user declared the column categorical).
    Text {
        /// Distinct non-empty values in byte order.
        levels: Vec<String>,
        /// Index into `levels` per record; `u32::MAX` for an empty cell.
        codes: Vec<u32>,
        /// The first cell that is not a number, as (line, value), for error messages when a
        /// term wants this column as a number. `None` when declared categorical by the user
        /// while all cells were numeric.
        first_text: Option<(u64, String)>,
    },
}

/// Records (rows) selected for a fit, column by column, with the CSV line of each record so
/// that later stages can still point at the input.
#[derive(Debug, Clone, Default)]
pub struct Frame {
    /// The file name used in messages.
    pub source: String,
    /// 1-based CSV line of each record.
    pub lines: Vec<u64>,
    /// Columns by name: the file's columns plus derived covariates (`ba`, `bal`, …).
    pub columns: BTreeMap<String, FrameColumn>,
}

impl Frame {
    /// Number of records.
    pub fn len(&self) -> usize {
        self.lines.len()
    }

    /// True when the frame holds no records.
    pub fn is_empty(&self) -> bool {
        self.lines.is_empty()
    }

    /// The column called `name`, if present.
    pub fn column(&self, name: &str) -> Option<&FrameColumn> {
        self.columns.get(name)
    }
}

impl FrameColumn {
    /// Number of cells.
    pub fn len(&self) -> usize {
        match self {
            FrameColumn::Numeric(values) => values.len(),
            FrameColumn::Text { codes, .. } => codes.len(),
        }
    }

    /// True when the column has no cells.
    pub fn is_empty(&self) -> bool {
        self.len() == 0
    }

    /// The values of a numeric column.
    pub fn as_numeric(&self) -> Option<&[f64]> {
        match self {
            FrameColumn::Numeric(values) => Some(values),
            FrameColumn::Text { .. } => None,
        }
    }

    /// True when cell `i` is empty (`NaN` in a numeric column; no level in a text column).
    pub fn is_missing(&self, i: usize) -> bool {
        match self {
            FrameColumn::Numeric(values) => values[i].is_nan(),
            FrameColumn::Text { codes, .. } => codes[i] == EMPTY_CODE,
        }
    }

    /// Cell `i` as text (numbers in Rust's shortest form); `None` when empty.
    pub fn text(&self, i: usize) -> Option<Cow<'_, str>> {
        match self {
            FrameColumn::Numeric(values) => {
                let v = values[i];
                (!v.is_nan()).then(|| Cow::Owned(v.to_string()))
            }
            FrameColumn::Text { levels, codes, .. } => {
                let code = codes[i];
                (code != EMPTY_CODE).then(|| Cow::Borrowed(levels[code as usize].as_str()))
            }
        }
    }

    /// Cell `i` as a number: `Ok(NaN)` when empty, `Err(text)` when it is not a number.
    pub fn number(&self, i: usize) -> Result<f64, &str> {
        match self {
            FrameColumn::Numeric(values) => Ok(values[i]),
            FrameColumn::Text { levels, codes, .. } => {
                let code = codes[i];
                if code == EMPTY_CODE {
                    return Ok(f64::NAN);
                }
                let level = levels[code as usize].as_str();
                parse_number(level.as_bytes()).ok_or(level)
            }
        }
    }

    /// The cells as numbers when every non-empty cell is one (a numeric column, or a text
    /// column without `first_text`); `None` otherwise.
    pub fn to_numeric(&self) -> Option<Vec<f64>> {
        match self {
            FrameColumn::Numeric(values) => Some(values.clone()),
            FrameColumn::Text {
                levels,
                codes,
                first_text,
            } => {
                if first_text.is_some() {
                    return None;
                }
                let numbers = levels
                    .iter()
                    .map(|l| parse_number(l.as_bytes()))
                    .collect::<Option<Vec<f64>>>()?;
                Some(
                    codes
                        .iter()
                        .map(|&c| {
                            if c == EMPTY_CODE {
                                f64::NAN
                            } else {
                                numbers[c as usize]
                            }
                        })
                        .collect(),
                )
            }
        }
    }

    /// Keep the cells where `keep` is true. Text levels that no kept cell uses are dropped and
    /// `first_text` is recomputed over the kept cells (`lines` are the kept cells' lines).
    pub fn retain(&mut self, keep: &[bool], lines: &[u64]) {
        match self {
            FrameColumn::Numeric(values) => {
                let mut it = keep.iter();
                values.retain(|_| it.next().copied().unwrap_or(false));
            }
            FrameColumn::Text {
                levels,
                codes,
                first_text,
            } => {
                let mut it = keep.iter();
                codes.retain(|_| it.next().copied().unwrap_or(false));
                let mut used = vec![false; levels.len()];
                for &c in codes.iter().filter(|&&c| c != EMPTY_CODE) {
                    used[c as usize] = true;
                }
                let mut remap = vec![EMPTY_CODE; levels.len()];
                let mut kept = Vec::new();
                for (old, level) in std::mem::take(levels).into_iter().enumerate() {
                    if used[old] {
                        remap[old] = kept.len() as u32;
                        kept.push(level);
                    }
                }
                *levels = kept;
                for c in codes.iter_mut().filter(|c| **c != EMPTY_CODE) {
                    *c = remap[*c as usize];
                }
                let is_text: Vec<bool> = levels
                    .iter()
                    .map(|l| parse_number(l.as_bytes()).is_none())
                    .collect();
                *first_text = codes
                    .iter()
                    .zip(lines)
                    .find(|(&c, _)| c != EMPTY_CODE && is_text[c as usize])
                    .map(|(&c, &line)| (line, levels[c as usize].clone()));
            }
        }
    }
}

impl Frame {
    /// Keep the records where `keep` is true, in every column.
    ///
    /// # Panics
    /// When `keep` is shorter than the frame.
    pub fn retain(&mut self, keep: &[bool]) {
        assert!(keep.len() >= self.len(), "keep mask shorter than the frame");
        let mut it = keep.iter();
        self.lines.retain(|_| it.next().copied().unwrap_or(false));
        for column in self.columns.values_mut() {
            column.retain(keep, &self.lines);
        }
    }

    /// The column called `name` as numbers, if it is numeric.
    pub fn numeric(&self, name: &str) -> Option<&[f64]> {
        self.columns.get(name).and_then(FrameColumn::as_numeric)
    }
}
