//! Height model files (`kind = "height"`, docs/height-volume.md): one curve for every tree,
//! and/or one curve per level of a column such as species. [`HeightModelFile`] is the file as
//! stored; [`HeightModel`] is the checked value that evaluates heights.

use std::collections::BTreeMap;
use std::path::Path;

use serde::{Deserialize, Serialize};

use super::file::{toml_error_location, CoefficientEntry, CovarianceEntry, FitInfo, ModelKind};
use super::height::{breast_height, HeightCurve, HeightForm};
use super::ModelError;
use crate::data::Units;

/// One curve as stored: the top level of the file, or one entry of `[levels]`.
#[derive(Debug, Clone, PartialEq, Default, Serialize, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct HeightCurveEntry {
    /// Residual standard deviation of the fit (height units).
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub residual_sd: Option<f64>,
    /// The parameters a, b (and c), by name.
    #[serde(default)]
    pub coefficients: Vec<CoefficientEntry>,
    /// Covariance of the estimates, s² (JᵀJ)⁻¹.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub covariance: Option<CovarianceEntry>,
    /// Facts about the fit (`ranges.dbh` gives the fitted diameters).
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub fit: Option<FitInfo>,
}

/// The height model file exactly as stored.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct HeightModelFile {
    /// Always `height`.
    pub kind: ModelKind,
    /// chapman_richards | naslund | log_reciprocal.
    pub form: HeightForm,
    /// metric (D cm, H m; default) | imperial (D in, H ft).
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub units: Option<Units>,
    /// Breast height in height units; default 1.3 (metric) or 4.5 (imperial).
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub breast_height: Option<f64>,
    /// The column whose levels have curves of their own (e.g. `species`).
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub by: Option<String>,
    /// Residual standard deviation of the curve for every tree.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub residual_sd: Option<f64>,
    /// The curve for every tree, or for trees of levels not under `[levels]`: a, b (and c).
    #[serde(default, skip_serializing_if = "Vec::is_empty")]
    pub coefficients: Vec<CoefficientEntry>,
    /// Covariance of that curve's estimates.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub covariance: Option<CovarianceEntry>,
    /// Facts about that curve's fit.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub fit: Option<FitInfo>,
    /// Curves per level of `by`.
    #[serde(default, skip_serializing_if = "BTreeMap::is_empty")]
    pub levels: BTreeMap<String, HeightCurveEntry>,
}

/// A checked height model.
#[derive(Debug, Clone, PartialEq)]
pub struct HeightModel {
    /// The form of every curve.
    pub form: HeightForm,
    /// Units of diameters and heights.
    pub units: Units,
    /// Breast height in height units.
    pub breast_height: f64,
    /// The column whose levels have curves of their own.
    pub by: Option<String>,
    /// The curve for trees without a curve of their own.
    pub default: Option<HeightCurve>,
    /// Curves per level.
    pub levels: BTreeMap<String, HeightCurve>,
}

impl HeightModelFile {
    /// Parse height-model text; `file` is used in messages.
    ///
    /// # Errors
    /// [`ModelError::File`] with the line and the TOML message.
    pub fn parse(text: &str, file: &str) -> Result<Self, ModelError> {
        toml::from_str(text).map_err(|e| ModelError::File {
            file: file.to_string(),
            key: toml_error_location(text, &e),
            message: e.message().to_string(),
        })
    }

    /// Render as TOML text.
    ///
    /// # Errors
    /// [`ModelError::Invalid`] if a value cannot be represented.
    pub fn to_toml(&self) -> Result<String, ModelError> {
        toml::to_string(self).map_err(|e| ModelError::Invalid(format!("height model file: {e}")))
    }
}

impl HeightModel {
    /// Read and check a height model file.
    ///
    /// # Errors
    /// [`ModelError::File`] naming the file and the key of anything malformed.
    pub fn read(path: &Path) -> Result<Self, ModelError> {
        let file = path.display().to_string();
        let text = std::fs::read_to_string(path).map_err(|e| ModelError::File {
            file: file.clone(),
            key: "file".into(),
            message: format!("cannot be read: {e}"),
        })?;
        Self::from_file(HeightModelFile::parse(&text, &file)?, &file)
    }

    /// Check a parsed file; `file` is used in messages.
    ///
    /// # Errors
    /// [`ModelError::File`] naming the key: a kind other than height, a breast height that is
    /// not positive, coefficients that are not exactly the form's parameters, levels without
    /// `by`, or no curve at all.
    pub fn from_file(raw: HeightModelFile, file: &str) -> Result<Self, ModelError> {
        let err = |key: &str, message: String| ModelError::File {
            file: file.to_string(),
            key: key.to_string(),
            message,
        };
        if raw.kind != ModelKind::Height {
            return Err(err(
                "kind",
                "a height model file has kind = \"height\"".into(),
            ));
        }
        let units = raw.units.unwrap_or_default();
        let bh = raw.breast_height.unwrap_or(breast_height(units));
        if !(bh > 0.0 && bh.is_finite()) {
            return Err(err(
                "breast_height",
                format!("{bh} is not a positive height"),
            ));
        }
        if !raw.levels.is_empty() && raw.by.is_none() {
            return Err(err(
                "by",
                "missing: name the column whose levels [levels] lists, e.g. by = \"species\""
                    .into(),
            ));
        }
        let default = if raw.coefficients.is_empty() {
            if raw.levels.is_empty() {
                return Err(err("coefficients", "no curve: give [[coefficients]] a, b (and c for chapman_richards), or per-level curves under [levels]".into()));
            }
            None
        } else {
            let top = HeightCurveEntry {
                residual_sd: raw.residual_sd,
                coefficients: raw.coefficients.clone(),
                covariance: raw.covariance.clone(),
                fit: None,
            };
            Some(curve_from(&top, raw.form, bh, "", &err)?)
        };
        let mut levels = BTreeMap::new();
        for (level, entry) in &raw.levels {
            let prefix = format!("levels.{level}.");
            levels.insert(
                level.clone(),
                curve_from(entry, raw.form, bh, &prefix, &err)?,
            );
        }
        Ok(HeightModel {
            form: raw.form,
            units,
            breast_height: bh,
            by: raw.by,
            default,
            levels,
        })
    }

    /// The curve for trees of `level` (its own, else the default one).
    pub fn curve(&self, level: Option<&str>) -> Option<&HeightCurve> {
        level
            .and_then(|l| self.levels.get(l))
            .or(self.default.as_ref())
    }

    /// The curve for each of `levels` (e.g. the species codes of a tree list, in code order),
    /// so that a loop over trees can index curves by code.
    ///
    /// # Errors
    /// [`ModelError::Invalid`] naming the levels that have no curve.
    pub fn curves_for(&self, levels: &[String]) -> Result<Vec<&HeightCurve>, ModelError> {
        let missing: Vec<&str> = levels
            .iter()
            .filter(|l| self.curve(Some(l)).is_none())
            .map(String::as_str)
            .collect();
        if !missing.is_empty() {
            return Err(ModelError::Invalid(format!(
                "the height model has no curve for {} {} and no curve for all trees",
                self.by.as_deref().unwrap_or("level"),
                missing.join(", ")
            )));
        }
        Ok(levels.iter().filter_map(|l| self.curve(Some(l))).collect())
    }
}

/// A checked curve from its stored entry; `prefix` is the key path of the entry.
fn curve_from(
    entry: &HeightCurveEntry,
    form: HeightForm,
    bh: f64,
    prefix: &str,
    err: &dyn Fn(&str, String) -> ModelError,
) -> Result<HeightCurve, ModelError> {
    let key = format!("{prefix}coefficients");
    let names = form.parameter_names();
    let mut values = vec![f64::NAN; names.len()];
    for c in &entry.coefficients {
        let Some(k) = names.iter().position(|n| *n == c.term) else {
            return Err(err(
                &key,
                format!(
                    "term `{}` is not a parameter of the {form} form ({})",
                    c.term,
                    names.join(", ")
                ),
            ));
        };
        if !values[k].is_nan() {
            return Err(err(&key, format!("term `{}` appears twice", c.term)));
        }
        if !c.estimate.is_finite() {
            return Err(err(
                &key,
                format!("term `{}`: {} is not a finite number", c.term, c.estimate),
            ));
        }
        values[k] = c.estimate;
    }
    if let Some(k) = values.iter().position(|v| v.is_nan()) {
        return Err(err(
            &key,
            format!("missing term `{}` of the {form} form", names[k]),
        ));
    }
    if let Some(sd) = entry.residual_sd {
        if !(sd >= 0.0 && sd.is_finite()) {
            return Err(err(
                &format!("{prefix}residual_sd"),
                format!("{sd} is not a non-negative number"),
            ));
        }
    }
    if let Some(cov) = &entry.covariance {
        let p = names.len();
        if cov.terms.len() != p || cov.matrix.len() != p || cov.matrix.iter().any(|r| r.len() != p)
        {
            return Err(err(
                &format!("{prefix}covariance"),
                format!("must be {p}×{p} over the terms {}", names.join(", ")),
            ));
        }
    }
    HeightCurve::new(form, values, bh).map_err(|e| err(&key, e.to_string()))
}

#[cfg(test)]
mod tests {
    use super::*;

    const PER_SPECIES: &str = r#"
kind = "height"
form = "naslund"
units = "metric"
by = "species"

[[coefficients]]
term = "a"
estimate = 2.0
[[coefficients]]
term = "b"
estimate = 0.2

[[levels.A.coefficients]]
term = "b"
estimate = 0.16
[[levels.A.coefficients]]
term = "a"
estimate = 2.5
"#;

    // Check values derived analytically: Näslund at D = 10 with a = 2.5, b = 0.16 is
    // 1.3 + 100/(2.5 + 1.6)² = 1.3 + 100/16.81; with a = 2, b = 0.2 it is 1.3 + 100/16.
    #[test]
    fn per_level_curves_and_the_default() {
        let m = HeightModel::from_file(
            HeightModelFile::parse(PER_SPECIES, "h.toml").unwrap(),
            "h.toml",
        )
        .unwrap();
        assert_eq!(m.breast_height, 1.3);
        let a = m.curve(Some("A")).unwrap().height(10.0);
        assert!((a - (1.3 + 100.0 / 16.81)).abs() < 1e-12);
        let other = m.curve(Some("Z")).unwrap().height(10.0);
        assert!((other - (1.3 + 100.0 / 16.0)).abs() < 1e-12);
        let curves = m.curves_for(&["A".into(), "B".into()]).unwrap();
        assert_eq!(curves.len(), 2);
    }

    #[test]
    fn errors_name_the_key() {
        let text = PER_SPECIES.replace(
            "term = \"b\"\nestimate = 0.16",
            "term = \"c\"\nestimate = 0.16",
        );
        let e = HeightModel::from_file(HeightModelFile::parse(&text, "h.toml").unwrap(), "h.toml")
            .unwrap_err();
        assert!(e.to_string().contains("levels.A.coefficients"), "{e}");
        let e = HeightModelFile::parse("kind = \"height\"\nform = \"weibull\"\n", "h.toml")
            .unwrap_err();
        assert!(e.to_string().contains("line 2"), "{e}");
        let text = "kind = \"height\"\nform = \"naslund\"\n";
        let e = HeightModel::from_file(HeightModelFile::parse(text, "h.toml").unwrap(), "h.toml")
            .unwrap_err();
        assert!(e.to_string().contains("no curve"), "{e}");
    }

    #[test]
    fn round_trips_through_toml() {
        let raw = HeightModelFile::parse(PER_SPECIES, "h.toml").unwrap();
        let again = HeightModelFile::parse(&raw.to_toml().unwrap(), "again.toml").unwrap();
        assert_eq!(raw, again);
    }
}
