//! The plot-effect stage of `fit survival --plot-effect` and `fit growth --plot-effect`: the
//! plots of the loaded records, the mixed model fitted from the fixed-effects fit, and the
//! fixed-effects results replaced by the mixed model's so that summaries and model files show
//! them. The models themselves are in [`crate::model::mixed`] (docs/mixed-models.md).

use super::estimate::Estimate;
use super::load::SurvivalData;
use super::survival::SurvivalSpec;
use crate::data::{DataError, Frame, FrameColumn};
use crate::model::file::{IntervalKind, PlotEffectEntry, PlotModeEntry};
use crate::model::mixed::{
    fit_glmm, marginal_probability, BoundaryLrTest, Family, GlmmColumns, GlmmData, GlmmFit,
    GlmmOptions, PlotEffectMethod, PlotMode,
};
use crate::Error;

/// What `--plot-effect` asks of a survival fit.
#[derive(Debug, Clone, PartialEq, Eq)]
pub struct SurvivalPlotEffect {
    /// The plot column (`--plot`, default the `--stand` column).
    pub plot: String,
    /// Quadrature nodes (`--quadrature`, 1 = Laplace).
    pub nodes: usize,
}

/// The plots of the records: a code per record and the plot ids.
#[derive(Debug, Clone, PartialEq)]
pub struct Plots {
    /// 0-based code per record.
    pub codes: Vec<u32>,
    /// Plot id per code: numeric ids in increasing order, text ids in byte order.
    pub labels: Vec<String>,
}

/// The plot-effect part of a summary, ready to render.
#[derive(Debug, Clone, PartialEq)]
pub struct PlotEffectSummary {
    /// The plot column.
    pub column: String,
    /// σ_u.
    pub sd: f64,
    /// Its standard error (None at σ_u = 0).
    pub std_error_sd: Option<f64>,
    /// laplace | agq | reml | ml.
    pub method: PlotEffectMethod,
    /// Quadrature nodes (GLMM only).
    pub nodes: Option<usize>,
    /// The test of σ_u > 0.
    pub lr_test: BoundaryLrTest,
    /// Log-likelihood of the model without the plot effect (the ML one for growth).
    pub log_likelihood_without: f64,
    /// Latent-scale (survival) or plain (growth) intraclass correlation.
    pub intraclass_correlation: f64,
    /// (plot id, conditional mode, conditional SD).
    pub plots: Vec<(String, f64, f64)>,
}

impl PlotEffectSummary {
    /// The `[plot_effect]` table of the model file.
    pub fn model_entry(&self) -> PlotEffectEntry {
        PlotEffectEntry {
            sd: self.sd,
            method: Some(self.method.name().to_string()),
            nodes: self.nodes.map(|k| k as u32),
            column: Some(self.column.clone()),
            plots: self
                .plots
                .iter()
                .map(|(plot, mode, sd)| PlotModeEntry {
                    plot: plot.clone(),
                    mode: *mode,
                    sd: *sd,
                })
                .collect(),
        }
    }

    pub(crate) fn with_labels(modes: &[PlotMode], labels: &[String]) -> Vec<(String, f64, f64)> {
        modes
            .iter()
            .map(|m| (labels[m.code as usize].clone(), m.mode, m.sd))
            .collect()
    }
}

/// The plots of `column` in `frame`.
///
/// # Errors
/// A missing column, or a record without a plot id (naming its line).
pub fn plots(frame: &Frame, column: &str) -> Result<Plots, Error> {
    let empty = |i: usize| -> Error {
        DataError::Cell {
            file: frame.source.clone(),
            line: frame.lines.get(i).copied().unwrap_or(0),
            column: column.to_string(),
            message: "empty; every record needs a plot id for --plot-effect".into(),
        }
        .into()
    };
    match frame.column(column) {
        Some(FrameColumn::Text { levels, codes, .. }) => {
            if let Some(i) = codes.iter().position(|&c| c as usize >= levels.len()) {
                return Err(empty(i));
            }
            Ok(Plots {
                codes: codes.clone(),
                labels: levels.clone(),
            })
        }
        Some(FrameColumn::Numeric(v)) => {
            if let Some(i) = v.iter().position(|x| x.is_nan()) {
                return Err(empty(i));
            }
            let mut ids: Vec<f64> = v.iter().map(|x| x + 0.0).collect();
            ids.sort_by(f64::total_cmp);
            ids.dedup();
            let code = |x: f64| {
                ids.binary_search_by(|p| p.total_cmp(&(x + 0.0)))
                    .unwrap_or(0)
            };
            Ok(Plots {
                codes: v.iter().map(|&x| code(x) as u32).collect(),
                labels: ids.iter().map(|x| format!("{x}")).collect(),
            })
        }
        None => Err(Error::Usage(format!(
            "{}: the plot column `{column}` was not loaded",
            frame.source
        ))),
    }
}

/// The family of a survival specification.
pub fn family_of(spec: &SurvivalSpec) -> Family {
    match spec.interval {
        IntervalKind::Annualized => Family::Annualized,
        _ => Family::Binomial(spec.link),
    }
}

/// Fit the GLMM of `est`'s design on `data` and return `est` with the GLM's estimates,
/// covariance and likelihood replaced by the GLMM's, the fitted values replaced by the
/// marginal probabilities, and the plot-effect summary.
///
/// # Errors
/// Bad plot ids (exit code 2); a GLMM that does not converge (1).
pub fn survival_plot_effect(
    spec: &SurvivalSpec,
    data: &SurvivalData,
    est: &Estimate,
    pe: &SurvivalPlotEffect,
    max_iterations: usize,
) -> Result<(Estimate, PlotEffectSummary), Error> {
    let plots = plots(&data.records.frame, &pe.plot)?;
    let family = family_of(spec);
    let columns = GlmmColumns {
        x: est.design.x.view(),
        y: data.y.as_slice().unwrap_or(&[]),
        trials: data.trials.as_ref().and_then(|t| t.as_slice()),
        weights: data.weights.as_ref().and_then(|w| w.as_slice()),
        offset: data.offset.as_ref().and_then(|o| o.as_slice()),
        years: &data.years,
        plots: &plots.codes,
    };
    let gd = GlmmData::new(family, &columns)?;
    let fit = fit_glmm(
        &gd,
        &est.glm.coefficients,
        &est.glm.covariance,
        &GlmmOptions {
            nodes: pe.nodes,
            max_iterations,
        },
    )?;
    let mut out = est.clone();
    replace_estimates(&mut out, &fit);
    out.fitted = marginal_fitted(&out, &columns, family, fit.sd);
    let summary = PlotEffectSummary {
        column: pe.plot.clone(),
        sd: fit.sd,
        std_error_sd: fit.std_error_sd,
        method: fit.method,
        nodes: Some(fit.nodes),
        lr_test: fit.lr_test,
        log_likelihood_without: fit.glm_log_likelihood,
        intraclass_correlation: fit.intraclass_correlation,
        plots: PlotEffectSummary::with_labels(&fit.plots, &plots.labels),
    };
    Ok((out, summary))
}

/// The GLMM's numbers in the GLM's shape. The residual deviance becomes
/// D_GLM − 2(ℓ_GLMM − ℓ_GLM) = −2(ℓ_GLMM − ℓ_saturated).
fn replace_estimates(est: &mut Estimate, fit: &GlmmFit) {
    let g = &mut est.glm;
    g.deviance -= 2.0 * (fit.log_likelihood - fit.glm_log_likelihood);
    g.coefficients.clone_from(&fit.coefficients);
    g.covariance.clone_from(&fit.covariance);
    g.std_errors.clone_from(&fit.std_errors);
    g.z.clone_from(&fit.z);
    g.p_values.clone_from(&fit.p_values);
    g.log_likelihood = fit.log_likelihood;
    g.aic = fit.aic;
    g.bic = fit.bic;
    g.df_residual = g.df_residual.saturating_sub(1);
    g.iterations = fit.iterations;
    g.converged = true;
}

/// Marginal probability of a response of 1 for every record (over its own interval).
fn marginal_fitted(est: &Estimate, c: &GlmmColumns, family: Family, sd: f64) -> Vec<f64> {
    let beta = &est.glm.coefficients;
    (0..c.y.len())
        .map(|i| {
            let eta = c.offset.map_or(0.0, |o| o[i])
                + c.x.row(i).iter().zip(beta).map(|(a, b)| a * b).sum::<f64>();
            let years = c.years.get(i).copied().unwrap_or(1.0);
            marginal_probability(family, eta, sd, years)
        })
        .collect()
}
