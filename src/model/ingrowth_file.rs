//! The ingrowth model file as stored (kind `ingrowth`): both parts of the hurdle with their
//! coefficients and covariances, the count distribution and its dispersion, the new trees'
//! species shares and diameter quantiles, and facts about the fit. `docs/ingrowth.md` ("The
//! model file") shows an example; [`IngrowthModel`](super::ingrowth::IngrowthModel) is the
//! validated value.

use std::collections::BTreeMap;
use std::path::Path;

use serde::{Deserialize, Serialize};

use super::design::CategoricalLevels;
use super::file::{toml_error_location, CoefficientEntry, CovarianceEntry};
use super::ingrowth_trees::IngrowthTrees;
use super::truncated::CountFamily;
use super::ModelError;

/// The one kind an ingrowth model file has.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Default, Serialize, Deserialize)]
#[serde(rename_all = "snake_case")]
pub enum IngrowthKind {
    /// `kind = "ingrowth"`.
    #[default]
    Ingrowth,
}

/// The any-ingrowth part: logit P(N > 0) = x_anyᵀγ, no offset.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct AnyPartFile {
    /// Always `logit` (optional when typed by hand).
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub link: Option<String>,
    /// Coefficients, intercept first when present.
    pub coefficients: Vec<CoefficientEntry>,
    /// Inverse information of γ.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub covariance: Option<CovarianceEntry>,
}

/// The count part: the zero-truncated count with log link and offset ln(area·L).
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct CountPartFile {
    /// NB2 dispersion α (Var = μ + αμ² before truncation); absent for the Poisson.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub alpha: Option<f64>,
    /// Standard error of α.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub alpha_std_error: Option<f64>,
    /// Coefficients of exp(xᵀβ), new trees per unit area per year before truncation.
    pub coefficients: Vec<CoefficientEntry>,
    /// Inverse observed information in (β, α), `alpha` last among the terms for NB2.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub covariance: Option<CovarianceEntry>,
}

/// Facts about an ingrowth fit (written by `fit ingrowth`; optional when typed by hand).
#[derive(Debug, Clone, PartialEq, Default, Serialize, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct IngrowthFitInfo {
    /// Plot periods in the fit.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub records: Option<u64>,
    /// Plot periods with ingrowth (the count part's rows).
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub positive: Option<u64>,
    /// The plot-period file.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub source: Option<String>,
    /// SHA-256 of the plot-period file.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub source_sha256: Option<String>,
    /// Columns of the count, plot area and period length.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub columns: Option<IngrowthColumns>,
    /// The predictor list of the any part as given.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub predictors: Option<String>,
    /// The predictor list of the count part as given (when it differs).
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub count_predictors: Option<String>,
    /// ℓ of the any part.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub any_log_likelihood: Option<f64>,
    /// ℓ of the count part.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub count_log_likelihood: Option<f64>,
    /// ℓ of the hurdle (the sum).
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub log_likelihood: Option<f64>,
    /// AIC of the hurdle (α counted).
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub aic: Option<f64>,
    /// BIC of the hurdle with n = every plot period.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub bic: Option<f64>,
    /// IRLS iterations of the any part.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub any_iterations: Option<u64>,
    /// Newton iterations of the count part.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub count_iterations: Option<u64>,
    /// Covariate ranges over the plot periods, for extrapolation warnings.
    #[serde(default, skip_serializing_if = "BTreeMap::is_empty")]
    pub ranges: BTreeMap<String, [f64; 2]>,
}

/// The role columns of the plot-period file.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct IngrowthColumns {
    /// Number of new trees.
    pub count: String,
    /// Plot area; the term variable `area` reads it.
    pub area: String,
    /// Period length in years; the term variable `years` reads it.
    pub years: String,
}

/// An ingrowth model file exactly as stored.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct IngrowthModelFile {
    /// `ingrowth`.
    pub kind: IngrowthKind,
    /// `negative_binomial` or `poisson`.
    pub counts: CountFamily,
    /// metric (area in ha, default) | imperial (area in acres).
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub units: Option<String>,
    /// P(any ingrowth).
    pub any: AnyPartFile,
    /// The count given any.
    pub count: CountPartFile,
    /// Categorical variables of both parts: levels and reference.
    #[serde(default, skip_serializing_if = "BTreeMap::is_empty")]
    pub categorical: BTreeMap<String, CategoricalLevels>,
    /// Species shares and diameter quantiles of new trees.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub trees: Option<IngrowthTrees>,
    /// Facts about the fit.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub fit: Option<IngrowthFitInfo>,
}

impl IngrowthModelFile {
    /// Read and parse an ingrowth model file (no semantic validation).
    ///
    /// # Errors
    /// [`ModelError::File`] naming the file and the TOML position of the problem.
    pub fn read(path: &Path) -> Result<IngrowthModelFile, ModelError> {
        let file = path.display().to_string();
        let text = std::fs::read_to_string(path).map_err(|e| ModelError::File {
            file: file.clone(),
            key: "file".into(),
            message: format!("cannot be read: {e}"),
        })?;
        Self::parse(&text, &file)
    }

    /// Parse ingrowth model-file text; `file` is used in messages.
    ///
    /// # Errors
    /// [`ModelError::File`] with the TOML position and key.
    pub fn parse(text: &str, file: &str) -> Result<IngrowthModelFile, ModelError> {
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
        toml::to_string(self).map_err(|e| ModelError::Invalid(format!("model file: {e}")))
    }
}
