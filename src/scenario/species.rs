//! Species sets of species-restricted actions (`docs/scenario.md#species`): the codes listed
//! in a `thin` or `remove`, resolved once to a flag per tree-list record.

use crate::data::{AttributeValues, TreeList};

/// The species column when `[models] species_column` is not given.
pub const DEFAULT_SPECIES_COLUMN: &str = "species";

/// The species an action is restricted to.
#[derive(Debug, Clone, PartialEq)]
pub struct SpeciesSet {
    /// The codes as written.
    pub names: Vec<String>,
    /// Per record of the tree list (in input order): true when the tree is of one of `names`.
    pub records: Vec<bool>,
}

impl SpeciesSet {
    /// The codes joined for descriptions (`RA, BM`).
    pub fn joined(&self) -> String {
        self.names.join(", ")
    }
}

/// Resolve `names` against the species column `column` of `trees`. A species absent from the
/// trees is allowed (the action then removes nothing in this stand, and the projection warns
/// about an idle action), so that one scenario can serve stands of different composition.
///
/// # Errors
/// A message (for the action's key) when the list is empty, the trees have no such column, or
/// a code of a numeric species column is not a number.
pub(crate) fn resolve(
    trees: &TreeList,
    column: &str,
    names: &[String],
) -> Result<SpeciesSet, String> {
    if names.is_empty() {
        return Err("lists no species; give at least one species code".into());
    }
    let attribute = trees.attribute(column).ok_or_else(|| {
        format!(
            "the trees have no species column `{column}` (name it with [models] species_column, or give it as a tree-list column or in [cohort] attributes)"
        )
    })?;
    let records = match &attribute.values {
        AttributeValues::Categorical { levels, codes } => {
            let wanted: Vec<bool> = levels.iter().map(|l| names.contains(l)).collect();
            codes.iter().map(|&c| wanted[c as usize]).collect()
        }
        AttributeValues::Numeric(values) => {
            let mut codes = Vec::with_capacity(names.len());
            for n in names {
                let x: f64 = n.trim().parse().map_err(|_| {
                    format!("\"{n}\" is not a code of the numeric species column `{column}`")
                })?;
                codes.push(x);
            }
            values.iter().map(|v| codes.contains(v)).collect()
        }
    };
    Ok(SpeciesSet {
        names: names.to_vec(),
        records,
    })
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::data::Attribute;

    fn trees(values: AttributeValues) -> TreeList {
        TreeList {
            stand: "1".into(),
            tree_ids: vec!["1".into(), "2".into(), "3".into()],
            dbh_cm: vec![10.0, 20.0, 30.0],
            stems_per_ha: vec![100.0; 3],
            attributes: vec![Attribute {
                name: "species".into(),
                values,
            }],
        }
    }

    #[test]
    fn text_and_numeric_codes_flag_their_trees() {
        let t = trees(AttributeValues::Categorical {
            levels: vec!["DF".into(), "RA".into()],
            codes: vec![0, 1, 0],
        });
        let s = resolve(&t, "species", &["RA".into(), "WH".into()]).unwrap();
        assert_eq!(s.records, vec![false, true, false]);
        let t = trees(AttributeValues::Numeric(vec![202.0, 351.0, 202.0]));
        let s = resolve(&t, "species", &["202".into()]).unwrap();
        assert_eq!(s.records, vec![true, false, true]);
        assert!(resolve(&t, "species", &["DF".into()]).is_err());
        assert!(resolve(&t, "sp", &["202".into()]).is_err());
        assert!(resolve(&t, "species", &[]).is_err());
    }
}
