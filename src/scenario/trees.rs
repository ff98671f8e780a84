//! The trees at year 0 (structure of arrays) and a small reader for one-stand tree-list CSV
//! files: `stand` (optional), `tree`, `dbh` (cm), `expansion` (stems/ha), attribute columns.

use std::collections::HashMap;
use std::path::Path;

use super::ScenarioError;

/// Values of one attribute for every tree.
#[derive(Debug, Clone, PartialEq)]
pub enum AttributeValues {
    /// A numeric attribute.
    Numeric(Vec<f64>),
    /// A categorical attribute: `codes[i]` indexes `levels`.
    Categorical {
        /// Distinct values in byte order, then levels that `set` actions introduce.
        levels: Vec<String>,
        /// One code per tree.
        codes: Vec<u32>,
    },
}

/// A named attribute carried by every tree.
#[derive(Debug, Clone, PartialEq)]
pub struct Attribute {
    /// Attribute name (as used in model terms).
    pub name: String,
    /// One value per tree.
    pub values: AttributeValues,
}

/// The trees of one stand at year 0, in input order.
#[derive(Debug, Clone, PartialEq)]
pub struct TreeList {
    /// Stand identifier (`1` when the input has none).
    pub stand: String,
    /// Tree identifiers, unique.
    pub tree_ids: Vec<String>,
    /// DBH in cm, positive.
    pub dbh_cm: Vec<f64>,
    /// Expansion factor: stems per hectare each record represents, positive.
    pub stems_per_ha: Vec<f64>,
    /// Attributes, one value per tree each.
    pub attributes: Vec<Attribute>,
}

impl TreeList {
    /// Number of records.
    pub fn len(&self) -> usize {
        self.dbh_cm.len()
    }

    /// True when there are no records.
    pub fn is_empty(&self) -> bool {
        self.dbh_cm.is_empty()
    }

    /// The attribute called `name`.
    pub fn attribute(&self, name: &str) -> Option<&Attribute> {
        self.attributes.iter().find(|a| a.name == name)
    }

    /// Give every tree the value `value` of attribute `name` (a number or a level).
    pub(crate) fn set_constant(&mut self, name: &str, value: Constant) {
        let n = self.len();
        let values = match value {
            Constant::Number(x) => AttributeValues::Numeric(vec![x; n]),
            Constant::Level(s) => AttributeValues::Categorical {
                levels: vec![s],
                codes: vec![0; n],
            },
        };
        self.attributes.push(Attribute {
            name: name.to_string(),
            values,
        });
    }
}

/// A value given to every tree.
#[derive(Debug, Clone, PartialEq)]
pub(crate) enum Constant {
    Number(f64),
    Level(String),
}

const RESERVED: [&str; 4] = ["stand", "tree", "dbh", "expansion"];

/// Read a one-stand tree list.
///
/// # Errors
/// [`ScenarioError::Cell`] naming file, line and column for a bad value, a duplicate tree id,
/// a second stand or a non-positive DBH or expansion; [`ScenarioError::TreeFile`] for a missing
/// column, an empty file or an unreadable file.
pub fn read_tree_list(path: &Path, shown: &str) -> Result<TreeList, ScenarioError> {
    let file_err = |message: String| ScenarioError::TreeFile {
        file: shown.to_string(),
        message,
    };
    let mut reader = csv::ReaderBuilder::new()
        .trim(csv::Trim::All)
        .from_path(path)
        .map_err(|e| file_err(format!("cannot be read: {e}")))?;
    let headers = reader
        .headers()
        .map_err(|e| file_err(format!("bad header: {e}")))?
        .clone();
    let column = |name: &str| headers.iter().position(|h| h == name);
    let need = |name: &str| {
        column(name).ok_or_else(|| {
            file_err(format!(
                "no column \"{name}\"; the file has: {}",
                headers.iter().collect::<Vec<_>>().join(", ")
            ))
        })
    };
    let (tree_col, dbh_col, exp_col) = (need("tree")?, need("dbh")?, need("expansion")?);
    let stand_col = column("stand");
    let attr_cols: Vec<usize> = (0..headers.len())
        .filter(|&i| !RESERVED.contains(&&headers[i]))
        .collect();
    let mut stand: Option<(String, u64)> = None;
    let mut seen: HashMap<String, u64> = HashMap::new();
    let mut list = TreeList {
        stand: "1".into(),
        tree_ids: Vec::new(),
        dbh_cm: Vec::new(),
        stems_per_ha: Vec::new(),
        attributes: Vec::new(),
    };
    let mut raw_attrs: Vec<Vec<String>> = vec![Vec::new(); attr_cols.len()];
    for record in reader.records() {
        let record = record.map_err(|e| file_err(e.to_string()))?;
        let line = record.position().map_or(0, |p| p.line());
        let cell_err = |col: usize, message: String| ScenarioError::Cell {
            file: shown.to_string(),
            line,
            column: headers[col].to_string(),
            message,
        };
        let get = |col: usize| record.get(col).unwrap_or("");
        if let Some(sc) = stand_col {
            let s = get(sc).to_string();
            match &stand {
                None => stand = Some((s, line)),
                Some((first, first_line)) if *first != s => {
                    return Err(cell_err(sc, format!(
                        "stand \"{s}\" differs from stand \"{first}\" on line {first_line}; `project` takes one stand (use `batch` for several)"
                    )))
                }
                Some(_) => {}
            }
        }
        let id = get(tree_col).to_string();
        if id.is_empty() {
            return Err(cell_err(tree_col, "empty tree id".into()));
        }
        if let Some(first) = seen.insert(id.clone(), line) {
            return Err(cell_err(
                tree_col,
                format!("tree \"{id}\" appears twice (first on line {first})"),
            ));
        }
        let positive = |col: usize| -> Result<f64, ScenarioError> {
            let text = get(col);
            match text.parse::<f64>() {
                Ok(x) if x > 0.0 && x.is_finite() => Ok(x),
                Ok(_) => Err(cell_err(
                    col,
                    format!("\"{text}\" is not a positive number"),
                )),
                Err(_) => Err(cell_err(col, format!("\"{text}\" is not a number"))),
            }
        };
        list.dbh_cm.push(positive(dbh_col)?);
        list.stems_per_ha.push(positive(exp_col)?);
        list.tree_ids.push(id);
        for (k, &col) in attr_cols.iter().enumerate() {
            let v = get(col);
            if v.is_empty() {
                return Err(cell_err(col, "empty attribute value".into()));
            }
            raw_attrs[k].push(v.to_string());
        }
    }
    if list.is_empty() {
        return Err(file_err("has no trees".into()));
    }
    if let Some((s, _)) = stand {
        list.stand = s;
    }
    for (k, &col) in attr_cols.iter().enumerate() {
        list.attributes.push(Attribute {
            name: headers[col].to_string(),
            values: attribute_values(std::mem::take(&mut raw_attrs[k])),
        });
    }
    Ok(list)
}

/// Numeric when every value parses as a finite number, else categorical.
fn attribute_values(raw: Vec<String>) -> AttributeValues {
    let numbers: Option<Vec<f64>> = raw
        .iter()
        .map(|s| s.parse::<f64>().ok().filter(|x| x.is_finite()))
        .collect();
    if let Some(v) = numbers {
        return AttributeValues::Numeric(v);
    }
    let mut levels = raw.clone();
    levels.sort();
    levels.dedup();
    let codes = raw
        .iter()
        .map(|s| levels.binary_search(s).map_or(0, |i| i as u32))
        .collect();
    AttributeValues::Categorical { levels, codes }
}
