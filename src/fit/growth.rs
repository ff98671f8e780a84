//! `fit growth`: from a remeasurement CSV to a fitted diameter-growth model and its model file.

pub use super::growth_load::{load_growth, GrowthData};
use super::growth_mixed::{adjust, GrowthOptions};
use super::source::Screening;
use super::{term_needs, DataOptions, Years};
use crate::data::RemeasureCounts;
use crate::model::design::{build_design, DesignOptions};
use crate::model::file::{
    CoefficientEntry, CovarianceEntry, CovarianceKind, FitInfo, GrowthResponse, ModelFile,
    ModelKind,
};
use crate::model::growth::{fit_ols, OlsFit};
use crate::Error;

/// The response of a growth fit.
#[derive(Debug, Clone, PartialEq)]
pub enum GrowthTarget {
    /// ln of the basal-area increment (default) or the annual diameter increment, computed
    /// from `dbh` and `dbh2`.
    Increment(GrowthResponse),
    /// A column regressed as it is (`--response-col`); the model cannot be projected.
    Column(String),
}

/// Everything `fit growth` needs.
#[derive(Debug, Clone)]
pub struct GrowthSpec {
    /// Where and how to read the data.
    pub data: DataOptions,
    /// The predictor list.
    pub predictors: String,
    /// The response.
    pub target: GrowthTarget,
    /// The remeasurement interval.
    pub years: Years,
}

impl GrowthSpec {
    /// Least squares of ln(basal-area increment) on `predictors`, reading `path` with the
    /// default columns; the interval comes from a `years` column when the file has one.
    pub fn new(path: impl Into<std::path::PathBuf>, predictors: &str) -> Self {
        GrowthSpec {
            data: DataOptions::new(path),
            predictors: predictors.to_string(),
            target: GrowthTarget::Increment(GrowthResponse::LnBai),
            years: Years::Default,
        }
    }
}

/// A fitted growth model.
#[derive(Debug, Clone)]
pub struct GrowthFit {
    /// The OLS result (with a plot effect: the mixed model's estimates in the same shape).
    pub ols: OlsFit,
    /// Model-based or cluster-robust covariance.
    pub covariance_kind: CovarianceKind,
    /// Clusters of a cluster-robust covariance.
    pub n_clusters: Option<usize>,
    /// The plot effect of a mixed model.
    pub plot_effect: Option<super::mixed::PlotEffectSummary>,
    /// The response kind.
    pub response: GrowthResponse,
    /// The period the model describes (None: not projectable).
    pub period_years: Option<f64>,
    /// Where the rows of the file went.
    pub counts: RemeasureCounts,
    /// Records left out because their basal-area increment was ≤ 0.
    pub non_positive_increment: usize,
    /// Things the user should know.
    pub warnings: Vec<String>,
    /// What data screening found.
    pub screening: Screening,
    /// The model file to write with `--out`.
    pub model: ModelFile,
}

/// Fit the growth model described by `spec`.
///
/// # Errors
/// Bad data or terms (exit code 2), rank deficiency (2).
pub fn fit_growth(spec: &GrowthSpec) -> Result<GrowthFit, Error> {
    fit_growth_with(spec, &GrowthOptions::default())
}

/// Fit the growth model described by `spec` with the covariance and plot-effect options of
/// `opts` (`--cluster`, `--plot-effect`).
///
/// # Errors
/// Bad data, terms or options (exit code 2), rank deficiency (2); a mixed model whose
/// residual variance vanishes (1).
pub fn fit_growth_with(spec: &GrowthSpec, opts: &GrowthOptions) -> Result<GrowthFit, Error> {
    let data = load_growth(
        spec,
        std::slice::from_ref(&spec.predictors),
        None,
        &opts.columns(),
    )?;
    fit_growth_loaded(spec, &data, &spec.predictors, opts)
}

/// Fit `predictors` on growth records already loaded (the fit stage of [`fit_growth`]).
///
/// # Errors
/// Bad terms (exit code 2), rank deficiency (2).
pub fn fit_growth_loaded(
    spec: &GrowthSpec,
    data: &GrowthData,
    predictors: &str,
    opts: &GrowthOptions,
) -> Result<GrowthFit, Error> {
    let needs = term_needs(predictors, &spec.data)?;
    let mut warnings = data.warnings.clone();
    let response = data.response;
    let period_years = data.period_years;
    let excluded = data.non_positive_increment;
    let design = build_design(
        &needs.terms,
        &data.records.frame,
        &DesignOptions {
            intercept: spec.data.intercept,
            references: spec.data.references.clone(),
            declared_categorical: spec.data.categorical.clone(),
        },
    )?;
    warnings.extend(design.warnings.iter().cloned());
    let ols = fit_ols(
        design.x.view(),
        ndarray::ArrayView1::from(&data.y),
        &design.names,
        design.intercept,
    )?;
    let adjusted = adjust(ols, design.x.view(), &data.y, &data.records.frame, opts)?;
    let ols = adjusted.ols;
    let model = ModelFile {
        kind: ModelKind::Growth,
        link: None,
        outcome: None,
        interval: None,
        period_years: if response == GrowthResponse::Column {
            None
        } else {
            period_years
        },
        units: Some(spec.data.units.as_str().to_string()),
        response: Some(response),
        residual_sd: Some(ols.residual_sd),
        coefficients: ols
            .names
            .iter()
            .zip(&ols.coefficients)
            .zip(&ols.std_errors)
            .map(|((t, b), s)| CoefficientEntry {
                term: t.clone(),
                estimate: *b,
                std_error: Some(*s),
            })
            .collect(),
        categorical: design.categorical.clone(),
        covariance: Some(CovarianceEntry {
            kind: adjusted.kind,
            terms: ols.names.clone(),
            matrix: ols.covariance.clone(),
        }),
        fit: Some(FitInfo {
            records: Some(ols.records as u64),
            source: Some(spec.data.path.display().to_string()),
            source_sha256: Some(data.records.sha256.clone()),
            method: Some(match &adjusted.plot_effect {
                Some(pe) => pe.method.name().to_string(),
                None => "least_squares".to_string(),
            }),
            predictors: Some(predictors.to_string()),
            log_likelihood: Some(ols.log_likelihood),
            aic: Some(ols.aic),
            bic: Some(ols.bic),
            r_squared: Some(ols.r_squared).filter(|r| r.is_finite()),
            ranges: design.ranges.clone(),
            flagged_records: data.screening.file_count(),
            flagged_left_out: data.screening.file_left_out(),
            ..FitInfo::default()
        }),
        plot_effect: adjusted.plot_effect.as_ref().map(|p| p.model_entry()),
    };
    Ok(GrowthFit {
        ols,
        covariance_kind: adjusted.kind,
        n_clusters: adjusted.n_clusters,
        plot_effect: adjusted.plot_effect,
        response,
        period_years: model.period_years,
        counts: data.records.counts,
        non_positive_increment: excluded,
        warnings,
        screening: data.screening.clone(),
        model,
    })
}
