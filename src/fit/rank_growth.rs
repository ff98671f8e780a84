//! `stemcast rank --growth`: fit several candidate predictor sets of a growth model on the
//! same records and compare them by AIC, Akaike weights, BIC, R², the cross-validated
//! root-mean-square error of the response (folds grouped by plot), and F-tests between nested
//! candidates (docs/histories.md, "Ranking growth models").

use std::collections::BTreeSet;

use ndarray::{Array1, Array2, Axis};
use rayon::prelude::*;
use statrs::distribution::{ContinuousCDF, FisherSnedecor};

use super::candidates::{check_references, for_candidate};
use super::folds::stand_folds;
use super::growth::{fit_growth_loaded, load_growth, GrowthData, GrowthSpec};
use super::rank::akaike_weights;
use super::term_needs;
use crate::model::design::{build_design, Design, DesignOptions};
use crate::model::file::GrowthResponse;
use crate::model::growth::{fit_ols, OlsFit};
use crate::Error;

/// What `rank --growth` compares.
#[derive(Debug, Clone)]
pub struct GrowthRankSpec {
    /// The growth model (its `predictors` is ignored).
    pub growth: GrowthSpec,
    /// The candidate predictor lists.
    pub candidates: Vec<String>,
    /// Number of cross-validation folds.
    pub folds: usize,
    /// Seed of the shuffle of plots into folds.
    pub seed: u64,
}

/// One candidate's fit statistics.
#[derive(Debug, Clone, PartialEq)]
pub struct GrowthCandidate {
    /// The predictor list as given.
    pub predictors: String,
    /// The expanded design columns.
    pub terms: Vec<String>,
    /// Number of coefficients (σ not included).
    pub k: usize,
    /// Gaussian log-likelihood at the MLE of σ.
    pub log_likelihood: f64,
    /// AIC counting σ as a parameter.
    pub aic: f64,
    /// AIC − the smallest AIC.
    pub delta_aic: f64,
    /// Akaike weight.
    pub akaike_weight: f64,
    /// BIC counting σ as a parameter.
    pub bic: f64,
    /// R².
    pub r_squared: f64,
    /// Adjusted R².
    pub adj_r_squared: f64,
    /// Residual standard error.
    pub residual_sd: f64,
    /// Cross-validated root-mean-square error of the response.
    pub cv_rmse: f64,
}

/// An F-test of a candidate nested in another.
#[derive(Debug, Clone, PartialEq)]
pub struct NestedF {
    /// The smaller candidate.
    pub reduced: String,
    /// The larger candidate.
    pub full: String,
    /// F statistic.
    pub f: f64,
    /// Numerator degrees of freedom (extra coefficients).
    pub df1: usize,
    /// Denominator degrees of freedom (n − p of the larger).
    pub df2: usize,
    /// Upper-tail p-value.
    pub p_value: f64,
}

/// The comparison, candidates sorted by AIC.
#[derive(Debug, Clone, PartialEq)]
pub struct GrowthRanking {
    /// The response every candidate models.
    pub response: GrowthResponse,
    /// Records every candidate was fitted on.
    pub records: usize,
    /// Plots among them.
    pub plots: usize,
    /// Folds.
    pub folds: usize,
    /// Seed of the fold assignment.
    pub seed: u64,
    /// One row per candidate, smallest AIC first.
    pub rows: Vec<GrowthCandidate>,
    /// F-tests of every nested pair.
    pub nested: Vec<NestedF>,
    /// Things the user should know about the data.
    pub warnings: Vec<String>,
    /// What data screening found.
    pub screening: super::source::Screening,
}

/// The F-test of `reduced` nested in `full` (same records).
///
/// # Formula
/// F = ((RSS_r − RSS_f) / (p_f − p_r)) / (RSS_f / (n − p_f)), referred to F(p_f − p_r, n − p_f)
/// (R `anova(reduced, full)`).
pub fn nested_f(reduced: &OlsFit, full: &OlsFit) -> Option<(f64, usize, usize, f64)> {
    let df1 = full
        .coefficients
        .len()
        .checked_sub(reduced.coefficients.len())?;
    let df2 = full.df_residual;
    if df1 == 0 || df2 == 0 {
        return None;
    }
    let f = ((reduced.rss - full.rss) / df1 as f64) / (full.rss / df2 as f64);
    let dist = FisherSnedecor::new(df1 as f64, df2 as f64).ok()?;
    Some((f, df1, df2, dist.sf(f.max(0.0))))
}

/// Fit and compare the growth candidates of `spec`.
///
/// # Errors
/// Bad candidates, options or data (exit code 2), including a fold whose training records
/// cannot estimate a candidate (a level seen only in that fold).
pub fn rank_growth(spec: &GrowthRankSpec) -> Result<GrowthRanking, Error> {
    if spec.candidates.is_empty() {
        return Err(Error::Usage(
            "--candidates needs at least one predictor list".into(),
        ));
    }
    let g = &spec.growth;
    check_references(&g.data, &spec.candidates)?;
    for (i, c) in spec.candidates.iter().enumerate() {
        term_needs(c, &g.data)
            .map_err(|e| Error::Usage(format!("candidate {} \"{c}\": {e}", i + 1)))?;
    }
    let data = load_growth(
        g,
        &spec.candidates,
        Some("cross-validation folds grouped by plot (--plot or --stand COL)"),
        &[],
    )?;
    let plots = data.plots.as_deref().unwrap_or(&[]);
    let source = g.data.path.display().to_string();
    let (folds, n_plots) = stand_folds(plots, spec.folds, spec.seed, &source)?;
    let fitted: Vec<(OlsFit, Design)> = spec
        .candidates
        .par_iter()
        .map(|c| {
            let cs = GrowthSpec {
                data: for_candidate(&g.data, c),
                ..g.clone()
            };
            let fit = fit_growth_loaded(&cs, &data, c, &Default::default())?;
            Ok((fit.ols, design(&cs, &data, c)?))
        })
        .collect::<Result<_, Error>>()?;
    let cv: Vec<f64> = fitted
        .par_iter()
        .map(|(_, d)| cv_rmse(d, &data.y, &folds, spec.folds))
        .collect::<Result<_, _>>()?;
    let aic: Vec<f64> = fitted.iter().map(|(f, _)| f.aic).collect();
    let weights = akaike_weights(&aic);
    let min = aic.iter().copied().fold(f64::INFINITY, f64::min);
    let mut rows: Vec<GrowthCandidate> = fitted
        .iter()
        .zip(&spec.candidates)
        .zip(cv.iter().zip(&weights))
        .map(|(((f, _), c), (&cv_rmse, &w))| GrowthCandidate {
            predictors: c.clone(),
            terms: f.names.clone(),
            k: f.coefficients.len(),
            log_likelihood: f.log_likelihood,
            aic: f.aic,
            delta_aic: f.aic - min,
            akaike_weight: w,
            bic: f.bic,
            r_squared: f.r_squared,
            adj_r_squared: f.adj_r_squared,
            residual_sd: f.residual_sd,
            cv_rmse,
        })
        .collect();
    let mut nested = Vec::new();
    for (i, (a, _)) in fitted.iter().enumerate() {
        for (j, (b, _)) in fitted.iter().enumerate() {
            let sa: BTreeSet<&String> = a.names.iter().collect();
            let sb: BTreeSet<&String> = b.names.iter().collect();
            if i != j && sa.len() < sb.len() && sa.is_subset(&sb) {
                if let Some((f, df1, df2, p_value)) = nested_f(a, b) {
                    nested.push(NestedF {
                        reduced: spec.candidates[i].clone(),
                        full: spec.candidates[j].clone(),
                        f,
                        df1,
                        df2,
                        p_value,
                    });
                }
            }
        }
    }
    rows.sort_by(|a, b| a.aic.total_cmp(&b.aic));
    Ok(GrowthRanking {
        response: data.response,
        records: data.y.len(),
        plots: n_plots,
        folds: spec.folds,
        seed: spec.seed,
        rows,
        nested,
        warnings: data.warnings.clone(),
        screening: data.screening.clone(),
    })
}

fn design(spec: &GrowthSpec, data: &GrowthData, predictors: &str) -> Result<Design, Error> {
    let needs = term_needs(predictors, &spec.data)?;
    Ok(build_design(
        &needs.terms,
        &data.records.frame,
        &DesignOptions {
            intercept: spec.data.intercept,
            references: spec.data.references.clone(),
            declared_categorical: spec.data.categorical.clone(),
        },
    )?)
}

/// √(Σ held-out squared errors / n), each fold predicted from a fit on the other folds.
fn cv_rmse(d: &Design, y: &[f64], folds: &[u32], k: usize) -> Result<f64, Error> {
    let per_fold: Vec<f64> = (0..k as u32)
        .into_par_iter()
        .map(|fold| {
            let train: Vec<usize> = (0..y.len()).filter(|&i| folds[i] != fold).collect();
            let x: Array2<f64> = d.x.select(Axis(0), &train);
            let yt: Array1<f64> = train.iter().map(|&i| y[i]).collect();
            let fit = fit_ols(x.view(), yt.view(), &d.names, d.intercept).map_err(|e| {
                Error::Usage(format!(
                    "cross-validation fold {} of {k}, terms {}: {e}",
                    fold + 1,
                    d.names.join(", ")
                ))
            })?;
            let beta = Array1::from(fit.coefficients);
            Ok((0..y.len())
                .filter(|&i| folds[i] == fold)
                .map(|i| {
                    let e = y[i] - d.x.row(i).dot(&beta);
                    e * e
                })
                .sum())
        })
        .collect::<Result<_, Error>>()?;
    // Summed in fold order, so the result does not depend on the thread count.
    let total: f64 = per_fold.iter().sum();
    Ok((total / y.len() as f64).sqrt())
}
