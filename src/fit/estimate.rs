//! The fit stage of a survival fit: one predictor set on loaded records, by ordinary maximum
//! likelihood (binomial GLM, or the annualised model for `--interval annualized`) or by Firth's
//! penalised likelihood, with the model-based or cluster-robust covariance.
//!
//! Firth and annualised fits are carried in the [`GlmFit`] shape (estimates, covariance, Wald
//! table, deviances, information criteria) so that summaries, ranking and model files treat
//! every estimator alike.

use ndarray::{Array2, ArrayView1};

use super::load::SurvivalData;
use super::survival::SurvivalSpec;
use super::term_needs;
use crate::model::annualized::{fit_annualized_with, AnnualizedFit};
use crate::model::design::{build_design, Design, DesignOptions};
use crate::model::file::{CovarianceKind, IntervalKind};
use crate::model::firth::{fit_firth_with, FirthFit};
use crate::model::glm::{fit_glm, fit_glm_with, wald, FitControl, GlmData, GlmFit, GlmOptions};
use crate::model::irls::unit_deviance;
use crate::model::link::Link;
use crate::model::robust::cluster_robust;
use crate::model::terms::INTERCEPT;
use crate::Error;

/// How the coefficients are estimated.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Default)]
pub enum Estimator {
    /// Maximum likelihood (the binomial GLM by IRLS; the annualised model by Newton–Raphson).
    #[default]
    MaximumLikelihood,
    /// Firth's penalised likelihood (logit link only).
    Firth,
}

/// The covariance the summary shows, with the Wald table computed from it.
#[derive(Debug, Clone, PartialEq)]
pub struct Inference {
    /// Model-based (inverse information) or cluster-robust (CR1).
    pub kind: CovarianceKind,
    /// The covariance matrix, rows and columns in term order.
    pub covariance: Vec<Vec<f64>>,
    /// √ of its diagonal.
    pub std_errors: Vec<f64>,
    /// b / SE.
    pub z: Vec<f64>,
    /// Two-sided normal p-values.
    pub p_values: Vec<f64>,
    /// Number of clusters of a cluster-robust covariance.
    pub n_clusters: Option<usize>,
}

/// One predictor set fitted on loaded records.
#[derive(Debug, Clone)]
pub struct Estimate {
    /// Estimates and fit statistics (model-based covariance).
    pub glm: GlmFit,
    /// The design the fit used (column names, categorical levels, ranges).
    pub design: Design,
    /// Fitted probability of a response of 1 (of a success for counts) per record, over the
    /// record's own interval.
    pub fitted: Vec<f64>,
    /// ℓ + ½ ln det(XᵀWX) of a Firth fit.
    pub penalized_log_likelihood: Option<f64>,
    /// Penalised-likelihood-ratio p-values of a Firth fit (βⱼ = 0, penalty from the full design).
    pub plr_p_values: Option<Vec<f64>>,
}

/// Build the design of `predictors` on the loaded records.
///
/// # Errors
/// Bad terms or data (exit code 2).
pub fn design_for(
    spec: &SurvivalSpec,
    data: &SurvivalData,
    predictors: &str,
) -> Result<Design, Error> {
    let needs = term_needs(predictors, &spec.data)?;
    Ok(build_design(
        &needs.terms,
        &data.records.frame,
        &DesignOptions {
            intercept: spec.data.intercept,
            references: spec.data.references.clone(),
        },
    )?)
}

/// The data of a fit of `x` on the loaded records, with prior weights replaced by `weights`
/// when given (cross-validation folds).
pub fn glm_data<'a>(
    data: &'a SurvivalData,
    x: ndarray::ArrayView2<'a, f64>,
    terms: &'a [String],
    weights: Option<ArrayView1<'a, f64>>,
) -> GlmData<'a> {
    GlmData {
        x,
        terms,
        y: data.y.view(),
        trials: data.trials.as_ref().map(|t| t.view()),
        weights: weights.or(data.weights.as_ref().map(|w| w.view())),
        offset: data.offset.as_ref().map(|o| o.view()),
    }
}

/// Fit `predictors` on the loaded records.
///
/// # Errors
/// Bad terms or data, separation, rank deficiency (exit code 2); non-convergence (1).
pub fn estimate(
    spec: &SurvivalSpec,
    data: &SurvivalData,
    predictors: &str,
    estimator: Estimator,
    control: &FitControl,
) -> Result<Estimate, Error> {
    let design = design_for(spec, data, predictors)?;
    let gd = glm_data(data, design.x.view(), &design.names, None);
    let (glm, penalized_log_likelihood, plr_p_values) = match (estimator, spec.interval) {
        (Estimator::Firth, _) => {
            let f = fit_firth_with(&gd, control)?;
            let (pll, plr) = (f.penalized_log_likelihood, f.plr_p_values.clone());
            (from_firth(&gd, &design, f)?, Some(pll), Some(plr))
        }
        (Estimator::MaximumLikelihood, IntervalKind::Annualized) => {
            let years = ArrayView1::from(&data.years[..]);
            let a = fit_annualized_with(&gd, years, control)?;
            (
                from_annualized(&gd, &design, years, a, control)?,
                None,
                None,
            )
        }
        (Estimator::MaximumLikelihood, _) => {
            let opts = GlmOptions { link: spec.link };
            (fit_glm_with(&gd, &opts, control)?, None, None)
        }
    };
    let fitted = fitted_values(&glm, &gd, spec.interval, &data.years)?;
    Ok(Estimate {
        glm,
        design,
        fitted,
        penalized_log_likelihood,
        plr_p_values,
    })
}

/// Fitted probabilities of a response of 1 over each record's interval: g⁻¹(η), or p(η)^L for
/// the annualised model.
pub fn fitted_values(
    glm: &GlmFit,
    gd: &GlmData,
    interval: IntervalKind,
    years: &[f64],
) -> Result<Vec<f64>, Error> {
    let mu = glm.fitted(gd.x, gd.offset)?;
    Ok(if interval == IntervalKind::Annualized {
        mu.iter().zip(years).map(|(p, l)| p.powf(*l)).collect()
    } else {
        mu.to_vec()
    })
}

/// The model-based covariance of a fit, or the CR1 cluster-robust one by `clusters`.
///
/// # Errors
/// Fewer than two clusters (exit code 2).
pub fn inference(
    est: &Estimate,
    data: &SurvivalData,
    clusters: Option<&[u32]>,
) -> Result<Inference, Error> {
    let g = &est.glm;
    let Some(codes) = clusters else {
        return Ok(Inference {
            kind: CovarianceKind::Model,
            covariance: g.covariance.clone(),
            std_errors: g.std_errors.clone(),
            z: g.z.clone(),
            p_values: g.p_values.clone(),
            n_clusters: None,
        });
    };
    let gd = glm_data(data, est.design.x.view(), &est.design.names, None);
    let robust = cluster_robust(g, &gd, codes)?;
    let (std_errors, z, p_values) = wald(&g.coefficients, &robust.covariance);
    Ok(Inference {
        kind: CovarianceKind::ClusterRobust,
        covariance: robust.covariance,
        std_errors,
        z,
        p_values,
        n_clusters: Some(robust.n_clusters),
    })
}

/// Σ wᵢ nᵢ d(yᵢ/nᵢ, μᵢ): the binomial deviance at fitted probabilities `mu`.
fn deviance_at(gd: &GlmData, mu: &[f64]) -> f64 {
    (0..mu.len())
        .map(|i| {
            let w = gd.weights.map_or(1.0, |w| w[i]);
            let (wt, y) = match gd.trials {
                Some(t) if t[i] > 0.0 => (w * t[i], gd.y[i] / t[i]),
                Some(_) => (0.0, 0.0),
                None => (w, gd.y[i]),
            };
            if wt == 0.0 {
                0.0
            } else {
                wt * unit_deviance(y, mu[i])
            }
        })
        .sum()
}

fn n_obs(gd: &GlmData) -> usize {
    (0..gd.y.len())
        .filter(|&i| gd.weights.is_none_or(|w| w[i] > 0.0) && gd.trials.is_none_or(|t| t[i] > 0.0))
        .count()
}

/// The intercept-only design with the same rows.
fn ones(n: usize) -> (Array2<f64>, Vec<String>) {
    (Array2::ones((n, 1)), vec![INTERCEPT.to_string()])
}

/// A GlmFit carrying the numbers shared by every estimator.
#[allow(clippy::too_many_arguments)]
fn assemble(
    link: Link,
    design: &Design,
    coefficients: Vec<f64>,
    covariance: Vec<Vec<f64>>,
    deviance: f64,
    null_deviance: f64,
    log_likelihood: f64,
    iterations: usize,
    n: usize,
) -> GlmFit {
    let k = coefficients.len();
    let (std_errors, z, p_values) = wald(&coefficients, &covariance);
    GlmFit {
        link,
        terms: design.names.clone(),
        coefficients,
        covariance,
        std_errors,
        z,
        p_values,
        deviance,
        null_deviance,
        df_residual: n.saturating_sub(k),
        df_null: n - usize::from(design.intercept),
        log_likelihood,
        aic: -2.0 * log_likelihood + 2.0 * k as f64,
        bic: -2.0 * log_likelihood + k as f64 * (n as f64).ln(),
        iterations,
        converged: true,
        n_obs: n,
        warnings: Vec::new(),
    }
}

/// A Firth fit in GlmFit form: the ordinary log-likelihood and deviance at the penalised
/// estimate; the null deviance of the ordinary intercept-only fit.
fn from_firth(gd: &GlmData, design: &Design, f: FirthFit) -> Result<GlmFit, Error> {
    let n = n_obs(gd);
    let mut probe = assemble(
        Link::Logit,
        design,
        f.coefficients.clone(),
        f.covariance.clone(),
        f64::NAN,
        f64::NAN,
        f.log_likelihood,
        f.iterations,
        n,
    );
    let mu = probe.fitted(gd.x, gd.offset)?;
    probe.deviance = deviance_at(gd, &mu.to_vec());
    probe.null_deviance = null_deviance(gd, design, Link::Logit)?;
    Ok(probe)
}

/// Null deviance of the ordinary GLM (intercept-only, or η = offset without an intercept).
fn null_deviance(gd: &GlmData, design: &Design, link: Link) -> Result<f64, Error> {
    let n = gd.y.len();
    if !design.intercept {
        let mu: Vec<f64> = (0..n)
            .map(|i| link.inverse(gd.offset.map_or(0.0, |o| o[i])))
            .collect();
        return Ok(deviance_at(gd, &mu));
    }
    let (x, names) = ones(n);
    let null = GlmData {
        x: x.view(),
        terms: &names,
        ..gd.clone()
    };
    Ok(fit_glm(&null, &GlmOptions { link })?.deviance)
}

/// An annualised fit in GlmFit form; the null deviance is that of the annualised
/// intercept-only model (NaN without an intercept).
fn from_annualized(
    gd: &GlmData,
    design: &Design,
    years: ArrayView1<f64>,
    a: AnnualizedFit,
    control: &FitControl,
) -> Result<GlmFit, Error> {
    let null_deviance = if design.intercept {
        let (x, names) = ones(gd.y.len());
        let null = GlmData {
            x: x.view(),
            terms: &names,
            ..gd.clone()
        };
        fit_annualized_with(&null, years, control)?.deviance
    } else {
        f64::NAN
    };
    let mut g = assemble(
        Link::Logit,
        design,
        a.coefficients,
        a.covariance,
        a.deviance,
        null_deviance,
        a.log_likelihood,
        a.iterations,
        a.n_obs,
    );
    g.aic = a.aic;
    g.bic = a.bic;
    Ok(g)
}
