//! The options of `fit growth` beyond the model (`--cluster`, `--plot-effect`, `--method`)
//! and the stage that applies them to a least-squares fit: a CR1 covariance, or the linear
//! mixed model whose estimates replace the least-squares ones (docs/mixed-models.md).

use ndarray::ArrayView2;
use statrs::distribution::{ContinuousCDF, StudentsT};

use super::mixed::{plots, PlotEffectSummary};
use crate::data::Frame;
use crate::model::file::CovarianceKind;
use crate::model::growth::OlsFit;
use crate::model::mixed::{fit_lmm, LmmMethod};
use crate::Error;

/// What `--plot-effect` asks of a growth fit.
#[derive(Debug, Clone, PartialEq, Eq)]
pub struct GrowthPlotEffect {
    /// The plot column (`--plot`, default the `--stand` column).
    pub plot: String,
    /// REML (default) or ML (`--method`).
    pub method: LmmMethod,
}

/// Options of `fit growth` beyond the specification.
#[derive(Debug, Clone, Default, PartialEq, Eq)]
pub struct GrowthOptions {
    /// Cluster-robust covariance by this column (`--cluster`).
    pub cluster: Option<String>,
    /// A random plot intercept (`--plot-effect`).
    pub plot_effect: Option<GrowthPlotEffect>,
}

impl GrowthOptions {
    /// The columns these options read, with why.
    pub fn columns(&self) -> Vec<(String, &'static str)> {
        let mut out = Vec::new();
        if let Some(c) = &self.cluster {
            out.push((c.clone(), "--cluster"));
        }
        if let Some(p) = &self.plot_effect {
            out.push((
                p.plot.clone(),
                "--plot-effect (the plot column; name it with --plot COL)",
            ));
        }
        out
    }
}

/// A least-squares fit after the options: its covariance kind and clusters, and the plot
/// effect when the mixed model replaced it.
#[derive(Debug, Clone)]
pub struct Adjusted {
    /// The fit whose numbers the summary and model file show.
    pub ols: OlsFit,
    /// Model-based or cluster-robust.
    pub kind: CovarianceKind,
    /// Clusters of a cluster-robust covariance.
    pub n_clusters: Option<usize>,
    /// The plot effect.
    pub plot_effect: Option<PlotEffectSummary>,
}

/// Apply `opts` to the least-squares fit `ols` of `y` on `x`, the records in `frame`.
///
/// # Errors
/// Bad plot or cluster ids, fewer than two clusters, a singular design (exit code 2); an LMM
/// whose residual variance vanishes (1).
pub fn adjust(
    ols: OlsFit,
    x: ArrayView2<f64>,
    y: &[f64],
    frame: &Frame,
    opts: &GrowthOptions,
) -> Result<Adjusted, Error> {
    if let Some(c) = &opts.cluster {
        let codes = plots(frame, c)?.codes;
        let fitted = x.dot(&ndarray::ArrayView1::from(&ols.coefficients));
        let residuals: Vec<f64> = y.iter().zip(fitted.iter()).map(|(a, b)| a - b).collect();
        let s2 = ols.residual_sd * ols.residual_sd;
        let bread: Vec<Vec<f64>> = ols
            .covariance
            .iter()
            .map(|r| r.iter().map(|v| v / s2).collect())
            .collect();
        let (covariance, n_clusters) =
            super::cluster::ols_cluster_covariance(x, &residuals, &bread, &codes)?;
        let mut out = ols;
        out.std_errors = (0..covariance.len())
            .map(|j| covariance[j][j].sqrt())
            .collect();
        out.t_values = out
            .coefficients
            .iter()
            .zip(&out.std_errors)
            .map(|(b, s)| b / s)
            .collect();
        let t = StudentsT::new(0.0, 1.0, out.df_residual as f64)
            .map_err(|e| Error::Usage(format!("t distribution: {e}")))?;
        out.p_values = out.t_values.iter().map(|v| 2.0 * t.sf(v.abs())).collect();
        out.covariance = covariance;
        return Ok(Adjusted {
            ols: out,
            kind: CovarianceKind::ClusterRobust,
            n_clusters: Some(n_clusters),
            plot_effect: None,
        });
    }
    let Some(pe) = &opts.plot_effect else {
        return Ok(Adjusted {
            ols,
            kind: CovarianceKind::Model,
            n_clusters: None,
            plot_effect: None,
        });
    };
    let groups = plots(frame, &pe.plot)?;
    let fit = fit_lmm(x, y, &groups.codes, pe.method)?;
    let mut out = ols;
    out.coefficients.clone_from(&fit.coefficients);
    out.std_errors.clone_from(&fit.std_errors);
    out.t_values.clone_from(&fit.z);
    out.p_values.clone_from(&fit.p_values);
    out.covariance.clone_from(&fit.covariance);
    out.residual_sd = fit.residual_sd;
    out.r_squared = f64::NAN;
    out.adj_r_squared = f64::NAN;
    out.log_likelihood = fit.log_likelihood;
    out.aic = fit.aic;
    out.bic = fit.bic;
    let summary = PlotEffectSummary {
        column: pe.plot.clone(),
        sd: fit.sd,
        std_error_sd: fit.std_error_sd,
        method: fit.method,
        nodes: None,
        lr_test: fit.lr_test,
        log_likelihood_without: fit.ml_log_likelihood_without,
        intraclass_correlation: fit.intraclass_correlation,
        plots: PlotEffectSummary::with_labels(&fit.plots, &groups.labels),
    };
    Ok(Adjusted {
        ols: out,
        kind: CovarianceKind::Model,
        n_clusters: None,
        plot_effect: Some(summary),
    })
}
