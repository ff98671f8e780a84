//! Generated cohorts: `records` trees with diameters at the quantiles of a DBH distribution.

use statrs::distribution::{ContinuousCDF, LogNormal, Normal, Uniform, Weibull};

use std::path::Path;

use super::load::InputFile;
use super::schema::{DbhDistribution, ScenarioFile};
use super::ScenarioError;
use crate::data::{read_single_stand, sha256_hex, ColumnNames, TreeList, TreeListSpec, Units};

/// Diameters at the quantiles `(i − ½)/n`, i = 1..n, of `dist`, in increasing order.
///
/// # Formula
/// `dbh_i = F⁻¹((i − ½)/n)`.
///
/// # Errors
/// A message when the parameters are invalid or a quantile is not a positive diameter.
pub fn quantile_diameters(dist: &DbhDistribution, n: usize) -> Result<Vec<f64>, String> {
    let positive = |name: &str, x: f64| {
        if x > 0.0 && x.is_finite() {
            Ok(())
        } else {
            Err(format!("`{name}` = {x} must be a positive number"))
        }
    };
    let q: Box<dyn Fn(f64) -> f64> = match *dist {
        DbhDistribution::Lognormal { median, gsd } => {
            positive("median", median)?;
            if !(gsd > 1.0 && gsd.is_finite()) {
                return Err(format!("`gsd` = {gsd} must be greater than 1"));
            }
            let d = LogNormal::new(median.ln(), gsd.ln()).map_err(|e| e.to_string())?;
            Box::new(move |p| d.inverse_cdf(p))
        }
        DbhDistribution::Normal { mean, sd } => {
            positive("sd", sd)?;
            let d = Normal::new(mean, sd).map_err(|e| e.to_string())?;
            Box::new(move |p| d.inverse_cdf(p))
        }
        DbhDistribution::Weibull {
            shape,
            scale,
            location,
        } => {
            positive("shape", shape)?;
            positive("scale", scale)?;
            if !(location >= 0.0 && location.is_finite()) {
                return Err(format!("`location` = {location} must be zero or positive"));
            }
            let d = Weibull::new(shape, scale).map_err(|e| e.to_string())?;
            Box::new(move |p| location + d.inverse_cdf(p))
        }
        DbhDistribution::Uniform { min, max } => {
            if !(min.is_finite() && max.is_finite() && max > min) {
                return Err(format!("needs min < max (min = {min}, max = {max})"));
            }
            let d = Uniform::new(min, max).map_err(|e| e.to_string())?;
            Box::new(move |p| d.inverse_cdf(p))
        }
        DbhDistribution::Fixed { value } => {
            positive("value", value)?;
            Box::new(move |_| value)
        }
    };
    let dbh: Vec<f64> = (1..=n).map(|i| q((i as f64 - 0.5) / n as f64)).collect();
    if let Some((i, d)) = dbh
        .iter()
        .enumerate()
        .find(|(_, d)| !(**d > 0.0 && d.is_finite()))
    {
        return Err(format!(
            "the quantile {}/{} of this distribution is a DBH of {d:.4} cm, not positive; choose parameters with (almost) no mass at or below zero",
            2 * i + 1,
            2 * n
        ));
    }
    Ok(dbh)
}

/// A cohort of `n` records sharing `stems_per_ha` equally, tree ids `1..=n` in DBH order.
pub(crate) fn cohort(dbh_cm: Vec<f64>, stems_per_ha: f64) -> TreeList {
    let n = dbh_cm.len();
    TreeList {
        stand: "1".into(),
        tree_ids: (1..=n).map(|i| i.to_string()).collect(),
        dbh_cm,
        stems_per_ha: vec![stems_per_ha / n as f64; n],
        attributes: Vec::new(),
    }
}

/// The year-0 trees of a scenario: its tree list, or a cohort generated from `[cohort]`.
pub(crate) fn trees_of(
    raw: &ScenarioFile,
    base: &Path,
    file: &str,
    categorical: &[String],
    species_column: &str,
    inputs: &mut Vec<InputFile>,
) -> Result<TreeList, ScenarioError> {
    let err = |key: &str, message: String| ScenarioError::Key {
        file: file.to_string(),
        key: key.to_string(),
        message,
    };
    let c = &raw.cohort;
    if let Some(rel) = &c.trees {
        for (key, present) in [
            ("stems_per_ha", c.stems_per_ha.is_some()),
            ("records", c.records.is_some()),
            ("dbh", c.dbh.is_some()),
            ("components", !c.components.is_empty()),
        ] {
            if present {
                return Err(err(
                    &format!("cohort.{key}"),
                    "belongs to a generated cohort; with `trees` the tree list gives the trees"
                        .into(),
                ));
            }
        }
        let path = base.join(rel);
        let shown = path.display().to_string();
        let bytes = std::fs::read(&path)
            .map_err(|e| err("cohort.trees", format!("{shown} cannot be read: {e}")))?;
        let units = match &c.units {
            None => Units::Metric,
            Some(u) => u
                .parse::<Units>()
                .map_err(|e| err("cohort.units", e.to_string()))?,
        };
        let mut names = ColumnNames::default();
        if let Some(cols) = &c.columns {
            for (name, given) in [
                (&mut names.stand, &cols.stand),
                (&mut names.tree, &cols.tree),
                (&mut names.dbh, &cols.dbh),
                (&mut names.expansion, &cols.expansion),
            ] {
                if let Some(g) = given {
                    *name = g.clone();
                }
            }
        }
        let spec = TreeListSpec {
            names,
            categorical: categorical.to_vec(),
        };
        let list = TreeList::try_from(read_single_stand(&path, &spec)?)?.into_metric(units);
        inputs.push(InputFile {
            role: "trees".into(),
            path,
            sha256: sha256_hex(&bytes),
        });
        return Ok(list);
    }
    for (key, present) in [
        ("units", c.units.is_some()),
        ("columns", c.columns.is_some()),
    ] {
        if present {
            return Err(err(
                &format!("cohort.{key}"),
                "describes a tree list (`trees`); a generated cohort is metric".into(),
            ));
        }
    }
    if !c.components.is_empty() {
        for (key, present) in [
            ("stems_per_ha", c.stems_per_ha.is_some()),
            ("records", c.records.is_some()),
            ("dbh", c.dbh.is_some()),
            (species_column, c.attributes.contains_key(species_column)),
        ] {
            if present {
                let key = if key == species_column {
                    format!("cohort.attributes.{key}")
                } else {
                    format!("cohort.{key}")
                };
                return Err(err(
                    &key,
                    "with [[cohort.components]], each component gives its own species, stems_per_ha, records and dbh".into(),
                ));
            }
        }
        return super::components::mixed_cohort(&c.components, species_column, file);
    }
    let stems = c
        .stems_per_ha
        .ok_or_else(|| err("cohort.stems_per_ha", "missing (or give `trees`)".into()))?;
    if !(stems > 0.0 && stems.is_finite()) {
        return Err(err(
            "cohort.stems_per_ha",
            format!("{stems} is not a positive number"),
        ));
    }
    let records = match c.records {
        None => return Err(err("cohort.records", "missing".into())),
        Some(r) if r >= 1 && r <= u32::MAX as i64 => r as usize,
        Some(r) => {
            return Err(err(
                "cohort.records",
                format!("{r} is not a positive whole number"),
            ))
        }
    };
    let dist = c.dbh.as_ref().ok_or_else(|| err("cohort.dbh", "missing (a distribution such as { distribution = \"lognormal\", median = 8, gsd = 1.5 })".into()))?;
    let dbh = quantile_diameters(dist, records).map_err(|m| err("cohort.dbh", m))?;
    Ok(cohort(dbh, stems))
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn lognormal_quantiles_are_symmetric_on_the_log_scale() {
        // Derived analytically: the quantiles (i − ½)/n are symmetric about ½, so the middle
        // record of an odd count sits at the median and outer pairs multiply to median².
        let d = quantile_diameters(
            &DbhDistribution::Lognormal {
                median: 8.0,
                gsd: 1.5,
            },
            5,
        )
        .unwrap();
        assert!((d[2] - 8.0).abs() < 1e-9);
        assert!((d[0] * d[4] - 64.0).abs() < 1e-7);
    }

    #[test]
    fn refuses_non_positive_diameters() {
        let e = quantile_diameters(&DbhDistribution::Normal { mean: 2.0, sd: 3.0 }, 10);
        assert!(e.unwrap_err().contains("not positive"));
    }

    #[test]
    fn uniform_quantiles_are_midpoints() {
        // Derived analytically: F⁻¹(p) = min + p (max − min).
        let d = quantile_diameters(&DbhDistribution::Uniform { min: 0.0, max: 4.0 }, 4).unwrap();
        assert_eq!(d, vec![0.5, 1.5, 2.5, 3.5]);
    }
}
