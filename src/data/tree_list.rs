//! The trees of one stand at year 0 as the projector uses them (structure of arrays, categorical
//! attributes as integer codes), built from the records that [`super::read_tree_lists`] reads.

use super::frame::FrameColumn;
use super::{DataError, TreeRecords};

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

impl TreeList {
    /// Convert diameters and expansion factors read in `units` to the projector's metric units
    /// (cm and stems per hectare; docs/data.md#units). Nothing changes for metric input.
    ///
    /// # Formula
    /// d_cm = 2.54 · d_in; e_ha = e_ac / 0.40468564224 (hectares per acre, exact).
    pub fn into_metric(mut self, units: super::Units) -> TreeList {
        if units == super::Units::Imperial {
            for d in &mut self.dbh_cm {
                *d *= super::CM_PER_INCH;
            }
            for e in &mut self.stems_per_ha {
                *e /= super::HA_PER_ACRE;
            }
        }
        self
    }
}

impl TryFrom<TreeRecords> for TreeList {
    type Error = DataError;

    /// The trees of one stand read by [`super::read_tree_lists`] (a stand of
    /// [`super::TreeListStream`]), as a scenario's trees. A stand without a stand
    /// column is called `1`, as in a one-stand tree list.
    ///
    /// # Errors
    /// [`DataError::Cell`] naming file, line and column for an empty attribute cell.
    fn try_from(list: TreeRecords) -> Result<TreeList, DataError> {
        let mut attributes = Vec::with_capacity(list.attributes.len());
        for (name, column) in list.attributes {
            let empty = |row: usize| DataError::Cell {
                file: list.source.clone(),
                line: list.lines.get(row).copied().unwrap_or(0),
                column: name.clone(),
                message: "empty attribute value".into(),
            };
            let values = match column {
                FrameColumn::Numeric(v) => {
                    if let Some(row) = v.iter().position(|x| x.is_nan()) {
                        return Err(empty(row));
                    }
                    AttributeValues::Numeric(v)
                }
                FrameColumn::Text { levels, codes, .. } => {
                    if let Some(row) = codes.iter().position(|&c| c == u32::MAX) {
                        return Err(empty(row));
                    }
                    AttributeValues::Categorical { levels, codes }
                }
            };
            attributes.push(Attribute { name, values });
        }
        Ok(TreeList {
            stand: list.stand.unwrap_or_else(|| "1".into()),
            tree_ids: list.tree,
            dbh_cm: list.dbh,
            stems_per_ha: list.expansion,
            attributes,
        })
    }
}
