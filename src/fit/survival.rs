//! `fit survival`: from a remeasurement CSV to a fitted binomial GLM and its model file.

use super::estimate::{estimate, inference, Estimate, Estimator, Inference};
use super::judge::{diagnose, Diagnostics};
use super::load::{load_survival, LoadOptions, SurvivalData};
use super::mixed::{survival_plot_effect, PlotEffectSummary, SurvivalPlotEffect};
use super::{DataOptions, Years};
use crate::data::{Outcome, RemeasureCounts};
use crate::model::file::{
    CoefficientEntry, CovarianceEntry, FitInfo, IntervalKind, ModelFile, ModelKind,
};
use crate::model::glm::{FitControl, GlmFit};
use crate::model::link::Link;
use crate::Error;

/// The response of a survival fit.
#[derive(Debug, Clone, PartialEq)]
pub enum SurvivalResponse {
    /// One row per tree with a status column; `outcome` says what a status of 1 means.
    Status {
        /// What the modelled probability is about.
        outcome: Outcome,
    },
    /// Grouped binomial counts: `successes` of `trials`.
    Counts {
        /// Column of successes.
        successes: String,
        /// Column of trials.
        trials: String,
    },
}

/// Everything `fit survival` needs.
#[derive(Debug, Clone)]
pub struct SurvivalSpec {
    /// Where and how to read the data.
    pub data: DataOptions,
    /// The predictor list (`--predictors`).
    pub predictors: String,
    /// Status or counts.
    pub response: SurvivalResponse,
    /// Prior (frequency) weights column.
    pub weights: Option<String>,
    /// Offset column.
    pub offset: Option<String>,
    /// The remeasurement interval.
    pub years: Years,
    /// How the interval enters the model.
    pub interval: IntervalKind,
    /// Link function.
    pub link: Link,
}

impl SurvivalSpec {
    /// A logit model of "alive at the second measurement" on `predictors` (the term grammar of
    /// docs/model-files.md#terms), reading `path` with the default columns; the interval comes
    /// from a `years` column when the file has one. Change the public fields for the rest.
    pub fn new(path: impl Into<std::path::PathBuf>, predictors: &str) -> Self {
        SurvivalSpec {
            data: DataOptions::new(path),
            predictors: predictors.to_string(),
            response: SurvivalResponse::Status {
                outcome: Outcome::default(),
            },
            weights: None,
            offset: None,
            years: Years::Default,
            interval: IntervalKind::default(),
            link: Link::default(),
        }
    }
}

/// Options of `fit survival` beyond the model specification.
#[derive(Debug, Clone, Default)]
pub struct FitOptions {
    /// Maximum likelihood or Firth's penalised likelihood (`--firth`).
    pub estimator: Estimator,
    /// Cluster-robust covariance by this column (`--cluster`).
    pub cluster: Option<String>,
    /// Diameter-class lower bounds of the calibration table (`--dbh-classes`).
    pub dbh_classes: Option<Vec<f64>>,
    /// Compute the fitted survival curves against diameter (`--calibration-svg`).
    pub curves: bool,
    /// Iteration limit of the fit (`--max-iterations`, R `glm.control(maxit)`).
    pub control: FitControl,
    /// Fit a random plot intercept (`--plot-effect`, docs/mixed-models.md).
    pub plot_effect: Option<SurvivalPlotEffect>,
}

/// A fitted survival model with everything the summary and the model file need.
#[derive(Debug, Clone)]
pub struct SurvivalFit {
    /// Estimates and fit statistics, with the model-based covariance. Firth and annualised fits
    /// are carried in this shape too (see `estimator` and `interval`).
    pub glm: GlmFit,
    /// How the coefficients were estimated.
    pub estimator: Estimator,
    /// The covariance the summary shows (model-based or cluster-robust) and its Wald table.
    pub inference: Inference,
    /// ℓ + ½ ln det(XᵀWX) at the estimate of a Firth fit.
    pub penalized_log_likelihood: Option<f64>,
    /// Penalised-likelihood-ratio p-values of a Firth fit, in term order.
    pub plr_p_values: Option<Vec<f64>>,
    /// AUC, Hosmer–Lemeshow, LR test against the null model, calibration by diameter class.
    pub diagnostics: Diagnostics,
    /// Fitted survival against diameter, when asked for.
    pub curves: Option<super::curves::SurvivalCurves>,
    /// What the probability is about.
    pub outcome: Outcome,
    /// How the interval entered.
    pub interval: IntervalKind,
    /// The period the model describes (None: not projectable).
    pub period_years: Option<f64>,
    /// Where the rows of the file went.
    pub counts: RemeasureCounts,
    /// Things the user should know.
    pub warnings: Vec<String>,
    /// What data screening found.
    pub screening: super::source::Screening,
    /// The model file to write with `--out`.
    pub model: ModelFile,
    /// The plot effect of a mixed model (`glm` then holds the GLMM's estimates).
    pub plot_effect: Option<PlotEffectSummary>,
}

/// Fit the survival model described by `spec` by maximum likelihood, model-based covariance.
///
/// # Errors
/// Bad data or terms (exit code 2), separation or rank deficiency (2), non-convergence (1).
pub fn fit_survival(spec: &SurvivalSpec) -> Result<SurvivalFit, Error> {
    fit_survival_with(spec, &FitOptions::default())
}

/// Check option combinations that have no model before anything is read.
///
/// # Errors
/// [`Error::Usage`] naming what to use instead.
pub fn check_options(spec: &SurvivalSpec, opts: &FitOptions) -> Result<(), Error> {
    super::load::check_interval(spec)?;
    if opts.estimator == Estimator::Firth {
        if spec.link != Link::Logit {
            return Err(Error::Usage(format!(
                "--firth is defined for the logit link only (Firth 1993); drop --link {} or --firth",
                spec.link.name()
            )));
        }
        if spec.interval == IntervalKind::Annualized {
            return Err(Error::Usage(
                "--firth cannot be combined with --interval annualized; use one of them".into(),
            ));
        }
    }
    if opts.cluster.is_some() && opts.estimator == Estimator::Firth {
        return Err(Error::Usage(
            "--cluster gives a cluster-robust covariance of the maximum-likelihood fit; it cannot be combined with --firth".into(),
        ));
    }
    if let Some(pe) = &opts.plot_effect {
        if opts.estimator == Estimator::Firth {
            return Err(Error::Usage(
                "--plot-effect fits by maximum likelihood; it cannot be combined with --firth"
                    .into(),
            ));
        }
        if opts.cluster.is_some() {
            return Err(Error::Usage(format!(
                "--plot-effect models the correlation of records within a plot (`{}`); drop --cluster, or fit without --plot-effect for a cluster-robust covariance",
                pe.plot
            )));
        }
    }
    if let Some(b) = &opts.dbh_classes {
        super::check_classes(b)?;
        if !super::source::has_column(&spec.data, &spec.data.names.dbh) {
            return Err(Error::Usage(format!(
                "--dbh-classes: {} has no diameter column `{}` (name it with --dbh COL)",
                spec.data.path.display(),
                spec.data.names.dbh
            )));
        }
    }
    Ok(())
}

/// Fit the survival model described by `spec` with the estimator, covariance and diagnostics
/// options of `opts`.
///
/// # Errors
/// Bad data, terms or option combinations (exit code 2), separation or rank deficiency (2),
/// non-convergence (1).
pub fn fit_survival_with(spec: &SurvivalSpec, opts: &FitOptions) -> Result<SurvivalFit, Error> {
    check_options(spec, opts)?;
    let data = load_survival(
        spec,
        &LoadOptions {
            predictor_sets: vec![spec.predictors.clone()],
            cluster: opts.cluster.clone(),
            plot: opts.plot_effect.as_ref().map(|p| p.plot.clone()),
            ..LoadOptions::default()
        },
    )?;
    fit_loaded(spec, opts, &data, &spec.predictors)
}

/// Fit `predictors` on records already loaded (the fit stage of [`fit_survival_with`]).
///
/// # Errors
/// As [`fit_survival_with`].
pub fn fit_loaded(
    spec: &SurvivalSpec,
    opts: &FitOptions,
    data: &SurvivalData,
    predictors: &str,
) -> Result<SurvivalFit, Error> {
    let est = estimate(spec, data, predictors, opts.estimator, &opts.control)?;
    let (est, plot_effect) = match &opts.plot_effect {
        Some(pe) => {
            let limit = 4 * opts.control.max_iterations.max(50);
            let (e, s) = survival_plot_effect(spec, data, &est, pe, limit)?;
            (e, Some(s))
        }
        None => (est, None),
    };
    let inference = match spec.interval {
        IntervalKind::Annualized if plot_effect.is_none() => {
            super::cluster::annualized_inference(&est, data, data.clusters.as_deref())?
        }
        _ => inference(&est, data, data.clusters.as_deref())?,
    };
    let mut diagnostics = diagnose(
        data,
        &est,
        opts.estimator,
        &spec.data.names.dbh,
        opts.dbh_classes.as_deref(),
        spec.data.units,
    );
    let curves = if opts.curves {
        Some(super::curves::survival_curves(spec, data, &est)?)
    } else {
        None
    };
    let mut warnings = data.warnings.clone();
    if data.period_years.is_none() {
        warnings.push("no remeasurement interval was given (--years N or a `years` column), so the model file has no period_years and cannot drive a projection".into());
    }
    warnings.extend(est.glm.warnings.iter().cloned());
    warnings.extend(est.design.warnings.iter().cloned());
    let mut model = model_file(spec, &est, &inference, data, predictors, opts.estimator);
    if let Some(pe) = &plot_effect {
        diagnostics.lr_test_vs_null = Err(crate::model::diagnostics::Unavailable(
            "not reported with a plot effect; plot_effect.lr_test compares the model with and without it".into(),
        ));
        model.plot_effect = Some(pe.model_entry());
    }
    Ok(SurvivalFit {
        glm: est.glm,
        estimator: opts.estimator,
        inference,
        penalized_log_likelihood: est.penalized_log_likelihood,
        plr_p_values: est.plr_p_values,
        diagnostics,
        curves,
        outcome: data.outcome,
        interval: spec.interval,
        period_years: data.period_years,
        counts: data.records.counts,
        screening: data.screening.clone(),
        warnings,
        model,
        plot_effect,
    })
}

fn model_file(
    spec: &SurvivalSpec,
    est: &Estimate,
    inf: &Inference,
    data: &SurvivalData,
    predictors: &str,
    estimator: Estimator,
) -> ModelFile {
    let glm = &est.glm;
    let design = &est.design;
    let coefficients = glm
        .terms
        .iter()
        .zip(&glm.coefficients)
        .zip(&inf.std_errors)
        .map(|((t, b), s)| CoefficientEntry {
            term: t.clone(),
            estimate: *b,
            std_error: Some(*s),
        })
        .collect();
    ModelFile {
        kind: ModelKind::Survival,
        link: Some(glm.link.name().to_string()),
        outcome: Some(data.outcome),
        interval: Some(spec.interval),
        period_years: data.period_years,
        units: Some(spec.data.units.as_str().to_string()),
        response: None,
        residual_sd: None,
        coefficients,
        categorical: design.categorical.clone(),
        covariance: Some(CovarianceEntry {
            kind: inf.kind,
            terms: glm.terms.clone(),
            matrix: inf.covariance.clone(),
        }),
        fit: Some(FitInfo {
            records: Some(glm.n_obs as u64),
            source: Some(spec.data.path.display().to_string()),
            source_sha256: Some(data.records.sha256.clone()),
            method: Some(
                match estimator {
                    Estimator::MaximumLikelihood => "maximum_likelihood",
                    Estimator::Firth => "firth",
                }
                .to_string(),
            ),
            predictors: Some(predictors.to_string()),
            deviance: Some(glm.deviance),
            null_deviance: Some(glm.null_deviance).filter(|d| d.is_finite()),
            log_likelihood: Some(glm.log_likelihood),
            aic: Some(glm.aic),
            bic: Some(glm.bic),
            r_squared: None,
            iterations: Some(glm.iterations as u64),
            converged: Some(glm.converged),
            ranges: design.ranges.clone(),
            flagged_records: data.screening.file_count(),
            flagged_left_out: data.screening.file_left_out(),
        }),
        plot_effect: None,
    }
}
