//! Mixed-species generated cohorts (`docs/scenario.md#cohort`): `[[cohort.components]]`, one
//! generated part per species, joined into one tree list with a species column.

use super::cohort::quantile_diameters;
use super::schema::CohortComponent;
use super::ScenarioError;
use crate::data::{Attribute, AttributeValues, TreeList};

/// The trees of `components` in order, each component's records at the quantiles of its DBH
/// distribution (ascending) and sharing its `stems_per_ha` equally; tree ids `1..=N` across
/// components; the species codes in the categorical attribute `species_column`, whose levels
/// are the distinct codes in byte order.
///
/// # Errors
/// [`ScenarioError::Key`] naming `cohort.components[k].<key>` for a non-positive density, a
/// record count that is not a whole number ≥ 1, an empty species code, an invalid
/// distribution, or more records in all than a tree list can index.
pub(crate) fn mixed_cohort(
    components: &[CohortComponent],
    species_column: &str,
    file: &str,
) -> Result<TreeList, ScenarioError> {
    let err = |k: usize, key: &str, message: String| ScenarioError::Key {
        file: file.to_string(),
        key: format!("cohort.components[{k}].{key}"),
        message,
    };
    let mut levels: Vec<String> = components.iter().map(|c| c.species.clone()).collect();
    levels.sort();
    levels.dedup();
    let (mut dbh_cm, mut stems_per_ha, mut codes) = (Vec::new(), Vec::new(), Vec::new());
    for (k, c) in components.iter().enumerate() {
        if c.species.trim().is_empty() {
            return Err(err(k, "species", "is empty; give a species code".into()));
        }
        if !(c.stems_per_ha > 0.0 && c.stems_per_ha.is_finite()) {
            return Err(err(
                k,
                "stems_per_ha",
                format!("{} is not a positive number", c.stems_per_ha),
            ));
        }
        let room = u32::MAX as i64 - dbh_cm.len() as i64;
        if !(c.records >= 1 && c.records <= room) {
            return Err(err(
                k,
                "records",
                format!(
                    "{} is not a positive whole number (at most {room} more records)",
                    c.records
                ),
            ));
        }
        let n = c.records as usize;
        let d = quantile_diameters(&c.dbh, n).map_err(|m| err(k, "dbh", m))?;
        let code = levels.iter().position(|l| *l == c.species).unwrap_or(0) as u32;
        dbh_cm.extend(d);
        stems_per_ha.extend(std::iter::repeat_n(c.stems_per_ha / n as f64, n));
        codes.extend(std::iter::repeat_n(code, n));
    }
    Ok(TreeList {
        stand: "1".into(),
        tree_ids: (1..=dbh_cm.len()).map(|i| i.to_string()).collect(),
        dbh_cm,
        stems_per_ha,
        attributes: vec![Attribute {
            name: species_column.to_string(),
            values: AttributeValues::Categorical { levels, codes },
        }],
    })
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::scenario::DbhDistribution;

    fn part(species: &str, stems: f64, records: i64, min: f64, max: f64) -> CohortComponent {
        CohortComponent {
            species: species.into(),
            stems_per_ha: stems,
            records,
            dbh: DbhDistribution::Uniform { min, max },
        }
    }

    #[test]
    fn components_join_in_order_with_their_species() {
        // Uniform quantiles are the midpoints min + (i − ½)(max − min)/n (derived analytically).
        let t = mixed_cohort(
            &[
                part("RA", 300.0, 2, 10.0, 14.0),
                part("DF", 600.0, 3, 0.0, 30.0),
            ],
            "species",
            "sc.toml",
        )
        .unwrap();
        assert_eq!(t.dbh_cm, vec![11.0, 13.0, 5.0, 15.0, 25.0]);
        assert_eq!(t.stems_per_ha, vec![150.0, 150.0, 200.0, 200.0, 200.0]);
        assert_eq!(t.tree_ids, vec!["1", "2", "3", "4", "5"]);
        let AttributeValues::Categorical { levels, codes } = &t.attributes[0].values else {
            panic!("species is categorical");
        };
        assert_eq!(levels, &vec!["DF".to_string(), "RA".to_string()]);
        assert_eq!(codes, &vec![1, 1, 0, 0, 0]);
    }

    #[test]
    fn bad_components_are_named() {
        let e = mixed_cohort(&[part("RA", 300.0, 0, 10.0, 14.0)], "species", "sc.toml");
        assert!(e
            .unwrap_err()
            .to_string()
            .contains("cohort.components[0].records"));
        let e = mixed_cohort(
            &[
                part("RA", 300.0, 2, 10.0, 14.0),
                part("DF", -1.0, 2, 1.0, 2.0),
            ],
            "species",
            "sc.toml",
        );
        assert!(e
            .unwrap_err()
            .to_string()
            .contains("cohort.components[1].stems_per_ha"));
    }
}
