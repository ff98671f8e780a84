//! Volume equations (`kind = "volume"`, docs/height-volume.md): the combined-variable and
//! logarithmic forms, their model file, and tree and per-area volume.

use std::path::Path;

use serde::{Deserialize, Serialize};

use super::file::{toml_error_location, CoefficientEntry, CovarianceEntry, FitInfo, ModelKind};
use super::ModelError;
use crate::data::Units;

/// A volume equation form.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize, Deserialize)]
#[serde(rename_all = "snake_case")]
pub enum VolumeForm {
    /// Combined variable: V = b0 + b1·D²H.
    Combined,
    /// Logarithmic: V = exp(b0 + b1 ln D + b2 ln H), optionally × exp(s²/2).
    Logarithmic,
}

impl VolumeForm {
    /// The coefficient names in order.
    pub fn parameter_names(self) -> &'static [&'static str] {
        match self {
            VolumeForm::Combined => &["b0", "b1"],
            VolumeForm::Logarithmic => &["b0", "b1", "b2"],
        }
    }

    /// The model-file name.
    pub fn as_str(self) -> &'static str {
        match self {
            VolumeForm::Combined => "combined",
            VolumeForm::Logarithmic => "logarithmic",
        }
    }

    /// The formula, for summaries.
    pub fn formula(self) -> &'static str {
        match self {
            VolumeForm::Combined => "V = b0 + b1·D²·H",
            VolumeForm::Logarithmic => "ln V = b0 + b1·ln D + b2·ln H",
        }
    }
}

/// The units a volume equation reads and returns: "D cm, H m, V m³" or "D in, H ft, V ft³".
pub fn volume_units_text(units: Units) -> &'static str {
    match units {
        Units::Metric => "D in cm, H in m, V in m³",
        Units::Imperial => "D in inches, H in ft, V in ft³",
    }
}

/// The log-bias correction factor of a logarithmic regression (Baskerville 1972): the mean of
/// a log-normal variable is its median times this.
///
/// # Formula
/// CF = exp(s²/2), s the residual standard deviation of ln V.
pub fn log_bias_factor(residual_sd: f64) -> f64 {
    (0.5 * residual_sd * residual_sd).exp()
}

/// The volume model file exactly as stored.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct VolumeModelFile {
    /// Always `volume`.
    pub kind: ModelKind,
    /// combined | logarithmic.
    pub form: VolumeForm,
    /// metric (D cm, H m, V m³; default) | imperial (D in, H ft, V ft³).
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub units: Option<Units>,
    /// Where the coefficients come from (a publication, or the fitted file).
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub source: Option<String>,
    /// Residual standard deviation (of V, or of ln V for the logarithmic form).
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub residual_sd: Option<f64>,
    /// Logarithmic form: multiply by exp(residual_sd²/2) (needs `residual_sd`). Default false.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub log_bias_correction: Option<bool>,
    /// b0, b1 (and b2 for the logarithmic form).
    pub coefficients: Vec<CoefficientEntry>,
    /// Covariance of the estimates.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub covariance: Option<CovarianceEntry>,
    /// Facts about the fit.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub fit: Option<FitInfo>,
}

/// A checked volume equation.
#[derive(Debug, Clone, PartialEq)]
pub struct VolumeModel {
    /// The form.
    pub form: VolumeForm,
    /// Units of D, H and V.
    pub units: Units,
    /// b0, b1 (, b2).
    pub coefficients: Vec<f64>,
    /// Multiplier applied to every volume (exp(s²/2) with the log-bias correction, else 1).
    pub factor: f64,
}

impl VolumeModelFile {
    /// Parse volume-model text; `file` is used in messages.
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
        toml::to_string(self).map_err(|e| ModelError::Invalid(format!("volume model file: {e}")))
    }
}

impl VolumeModel {
    /// Read and check a volume model file.
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
        Self::from_file(VolumeModelFile::parse(&text, &file)?, &file)
    }

    /// Check a parsed file; `file` is used in messages.
    ///
    /// # Errors
    /// [`ModelError::File`] naming the key: a kind other than volume, coefficients that are
    /// not exactly the form's, a log-bias correction without a residual SD or on the combined
    /// form.
    pub fn from_file(raw: VolumeModelFile, file: &str) -> Result<Self, ModelError> {
        let err = |key: &str, message: String| ModelError::File {
            file: file.to_string(),
            key: key.to_string(),
            message,
        };
        if raw.kind != ModelKind::Volume {
            return Err(err(
                "kind",
                "a volume model file has kind = \"volume\"".into(),
            ));
        }
        let names = raw.form.parameter_names();
        let mut values = vec![f64::NAN; names.len()];
        for c in &raw.coefficients {
            let Some(k) = names.iter().position(|n| *n == c.term) else {
                return Err(err(
                    "coefficients",
                    format!(
                        "term `{}` is not a coefficient of the {} form ({})",
                        c.term,
                        raw.form.as_str(),
                        names.join(", ")
                    ),
                ));
            };
            if !values[k].is_nan() || !c.estimate.is_finite() {
                return Err(err(
                    "coefficients",
                    format!("term `{}` appears twice or is not a finite number", c.term),
                ));
            }
            values[k] = c.estimate;
        }
        if let Some(k) = values.iter().position(|v| v.is_nan()) {
            return Err(err(
                "coefficients",
                format!(
                    "missing term `{}` of the {} form",
                    names[k],
                    raw.form.as_str()
                ),
            ));
        }
        if let Some(sd) = raw.residual_sd {
            if !(sd >= 0.0 && sd.is_finite()) {
                return Err(err(
                    "residual_sd",
                    format!("{sd} is not a non-negative number"),
                ));
            }
        }
        let factor = match (
            raw.log_bias_correction.unwrap_or(false),
            raw.form,
            raw.residual_sd,
        ) {
            (false, _, _) => 1.0,
            (true, VolumeForm::Combined, _) => {
                return Err(err(
                    "log_bias_correction",
                    "applies to the logarithmic form only".into(),
                ))
            }
            (true, VolumeForm::Logarithmic, None) => {
                return Err(err(
                    "log_bias_correction",
                    "needs residual_sd (the residual SD of ln V)".into(),
                ))
            }
            (true, VolumeForm::Logarithmic, Some(sd)) => log_bias_factor(sd),
        };
        Ok(VolumeModel {
            form: raw.form,
            units: raw.units.unwrap_or_default(),
            coefficients: values,
            factor,
        })
    }

    /// Volume of one tree of diameter `dbh` and total height `height` (the model's units).
    ///
    /// # Formula
    /// Combined: b0 + b1·D²H. Logarithmic: exp(b0 + b1 ln D + b2 ln H) · CF, with CF the
    /// log-bias factor when the file asks for it, else 1.
    #[inline]
    pub fn tree_volume(&self, dbh: f64, height: f64) -> f64 {
        let b = &self.coefficients;
        match self.form {
            VolumeForm::Combined => b[0] + b[1] * dbh * dbh * height,
            VolumeForm::Logarithmic => {
                (b[0] + b[1] * dbh.ln() + b[2] * height.ln()).exp() * self.factor
            }
        }
    }

    /// Volume per unit area of a tree list: Σ vᵢ nᵢ with nᵢ the stems per unit area a record
    /// stands for (per hectare in metric units, per acre in imperial).
    ///
    /// # Formula
    /// V/area = Σᵢ nᵢ · v(Dᵢ, Hᵢ).
    pub fn volume_per_area(&self, dbh: &[f64], height: &[f64], stems_per_area: &[f64]) -> f64 {
        dbh.iter()
            .zip(height)
            .zip(stems_per_area)
            .map(|((&d, &h), &n)| n * self.tree_volume(d, h))
            .sum()
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    // Derived analytically: combined V = 0.01 + 3e-5 · 30² · 25 = 0.01 + 0.675.
    #[test]
    fn combined_volume() {
        let text = "kind = \"volume\"\nform = \"combined\"\n[[coefficients]]\nterm = \"b0\"\nestimate = 0.01\n[[coefficients]]\nterm = \"b1\"\nestimate = 3e-5\n";
        let m = VolumeModel::from_file(VolumeModelFile::parse(text, "v.toml").unwrap(), "v.toml")
            .unwrap();
        assert!((m.tree_volume(30.0, 25.0) - 0.685).abs() < 1e-15);
        let bad = text.replace("log_bias", "x").replace(
            "form = \"combined\"",
            "form = \"combined\"\nlog_bias_correction = true",
        );
        let e = VolumeModel::from_file(VolumeModelFile::parse(&bad, "v.toml").unwrap(), "v.toml")
            .unwrap_err();
        assert!(e.to_string().contains("log_bias_correction"), "{e}");
    }

    // Derived analytically: exp(s²/2) with s = 0.2 is exp(0.02).
    #[test]
    fn baskerville_factor() {
        assert!((log_bias_factor(0.2) - 0.02f64.exp()).abs() < 1e-15);
    }
}
