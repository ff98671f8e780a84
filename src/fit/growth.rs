//! `fit growth`: from a remeasurement CSV to a fitted diameter-growth model and its model file.

use super::growth_mixed::{adjust, GrowthOptions};
use super::{common_interval, file_has_column, term_needs, DataOptions, Years};
use crate::data::{
    load_remeasurement, DataError, FrameColumn, Outcome, Purpose, RemeasureCounts, RemeasureSpec,
    Required,
};
use crate::model::design::{build_design, DesignOptions};
use crate::model::file::{
    CoefficientEntry, CovarianceEntry, CovarianceKind, FitInfo, GrowthResponse, ModelFile,
    ModelKind,
};
use crate::model::growth::{fit_ols, growth_response, OlsFit};
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
    /// The model file to write with `--out`.
    pub model: ModelFile,
}

/// Fit the growth model described by `spec` by least squares.
///
/// # Errors
/// Bad data or terms (exit code 2), rank deficiency (2).
pub fn fit_growth(spec: &GrowthSpec) -> Result<GrowthFit, Error> {
    fit_growth_with(spec, &GrowthOptions::default())
}

/// Fit the growth model described by `spec` with the covariance and plot-effect options of
/// `opts`.
///
/// # Errors
/// Bad data, terms or options (exit code 2), rank deficiency (2); a mixed model whose
/// residual variance vanishes (1).
pub fn fit_growth_with(spec: &GrowthSpec, opts: &GrowthOptions) -> Result<GrowthFit, Error> {
    let needs = term_needs(&spec.predictors, &spec.data)?;
    let mut required = needs.required.clone();
    for (c, why) in opts.columns() {
        required.push(Required::new(&c, why));
    }
    let names = &spec.data.names;
    let years_col = match &spec.years {
        Years::Column(c) => Some(c.clone()),
        Years::Default if file_has_column(&spec.data.path, &names.years) => {
            Some(names.years.clone())
        }
        _ => None,
    };
    let purpose = match &spec.target {
        GrowthTarget::Column(c) => {
            required.push(Required::new(c, "--response-col"));
            Purpose::Counts
        }
        GrowthTarget::Increment(_) => Purpose::Growth,
    };
    if let (Some(c), GrowthTarget::Increment(_)) = (&years_col, &spec.target) {
        required.push(Required::new(c, "the remeasurement interval"));
    }
    let load = RemeasureSpec {
        names: names.clone(),
        purpose,
        one_means: Outcome::Alive,
        required,
        derived: needs.derived.clone(),
        use_columns: spec.data.use_columns.clone(),
        categorical: spec.data.categorical.clone(),
        units: spec.data.units,
    };
    let mut data = load_remeasurement(&spec.data.path, &load)?;
    let mut warnings = data.warnings.clone();
    let frame = &data.frame;
    let column = |c: &str| -> Result<Vec<f64>, Error> {
        match frame.column(c) {
            Some(FrameColumn::Numeric(v)) => Ok(v.clone()),
            Some(FrameColumn::Text { first_text, .. }) => {
                let (line, value) = first_text.clone().unwrap_or((0, String::new()));
                Err(DataError::Cell {
                    file: frame.source.clone(),
                    line,
                    column: c.to_string(),
                    message: format!("\"{value}\" is not a number"),
                }
                .into())
            }
            None => Err(Error::Usage(format!(
                "{}: column `{c}` was not loaded",
                frame.source
            ))),
        }
    };
    let (response, y, keep, period_years, excluded) = match &spec.target {
        GrowthTarget::Column(c) => {
            let y = column(c)?;
            let n = y.len();
            (GrowthResponse::Column, y, vec![true; n], None, 0)
        }
        GrowthTarget::Increment(kind) => {
            let d1 = column(&names.dbh)?;
            let d2 = column(&names.dbh2)?;
            let (years, period, annualize) = match (&spec.years, &years_col) {
                (Years::Fixed(n), _) => (vec![*n; d1.len()], Some(*n), false),
                (_, Some(c)) => {
                    let years = column(c)?;
                    match common_interval(&years, &frame.source) {
                        Ok(p) if *kind == GrowthResponse::LnBai => (years, Some(p), false),
                        Ok(p) => (years, Some(p), true),
                        Err(_) => {
                            warnings.push("remeasurement intervals differ; the increment is divided by each record's interval and the model describes one year".to_string());
                            (years, Some(1.0), true)
                        }
                    }
                }
                _ if *kind == GrowthResponse::AnnualIncrement => {
                    return Err(Error::Usage("--response annual_increment needs the remeasurement interval: give --years N or --years-col COL".into()))
                }
                _ => (vec![1.0; d1.len()], None, false),
            };
            let period = if *kind == GrowthResponse::AnnualIncrement {
                Some(1.0)
            } else {
                period
            };
            let mut y = Vec::with_capacity(d1.len());
            let mut keep = Vec::with_capacity(d1.len());
            for i in 0..d1.len() {
                match growth_response(*kind, d1[i], d2[i], years[i], annualize) {
                    Ok(v) => {
                        y.push(v);
                        keep.push(true);
                    }
                    Err(_) => keep.push(false),
                }
            }
            let excluded = keep.iter().filter(|k| !**k).count();
            (*kind, y, keep, period, excluded)
        }
    };
    if excluded > 0 {
        warnings.push(format!("{excluded} records with a basal-area increment ≤ 0 (second diameter not larger than the first) were left out"));
        data.frame.retain(&keep);
    }
    if period_years.is_none() && response != GrowthResponse::Column {
        warnings.push("no remeasurement interval was given (--years N or a `years` column), so the model file has no period_years and cannot drive a projection".into());
    }
    let design = build_design(
        &needs.terms,
        &data.frame,
        &DesignOptions {
            intercept: spec.data.intercept,
            references: spec.data.references.clone(),
            declared_categorical: spec.data.categorical.clone(),
        },
    )?;
    warnings.extend(design.warnings.iter().cloned());
    let ols = fit_ols(
        design.x.view(),
        ndarray::ArrayView1::from(&y),
        &design.names,
        design.intercept,
    )?;
    let adjusted = adjust(ols, design.x.view(), &y, &data.frame, opts)?;
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
            source_sha256: Some(data.sha256.clone()),
            method: Some(match &adjusted.plot_effect {
                Some(pe) => pe.method.name().to_string(),
                None => "least_squares".to_string(),
            }),
            predictors: Some(spec.predictors.clone()),
            log_likelihood: Some(ols.log_likelihood),
            aic: Some(ols.aic),
            bic: Some(ols.bic),
            r_squared: Some(ols.r_squared).filter(|r| r.is_finite()),
            ranges: design.ranges.clone(),
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
        counts: data.counts,
        non_positive_increment: excluded,
        warnings,
        model,
    })
}
