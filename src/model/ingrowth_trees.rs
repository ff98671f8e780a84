//! What new trees look like: the species shares and diameter quantiles of observed ingrowth
//! trees, overall and per level of an attribute, as stored in an ingrowth model file
//! (`docs/ingrowth.md`, "New trees").

use std::collections::BTreeMap;

use serde::{Deserialize, Serialize};

use super::ModelError;

/// Most diameter quantiles stored per group.
pub const MAX_QUANTILES: usize = 1000;

/// Ingrowth tree records in memory: one entry per new tree.
#[derive(Debug, Clone, Copy)]
pub struct IngrowthTreeRecords<'a> {
    /// Diameter of each new tree at the measurement where it was first recorded (positive).
    pub dbh: &'a [f64],
    /// Species of each tree, when known.
    pub species: Option<&'a [String]>,
    /// Level of the grouping attribute of each tree, when given.
    pub group: Option<&'a [String]>,
}

/// The share of one species among the new trees of a group.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct SpeciesShare {
    /// Species code.
    pub species: String,
    /// Fraction of the group's new trees, in (0, 1]; the shares of a group sum to 1.
    pub share: f64,
    /// Number of tree records of this species in the group.
    pub records: u64,
    /// Diameter quantiles of this species' new trees at the file's `probabilities`.
    pub dbh_quantiles: Vec<f64>,
}

/// New trees of all records (`level` absent) or of one level of the `by` attribute.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct TreeGroup {
    /// The level of the `by` attribute; absent for the group of every record.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub level: Option<String>,
    /// Number of tree records.
    pub records: u64,
    /// Diameter quantiles of the group's new trees at the file's `probabilities`.
    pub dbh_quantiles: Vec<f64>,
    /// Species shares, in byte order of the species codes (empty without a species column).
    #[serde(default, skip_serializing_if = "Vec::is_empty")]
    pub species: Vec<SpeciesShare>,
}

/// Species shares and diameter quantiles of ingrowth, as stored in the model file.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct IngrowthTrees {
    /// The file the tree records came from.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub source: Option<String>,
    /// The attribute that holds the species (the tree records' species column).
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub species_attribute: Option<String>,
    /// The attribute whose levels have groups of their own.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub by: Option<String>,
    /// Probabilities of the diameter quantiles, (k − ½)/m for k = 1..m.
    pub probabilities: Vec<f64>,
    /// The group of every record first, then one per level of `by` in byte order.
    pub groups: Vec<TreeGroup>,
}

/// The probabilities (k − ½)/m, k = 1..m: each quantile stands for 1/m of the new trees.
pub fn midpoint_probabilities(m: usize) -> Vec<f64> {
    (1..=m).map(|k| (k as f64 - 0.5) / m as f64).collect()
}

/// The quantile of sorted values at probability `p` by linear interpolation between order
/// statistics (R's type 7, the default of `quantile()`).
///
/// # Formula
/// h = (n − 1)p, Q = v₍⌊h⌋₎ + (h − ⌊h⌋)(v₍⌊h⌋+1₎ − v₍⌊h⌋₎) with 0-based order statistics.
pub fn quantile_type7(sorted: &[f64], p: f64) -> f64 {
    let n = sorted.len();
    if n == 0 {
        return f64::NAN;
    }
    let h = (n - 1) as f64 * p;
    let lo = h.floor() as usize;
    let hi = (lo + 1).min(n - 1);
    sorted[lo] + (h - lo as f64) * (sorted[hi] - sorted[lo])
}

fn quantiles(mut values: Vec<f64>, probabilities: &[f64]) -> Vec<f64> {
    values.sort_by(f64::total_cmp);
    probabilities
        .iter()
        .map(|&p| quantile_type7(&values, p))
        .collect()
}

fn group(
    level: Option<String>,
    rows: &[usize],
    records: &IngrowthTreeRecords,
    probabilities: &[f64],
) -> TreeGroup {
    let dbh = |rows: &[usize]| rows.iter().map(|&i| records.dbh[i]).collect::<Vec<_>>();
    let mut by_species: BTreeMap<&str, Vec<usize>> = BTreeMap::new();
    if let Some(species) = records.species {
        for &i in rows {
            by_species.entry(species[i].as_str()).or_default().push(i);
        }
    }
    let total = rows.len() as f64;
    TreeGroup {
        level,
        records: rows.len() as u64,
        dbh_quantiles: quantiles(dbh(rows), probabilities),
        species: by_species
            .into_iter()
            .map(|(s, r)| SpeciesShare {
                species: s.to_string(),
                share: r.len() as f64 / total,
                records: r.len() as u64,
                dbh_quantiles: quantiles(dbh(&r), probabilities),
            })
            .collect(),
    }
}

/// Species shares and `m` diameter quantiles of new trees, overall and per group level.
///
/// # Errors
/// [`ModelError::Invalid`] when there are no records, lengths differ, a diameter is not
/// positive, or `m` is 0 or above [`MAX_QUANTILES`].
pub fn summarise_trees(
    records: &IngrowthTreeRecords,
    m: usize,
) -> Result<IngrowthTrees, ModelError> {
    let n = records.dbh.len();
    if n == 0 {
        return Err(ModelError::Invalid("no ingrowth tree records".into()));
    }
    if !(1..=MAX_QUANTILES).contains(&m) {
        return Err(ModelError::Invalid(format!(
            "{m} diameter quantiles: give 1 to {MAX_QUANTILES}"
        )));
    }
    let lengths = [
        records.species.map(<[_]>::len),
        records.group.map(<[_]>::len),
    ];
    if lengths.iter().flatten().any(|&l| l != n) {
        return Err(ModelError::Invalid(
            "ingrowth tree records: species or group labels do not match the diameters".into(),
        ));
    }
    if let Some(d) = records.dbh.iter().find(|d| !(**d > 0.0 && d.is_finite())) {
        return Err(ModelError::Invalid(format!(
            "ingrowth tree records: diameter {d} is not a positive number"
        )));
    }
    let probabilities = midpoint_probabilities(m);
    let all: Vec<usize> = (0..n).collect();
    let mut groups = vec![group(None, &all, records, &probabilities)];
    if let Some(levels) = records.group {
        let mut by_level: BTreeMap<&str, Vec<usize>> = BTreeMap::new();
        for (i, l) in levels.iter().enumerate() {
            by_level.entry(l.as_str()).or_default().push(i);
        }
        for (level, rows) in by_level {
            groups.push(group(
                Some(level.to_string()),
                &rows,
                records,
                &probabilities,
            ));
        }
    }
    Ok(IngrowthTrees {
        source: None,
        species_attribute: None,
        by: None,
        probabilities,
        groups,
    })
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn type7_quantiles_match_r() {
        // Derived analytically with the type-7 rule h = (n − 1)p: h = 0.15 → 10 + 0.15·2 = 10.3;
        // h = 1.5 → 12 + 0.5·3 = 13.5; h = 2.85 → 15 + 0.85·5 = 19.25 (what R's
        // quantile(c(10, 12, 15, 20), c(0.05, 0.5, 0.95)) returns).
        let v = [10.0, 12.0, 15.0, 20.0];
        for (p, want) in [(0.05, 10.3), (0.5, 13.5), (0.95, 19.25)] {
            assert!((quantile_type7(&v, p) - want).abs() < 1e-12, "{p}");
        }
    }

    #[test]
    fn shares_by_species_and_level() {
        // Derived analytically: 3 of 4 trees are "a"; level "x" holds trees 0 and 1 (both "a").
        let dbh = [5.0, 6.0, 7.0, 9.0];
        let species: Vec<String> = ["a", "a", "b", "a"].iter().map(|s| s.to_string()).collect();
        let group: Vec<String> = ["x", "x", "y", "y"].iter().map(|s| s.to_string()).collect();
        let t = summarise_trees(
            &IngrowthTreeRecords {
                dbh: &dbh,
                species: Some(&species),
                group: Some(&group),
            },
            2,
        )
        .unwrap();
        assert_eq!(t.probabilities, vec![0.25, 0.75]);
        assert_eq!(t.groups.len(), 3);
        assert_eq!(t.groups[0].species[0].share, 0.75);
        assert_eq!(t.groups[0].species[1].records, 1);
        assert_eq!(t.groups[1].level.as_deref(), Some("x"));
        assert_eq!(t.groups[1].species.len(), 1);
        assert_eq!(t.groups[2].species[0].share, 0.5);
        // Type 7 on (5, 6, 7, 9) at 0.25: h = 0.75 → 5.75.
        assert!((t.groups[0].dbh_quantiles[0] - 5.75).abs() < 1e-12);
    }
}
