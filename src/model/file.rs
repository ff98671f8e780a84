//! The model file (`docs/model-files.md`): a small, human-readable TOML file written by `fit` and
//! also typed by hand from published coefficients. [`ModelFile`] is the file as written;
//! [`Model`](super::stored::Model) is the validated value the rest of the crate uses.

use std::collections::BTreeMap;
use std::path::Path;

use serde::{Deserialize, Serialize};

use super::design::CategoricalLevels;
use super::ModelError;
pub use crate::data::Outcome;

/// What a model file describes.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize, Deserialize)]
#[serde(rename_all = "snake_case")]
pub enum ModelKind {
    /// A periodic survival model (binomial GLM).
    Survival,
    /// A diameter-growth model (OLS on a transformed response).
    Growth,
    /// A height–diameter curve ([`HeightModelFile`](super::height_file::HeightModelFile)).
    Height,
    /// A volume equation ([`VolumeModelFile`](super::volume::VolumeModelFile)).
    Volume,
}

/// How the remeasurement interval enters the survival model
/// (`docs/maths.md#survival-over-the-remeasurement-interval`).
#[derive(Debug, Clone, Copy, PartialEq, Eq, Default, Serialize, Deserialize)]
#[serde(rename_all = "snake_case")]
pub enum IntervalKind {
    /// All intervals equal the model period.
    #[default]
    Fixed,
    /// P = p(η)^L with p an annual survival probability.
    Annualized,
    /// cloglog with offset ln L: P(die in L) = 1 − exp(−e^η L).
    Exposure,
}

/// The response of a growth model.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize, Deserialize)]
#[serde(rename_all = "snake_case")]
pub enum GrowthResponse {
    /// ln of the basal-area increment (cm² per tree over the period).
    LnBai,
    /// Diameter increment in cm per year.
    AnnualIncrement,
    /// A column regressed as it is; not projectable.
    Column,
}

/// Which covariance matrix the file holds.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Default, Serialize, Deserialize)]
#[serde(rename_all = "snake_case")]
pub enum CovarianceKind {
    /// Inverse information of the fit.
    #[default]
    Model,
    /// Cluster-robust (CR1) sandwich.
    ClusterRobust,
}

/// One coefficient entry.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct CoefficientEntry {
    /// Canonical term label, or `(intercept)`.
    pub term: String,
    /// The estimate.
    pub estimate: f64,
    /// Standard error (written by `fit`; optional when typed by hand).
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub std_error: Option<f64>,
}

/// The covariance table.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct CovarianceEntry {
    /// Model or cluster-robust.
    #[serde(default)]
    pub kind: CovarianceKind,
    /// Row and column order.
    pub terms: Vec<String>,
    /// The symmetric matrix, row by row.
    pub matrix: Vec<Vec<f64>>,
}

/// Facts about the fit (written by `fit`; optional in hand-typed files).
#[derive(Debug, Clone, PartialEq, Default, Serialize, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct FitInfo {
    /// Records in the fit.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub records: Option<u64>,
    /// The data file.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub source: Option<String>,
    /// SHA-256 of the data file.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub source_sha256: Option<String>,
    /// How the coefficients were estimated: `maximum_likelihood`, `firth` (penalised
    /// likelihood) or `least_squares`.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub method: Option<String>,
    /// The predictor list as given.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub predictors: Option<String>,
    /// Residual deviance (survival).
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub deviance: Option<f64>,
    /// Null deviance (survival).
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub null_deviance: Option<f64>,
    /// Log-likelihood.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub log_likelihood: Option<f64>,
    /// AIC.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub aic: Option<f64>,
    /// BIC.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub bic: Option<f64>,
    /// R² (growth).
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub r_squared: Option<f64>,
    /// Iterations (survival).
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub iterations: Option<u64>,
    /// Whether the fit converged (survival).
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub converged: Option<bool>,
    /// Covariate ranges of the fitting data, for extrapolation warnings.
    #[serde(default, skip_serializing_if = "BTreeMap::is_empty")]
    pub ranges: BTreeMap<String, [f64; 2]>,
    /// Records flagged by data screening (docs/histories.md, "Screening").
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub flagged_records: Option<u64>,
    /// Whether the flagged records were left out of the fit (`--drop-flagged`).
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub flagged_left_out: Option<bool>,
}

/// The plot effect of a mixed model (`[plot_effect]`): the SD of the random plot intercept,
/// how it was estimated, and the fitted plots' conditional modes (docs/mixed-models.md).
/// A hand-typed file may give only `sd`.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct PlotEffectEntry {
    /// σ_u, on the linear-predictor scale of the model.
    pub sd: f64,
    /// laplace | agq | reml | ml.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub method: Option<String>,
    /// Quadrature nodes of a GLMM fit.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub nodes: Option<u32>,
    /// The column that named the plots.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub column: Option<String>,
    /// Fitted plots' conditional modes and SDs (`[[plot_effect.plots]]`).
    #[serde(default, skip_serializing_if = "Vec::is_empty")]
    pub plots: Vec<PlotModeEntry>,
}

/// One fitted plot's conditional mode and SD.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct PlotModeEntry {
    /// The plot id as in the data.
    pub plot: String,
    /// Conditional mode û_j.
    pub mode: f64,
    /// Conditional SD.
    pub sd: f64,
}

/// The model file exactly as stored (`docs/model-files.md#keys`).
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct ModelFile {
    /// Survival or growth.
    pub kind: ModelKind,
    /// Survival: logit | probit | cloglog.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub link: Option<String>,
    /// Survival: alive (default) | dead.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub outcome: Option<Outcome>,
    /// Survival: fixed (default) | annualized | exposure.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub interval: Option<IntervalKind>,
    /// The interval the model describes; absent when the fit had none (not projectable).
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub period_years: Option<f64>,
    /// metric (default) | imperial.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub units: Option<String>,
    /// Growth: ln_bai | annual_increment | column.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub response: Option<GrowthResponse>,
    /// Growth: residual standard deviation on the response scale of the fit.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub residual_sd: Option<f64>,
    /// Coefficients, intercept first when present.
    pub coefficients: Vec<CoefficientEntry>,
    /// Categorical variables: levels and reference.
    #[serde(default, skip_serializing_if = "BTreeMap::is_empty")]
    pub categorical: BTreeMap<String, CategoricalLevels>,
    /// Covariance of the estimates (needed for parameter uncertainty).
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub covariance: Option<CovarianceEntry>,
    /// Facts about the fit.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub fit: Option<FitInfo>,
    /// The random plot intercept of a mixed model.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub plot_effect: Option<PlotEffectEntry>,
}

impl ModelFile {
    /// Read and parse a model file (no semantic validation; see
    /// [`Model::from_file`](super::stored::Model::from_file)).
    ///
    /// # Errors
    /// [`ModelError::File`] naming the file and the TOML key path of the problem.
    pub fn read(path: &Path) -> Result<ModelFile, ModelError> {
        let file = path.display().to_string();
        let text = std::fs::read_to_string(path).map_err(|e| ModelError::File {
            file: file.clone(),
            key: "file".into(),
            message: format!("cannot be read: {e}"),
        })?;
        Self::parse(&text, &file)
    }

    /// Parse model-file text; `file` is used in messages.
    ///
    /// # Errors
    /// [`ModelError::File`] with the TOML position and key.
    pub fn parse(text: &str, file: &str) -> Result<ModelFile, ModelError> {
        // Height, volume and ingrowth files have keys of their own; say what they are rather
        // than which key is unknown.
        match peek_kind(text).as_deref() {
            Some(kind @ ("height" | "volume")) => {
                return Err(ModelError::File {
                    file: file.to_string(),
                    key: "kind".into(),
                    message: format!(
                        "this is a {kind} model; a survival or growth model is needed here"
                    ),
                })
            }
            Some("ingrowth") => {
                return Err(ModelError::File {
                    file: file.to_string(),
                    key: "kind".into(),
                    message: "an ingrowth model, not a survival or growth model; use it as a scenario's `[models] ingrowth` (see docs/ingrowth.md)".into(),
                })
            }
            _ => {}
        }
        toml::from_str(text).map_err(|e| ModelError::File {
            file: file.to_string(),
            key: toml_error_location(text, &e),
            message: e.message().to_string(),
        })
    }

    /// Render as TOML text.
    ///
    /// # Errors
    /// [`ModelError::Invalid`] if a value cannot be represented (NaN is written as `nan`).
    pub fn to_toml(&self) -> Result<String, ModelError> {
        toml::to_string(self).map_err(|e| ModelError::Invalid(format!("model file: {e}")))
    }
}

/// The `kind` of model-file text, if it parses as TOML and has a string `kind`.
pub fn peek_kind(text: &str) -> Option<String> {
    let table: toml::Table = toml::from_str(text).ok()?;
    table.get("kind")?.as_str().map(str::to_string)
}

/// Describe where in `text` a TOML error happened: "line L" (the key path is in the message).
pub fn toml_error_location(text: &str, e: &toml::de::Error) -> String {
    match e.span() {
        Some(span) => {
            let line = text[..span.start.min(text.len())].matches('\n').count() + 1;
            format!("line {line}")
        }
        None => "file".to_string(),
    }
}
