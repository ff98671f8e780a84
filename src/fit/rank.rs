//! `stemcast rank`: fit several candidate predictor sets on the same records and compare them
//! by AIC, Akaike weights, BIC, AUC, cross-validated log-loss (folds grouped by stand) and
//! likelihood-ratio tests between nested candidates.

use std::collections::BTreeSet;

use rayon::prelude::*;

use super::estimate::{estimate, glm_data, Estimate, Estimator};
use super::folds::{base_response, cv_log_loss, stand_folds};
use super::load::{load_survival, LoadOptions, SurvivalData};
use super::mixed::SurvivalPlotEffect;
use super::survival::SurvivalSpec;
use super::term_needs;
use crate::model::diagnostics::{lr_test, require_unit_binary, roc_auc, LrTest};
use crate::model::glm::FitControl;
use crate::Error;

/// What `rank` compares.
#[derive(Debug, Clone)]
pub struct RankSpec {
    /// The survival model (its `predictors` is ignored).
    pub survival: SurvivalSpec,
    /// The candidate predictor lists.
    pub candidates: Vec<String>,
    /// Number of cross-validation folds.
    pub folds: usize,
    /// Seed of the shuffle of stands into folds.
    pub seed: u64,
    /// Iteration limit of every fit (`--max-iterations`).
    pub control: FitControl,
    /// Also fit every candidate with a random plot intercept (`--plot-effect`).
    pub plot_effect: Option<SurvivalPlotEffect>,
}

/// One candidate's fit statistics.
#[derive(Debug, Clone, PartialEq)]
pub struct CandidateRow {
    /// The predictor list as given.
    pub predictors: String,
    /// The expanded design columns.
    pub terms: Vec<String>,
    /// Number of coefficients.
    pub k: usize,
    /// Maximised log-likelihood.
    pub log_likelihood: f64,
    /// −2ℓ + 2k.
    pub aic: f64,
    /// AIC − the smallest AIC.
    pub delta_aic: f64,
    /// exp(−Δ/2) / Σ exp(−Δⱼ/2).
    pub akaike_weight: f64,
    /// −2ℓ + k ln n.
    pub bic: f64,
    /// ROC AUC of the full-data fit (None for weighted or successes/trials data).
    pub auc: Option<f64>,
    /// Cross-validated log-loss per record (per trial for counts).
    pub cv_log_loss: f64,
}

/// A likelihood-ratio test between two nested candidates.
#[derive(Debug, Clone, PartialEq)]
pub struct NestedTest {
    /// The smaller candidate's predictor list.
    pub reduced: String,
    /// The larger candidate's predictor list.
    pub full: String,
    /// The test.
    pub test: LrTest,
}

/// The comparison, candidates sorted by AIC.
#[derive(Debug, Clone, PartialEq)]
pub struct Ranking {
    /// Records every candidate was fitted on.
    pub records: usize,
    /// Stands among them.
    pub stands: usize,
    /// Folds of the cross-validation.
    pub folds: usize,
    /// The seed of the fold assignment.
    pub seed: u64,
    /// One row per candidate, smallest AIC first.
    pub rows: Vec<CandidateRow>,
    /// Tests of every nested pair (one's columns a strict subset of the other's).
    pub nested: Vec<NestedTest>,
    /// Things the user should know about the data.
    pub warnings: Vec<String>,
    /// What data screening found.
    pub screening: super::source::Screening,
}

/// Akaike weights of a set of AIC values.
///
/// # Formula
/// Δᵢ = AICᵢ − min AIC, wᵢ = exp(−Δᵢ/2) / Σⱼ exp(−Δⱼ/2) (Burnham & Anderson 2002, §2.9).
pub fn akaike_weights(aic: &[f64]) -> Vec<f64> {
    let min = aic.iter().copied().fold(f64::INFINITY, f64::min);
    let raw: Vec<f64> = aic.iter().map(|a| (-(a - min) / 2.0).exp()).collect();
    let total: f64 = raw.iter().sum();
    raw.iter().map(|r| r / total).collect()
}

/// Check the candidates before anything is read: each parses and names only columns the file
/// has (or derived covariates).
fn check_candidates(spec: &RankSpec) -> Result<(), Error> {
    if spec.candidates.is_empty() {
        return Err(Error::Usage(
            "--candidates needs at least one predictor list".into(),
        ));
    }
    let s = &spec.survival;
    super::candidates::check_references(&s.data, &spec.candidates)?;
    for (i, c) in spec.candidates.iter().enumerate() {
        let needs = term_needs(c, &s.data)
            .map_err(|e| Error::Usage(format!("candidate {} \"{c}\": {e}", i + 1)))?;
        for r in &needs.required {
            if !super::source::has_column(&s.data, &r.column) {
                return Err(Error::Usage(format!(
                    "candidate {} \"{c}\": {} needs a column `{}`, which {} does not have",
                    i + 1,
                    r.why,
                    r.column,
                    s.data.path.display()
                )));
            }
        }
    }
    Ok(())
}

/// Fit and compare the candidates of `spec`.
///
/// # Errors
/// Bad candidates, options or data (exit code 2); a fit or fold fit that does not converge (1).
pub fn rank(spec: &RankSpec) -> Result<Ranking, Error> {
    check_candidates(spec)?;
    if spec.folds < 2 {
        return Err(Error::Usage(format!(
            "--folds {}: cross-validation needs at least 2 folds",
            spec.folds
        )));
    }
    let s = &spec.survival;
    let data = load_survival(
        s,
        &LoadOptions {
            predictor_sets: spec.candidates.clone(),
            cluster: None,
            stands: true,
            stands_why: "cross-validation folds grouped by plot (--plot or --stand COL)".into(),
            plot: spec.plot_effect.as_ref().map(|p| p.plot.clone()),
        },
    )?;
    let stands = data.stands.as_deref().unwrap_or(&[]);
    let source = s.data.path.display().to_string();
    let (folds, n_stands) = stand_folds(stands, spec.folds, spec.seed, &source)?;
    rank_loaded(spec, &data, &folds, n_stands)
}

fn rank_loaded(
    spec: &RankSpec,
    data: &SurvivalData,
    folds: &[u32],
    n_stands: usize,
) -> Result<Ranking, Error> {
    let s = &spec.survival;
    let fits: Vec<Estimate> = spec
        .candidates
        .par_iter()
        .map(|c| {
            let sc = SurvivalSpec {
                data: super::candidates::for_candidate(&s.data, c),
                ..s.clone()
            };
            estimate(&sc, data, c, Estimator::MaximumLikelihood, &spec.control)
        })
        .collect::<Result<_, _>>()?;
    let first = &fits[0];
    let response = base_response(&glm_data(
        data,
        first.design.x.view(),
        &first.design.names,
        None,
    ))?;
    let unit = require_unit_binary(
        data.trials.is_some(),
        data.weights.as_ref().and_then(|w| w.as_slice()),
    );
    let y = data.y.as_slice().unwrap_or(&[]);
    let judged: Vec<(Option<f64>, f64)> = fits
        .par_iter()
        .map(|f| {
            let (auc, loss) = rayon::join(
                || {
                    unit.clone()
                        .and_then(|_| roc_auc(y, &f.fitted))
                        .ok()
                        .map(|a| a.auc)
                },
                || {
                    cv_log_loss(
                        data,
                        f,
                        s.interval,
                        &response,
                        folds,
                        spec.folds,
                        &spec.control,
                    )
                },
            );
            Ok::<_, Error>((auc, loss?))
        })
        .collect::<Result<_, _>>()?;
    let row =
        |predictors: String, f: &Estimate, k: usize, auc: Option<f64>, loss: f64| CandidateRow {
            predictors,
            terms: f.glm.terms.clone(),
            k,
            log_likelihood: f.glm.log_likelihood,
            aic: f.glm.aic,
            delta_aic: 0.0,
            akaike_weight: 0.0,
            bic: f.glm.bic,
            auc,
            cv_log_loss: loss,
        };
    let mut rows: Vec<CandidateRow> = fits
        .iter()
        .zip(&spec.candidates)
        .zip(&judged)
        .map(|((f, c), &(auc, loss))| row(c.clone(), f, f.glm.coefficients.len(), auc, loss))
        .collect();
    let mut nested = Vec::new();
    if let Some(pe) = &spec.plot_effect {
        let limit = 4 * spec.control.max_iterations.max(50);
        let mixed = super::rank_mixed::mixed_candidates(
            s,
            pe,
            data,
            &fits,
            &response,
            (folds, spec.folds),
            limit,
        )?;
        for (m, c) in mixed.iter().zip(&spec.candidates) {
            let auc = unit
                .clone()
                .and_then(|_| roc_auc(y, &m.estimate.fitted))
                .ok()
                .map(|a| a.auc);
            let label = format!("{c} + plot effect");
            let k = m.estimate.glm.coefficients.len() + 1;
            rows.push(row(label.clone(), &m.estimate, k, auc, m.cv_log_loss));
            let t = crate::model::mixed::boundary_lr_test(
                m.estimate.glm.log_likelihood,
                m.log_likelihood_without,
            );
            nested.push(NestedTest {
                reduced: c.clone(),
                full: label,
                test: LrTest {
                    statistic: t.statistic,
                    df: 1,
                    p_value: t.p_value,
                },
            });
        }
    }
    let aic: Vec<f64> = rows.iter().map(|r| r.aic).collect();
    let weights = akaike_weights(&aic);
    let min = aic.iter().copied().fold(f64::INFINITY, f64::min);
    for (r, w) in rows.iter_mut().zip(weights) {
        r.delta_aic = r.aic - min;
        r.akaike_weight = w;
    }
    for (i, a) in fits.iter().enumerate() {
        for (j, b) in fits.iter().enumerate() {
            let sa: BTreeSet<&String> = a.glm.terms.iter().collect();
            let sb: BTreeSet<&String> = b.glm.terms.iter().collect();
            if i != j && sa.len() < sb.len() && sa.is_subset(&sb) {
                if let Ok(test) = lr_test(&a.glm, &b.glm) {
                    nested.push(NestedTest {
                        reduced: spec.candidates[i].clone(),
                        full: spec.candidates[j].clone(),
                        test,
                    });
                }
            }
        }
    }
    rows.sort_by(|a, b| a.aic.total_cmp(&b.aic));
    Ok(Ranking {
        records: first.glm.n_obs,
        stands: n_stands,
        folds: spec.folds,
        seed: spec.seed,
        rows,
        nested,
        warnings: data.warnings.clone(),
        screening: data.screening.clone(),
    })
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn akaike_weights_follow_exp_minus_half_delta() {
        // Derived analytically: Δ = (0, 2, 4) gives weights ∝ (1, e⁻¹, e⁻²).
        let w = akaike_weights(&[100.0, 102.0, 104.0]);
        let total = 1.0 + (-1f64).exp() + (-2f64).exp();
        for (got, want) in w.iter().zip([1.0, (-1f64).exp(), (-2f64).exp()]) {
            assert!((got - want / total).abs() < 1e-15);
        }
        assert!((w.iter().sum::<f64>() - 1.0).abs() < 1e-15);
        // Large AIC values do not underflow: only differences matter.
        let big = akaike_weights(&[1e9, 1e9 + 2.0]);
        assert!((big[0] - 1.0 / (1.0 + (-1f64).exp())).abs() < 1e-12);
    }
}
