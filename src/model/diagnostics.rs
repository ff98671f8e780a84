//! Goodness-of-fit diagnostics of a binomial fit: ROC AUC, the Hosmer–Lemeshow test,
//! likelihood-ratio tests, and a calibration table by diameter class.
//!
//! AUC and Hosmer–Lemeshow are defined here for one 0/1 outcome per record with unit weight;
//! for successes/trials or weighted data they return [`Unavailable`] with the reason.

use serde::Serialize;
use statrs::distribution::{ChiSquared, ContinuousCDF};

use super::glm::GlmFit;

/// Hosmer–Lemeshow: requested number of groups, and the degrees of freedom g − 2 (fixed).
const HL_GROUPS: u64 = 10;
const HL_DF: usize = 8;

/// A diagnostic that is not defined for the data, with the reason as a sentence.
#[derive(Debug, Clone, PartialEq, Eq, thiserror::Error)]
#[error("{0}")]
pub struct Unavailable(pub String);

/// The area under the ROC curve.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct Auc {
    /// AUC = twice_u / (2 · n_events · n_nonevents).
    pub auc: f64,
    /// 2 × (pairs with the event scored higher) + (tied pairs), exact.
    pub twice_u: u128,
    /// Records with outcome 1.
    pub n_events: u64,
    /// Records with outcome 0.
    pub n_nonevents: u64,
}

/// Upper-tail χ² probability.
fn chi2_upper(statistic: f64, df: usize) -> f64 {
    match ChiSquared::new(df as f64) {
        Ok(d) if statistic.is_finite() => d.sf(statistic.max(0.0)),
        _ => f64::NAN,
    }
}

fn check_binary(y: &[f64], fitted: &[f64]) -> Result<(), Unavailable> {
    if y.len() != fitted.len() {
        return Err(Unavailable(format!(
            "{} outcomes but {} fitted values",
            y.len(),
            fitted.len()
        )));
    }
    if y.iter().any(|&v| v != 0.0 && v != 1.0) {
        return Err(Unavailable(
            "defined only for one 0/1 outcome per record (not for successes/trials data)".into(),
        ));
    }
    if fitted.iter().any(|v| !v.is_finite()) {
        return Err(Unavailable("a fitted value is not finite".into()));
    }
    Ok(())
}

/// Refuses data for which AUC and Hosmer–Lemeshow are not defined: successes/trials, or prior
/// weights other than 1.
pub fn require_unit_binary(trials: bool, weights: Option<&[f64]>) -> Result<(), Unavailable> {
    if trials {
        return Err(Unavailable(
            "not defined for successes/trials data (one 0/1 outcome per record is needed)".into(),
        ));
    }
    if weights.is_some_and(|w| w.iter().any(|&v| v != 1.0)) {
        return Err(Unavailable("not defined for weighted records".into()));
    }
    Ok(())
}

/// ROC AUC by the Mann–Whitney statistic, ties counted ½, in O(n log n).
///
/// # Formula
/// AUC = (2·N₍>₎ + N₍=₎) / (2 n₁ n₀), with N₍>₎ the pairs (event i, non-event j) with pᵢ > pⱼ
/// and N₍=₎ the pairs with pᵢ = pⱼ.
pub fn roc_auc(y: &[f64], fitted: &[f64]) -> Result<Auc, Unavailable> {
    check_binary(y, fitted)?;
    // Sort (score, outcome) pairs themselves rather than indices: the run scan below then
    // reads memory in order, which matters at a million records.
    let mut pairs: Vec<(f64, bool)> = fitted.iter().zip(y).map(|(&p, &o)| (p, o == 1.0)).collect();
    pairs.sort_unstable_by(|a, b| a.0.total_cmp(&b.0));
    let (mut twice_u, mut below0, mut n1) = (0u128, 0u64, 0u64);
    let mut start = 0;
    while start < pairs.len() {
        let value = pairs[start].0;
        let run = pairs[start..].iter().take_while(|p| p.0 == value).count();
        let events = pairs[start..start + run].iter().filter(|p| p.1).count() as u64;
        let nonevents = run as u64 - events;
        twice_u += 2 * u128::from(events) * u128::from(below0)
            + u128::from(events) * u128::from(nonevents);
        below0 += nonevents;
        n1 += events;
        start += run;
    }
    if n1 == 0 || below0 == 0 {
        return Err(Unavailable("needs records with both outcomes".into()));
    }
    Ok(Auc {
        auc: twice_u as f64 / (2.0 * n1 as f64 * below0 as f64),
        twice_u,
        n_events: n1,
        n_nonevents: below0,
    })
}

/// The Hosmer–Lemeshow test and its groups.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct HosmerLemeshow {
    /// Σ over groups and both outcome columns of (O − E)² / E.
    pub statistic: f64,
    /// Degrees of freedom, 10 − 2 = 8 whatever the number of groups left.
    pub df: usize,
    /// Upper-tail χ²(8) probability.
    pub p_value: f64,
    /// Non-empty groups.
    pub n_groups: usize,
    /// Records per group.
    pub group_sizes: Vec<usize>,
    /// Observed events per group.
    pub observed_events: Vec<u64>,
    /// Σ fitted per group.
    pub expected_events: Vec<f64>,
    /// Group boundaries after dropping repeated values.
    pub breaks: Vec<f64>,
}

/// Type-7 quantile of sorted values at k/10, with the position (n − 1)k/10 in integers.
fn decile(sorted: &[f64], k: u64) -> f64 {
    let pos = (sorted.len() as u64 - 1) * k;
    let (lo, frac) = ((pos / HL_GROUPS) as usize, pos % HL_GROUPS);
    if frac == 0 || sorted[lo] == sorted[lo + 1] {
        return sorted[lo];
    }
    let h = frac as f64 / HL_GROUPS as f64;
    (1.0 - h) * sorted[lo] + h * sorted[lo + 1]
}

/// The Hosmer–Lemeshow test with 10 groups, as R's `ResourceSelection::hoslem.test`.
///
/// # Formula
/// Breaks b₀…b₁₀ are type-7 quantiles of the fitted values at k/10 (repeated breaks dropped);
/// groups are [b₀, b₁], (b₁, b₂], …; with nⱼ records, Oⱼ events and Eⱼ = Σ fitted per group,
/// C = Σⱼ [(Oⱼ − Eⱼ)²/Eⱼ + (Oⱼ − Eⱼ)²/(nⱼ − Eⱼ)], referred to χ²(8). Empty groups (possible
/// when two interpolated breaks fall between neighbouring values) are left out.
pub fn hosmer_lemeshow(y: &[f64], fitted: &[f64]) -> Result<HosmerLemeshow, Unavailable> {
    check_binary(y, fitted)?;
    if y.len() < 2 {
        return Err(Unavailable("needs at least two records".into()));
    }
    let mut sorted = fitted.to_vec();
    sorted.sort_by(f64::total_cmp);
    let mut breaks: Vec<f64> = (0..=HL_GROUPS).map(|k| decile(&sorted, k)).collect();
    breaks.dedup();
    let m = breaks.len().saturating_sub(1).max(1);
    let mut sizes = vec![0usize; m];
    let mut observed = vec![0u64; m];
    let mut expected = vec![0.0; m];
    for (&yi, &p) in y.iter().zip(fitted) {
        let g = breaks[1..].partition_point(|&b| b < p).min(m - 1);
        sizes[g] += 1;
        observed[g] += u64::from(yi == 1.0);
        expected[g] += p;
    }
    let mut statistic = 0.0;
    let mut kept = (Vec::new(), Vec::new(), Vec::new());
    for g in (0..m).filter(|&g| sizes[g] > 0) {
        let (n, o, e) = (sizes[g] as f64, observed[g] as f64, expected[g]);
        statistic += (o - e).powi(2) / e + (o - e).powi(2) / (n - e);
        kept.0.push(sizes[g]);
        kept.1.push(observed[g]);
        kept.2.push(e);
    }
    Ok(HosmerLemeshow {
        statistic,
        df: HL_DF,
        p_value: chi2_upper(statistic, HL_DF),
        n_groups: kept.0.len(),
        group_sizes: kept.0,
        observed_events: kept.1,
        expected_events: kept.2,
        breaks,
    })
}

/// A likelihood-ratio test.
#[derive(Debug, Clone, Copy, PartialEq, Serialize)]
pub struct LrTest {
    /// Deviance difference 2(ℓ_full − ℓ_reduced).
    pub statistic: f64,
    /// Difference in the number of coefficients.
    pub df: usize,
    /// Upper-tail χ²(df) probability.
    pub p_value: f64,
}

/// The likelihood-ratio test of a fit against its intercept-only (null) model.
///
/// # Formula
/// G = null deviance − residual deviance on df_null − df_residual degrees of freedom.
pub fn lr_test_vs_null(fit: &GlmFit) -> LrTest {
    let statistic = fit.null_deviance - fit.deviance;
    let df = fit.df_null.saturating_sub(fit.df_residual);
    LrTest {
        statistic,
        df,
        p_value: chi2_upper(statistic, df),
    }
}

/// The likelihood-ratio test of a reduced model nested in a full one (same records).
///
/// # Formula
/// G = D_reduced − D_full on k_full − k_reduced degrees of freedom.
pub fn lr_test(reduced: &GlmFit, full: &GlmFit) -> Result<LrTest, Unavailable> {
    let (kr, kf) = (reduced.coefficients.len(), full.coefficients.len());
    if kf <= kr || reduced.n_obs != full.n_obs {
        return Err(Unavailable(format!(
            "the reduced model ({kr} coefficients, {} records) is not nested in the full one ({kf} coefficients, {} records)",
            reduced.n_obs, full.n_obs
        )));
    }
    let statistic = reduced.deviance - full.deviance;
    Ok(LrTest {
        statistic,
        df: kf - kr,
        p_value: chi2_upper(statistic, kf - kr),
    })
}

/// One row of a calibration table.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct CalibrationClass {
    /// Lower bound of the class (included).
    pub lower: f64,
    /// Upper bound (excluded); `None` for the open last class.
    pub upper: Option<f64>,
    /// Records in the class.
    pub records: usize,
    /// Records with outcome 1.
    pub observed_events: f64,
    /// Observed proportion of outcome 1 (NaN for an empty class).
    pub observed: f64,
    /// Mean fitted probability (NaN for an empty class).
    pub mean_predicted: f64,
}

/// Observed and mean predicted probability by class of a covariate (diameter), with classes
/// [b₀, b₁), [b₁, b₂), …, [bₘ, ∞) from increasing `breaks`. Records below b₀ are left out.
pub fn calibration_by_class(
    value: &[f64],
    y: &[f64],
    fitted: &[f64],
    breaks: &[f64],
) -> Result<Vec<CalibrationClass>, Unavailable> {
    if value.len() != y.len() || y.len() != fitted.len() {
        return Err(Unavailable(
            "covariate, outcome and fitted lengths differ".into(),
        ));
    }
    let increasing = breaks.windows(2).all(|w| w[0] < w[1]);
    if breaks.is_empty() || !increasing || breaks.iter().any(|b| b.is_nan()) {
        return Err(Unavailable("class breaks must be increasing".into()));
    }
    let mut rows: Vec<CalibrationClass> = breaks
        .iter()
        .enumerate()
        .map(|(i, &lower)| CalibrationClass {
            lower,
            upper: breaks.get(i + 1).copied(),
            records: 0,
            observed_events: 0.0,
            observed: 0.0,
            mean_predicted: 0.0,
        })
        .collect();
    for ((&v, &yi), &p) in value.iter().zip(y).zip(fitted) {
        if v.is_nan() || v < breaks[0] {
            continue;
        }
        let class = &mut rows[breaks.partition_point(|&b| b <= v) - 1];
        class.records += 1;
        class.observed_events += yi;
        class.mean_predicted += p;
    }
    for class in &mut rows {
        let n = class.records as f64;
        class.observed = class.observed_events / n;
        class.mean_predicted /= n;
    }
    Ok(rows)
}
