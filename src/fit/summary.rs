//! Text and JSON renderings of fit results (design §2). The library renders to strings; only
//! the command-line layer prints them.

use serde_json::{json, Value};
use statrs::distribution::{ChiSquared, ContinuousCDF, Normal, StudentsT};

use super::growth::GrowthFit;
use super::survival::SurvivalFit;
use crate::model::file::{GrowthResponse, IntervalKind};

/// The caution printed under every summary and report.
pub const CAUTION: &str = "Caution: model estimates with stated uncertainty, valid only within the range of the fitting data. Defer to local regulations and to licensed professional foresters before acting on them.";

/// Likelihood-ratio test of a fit against the intercept-only model.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct LrTest {
    /// Null deviance − residual deviance.
    pub statistic: f64,
    /// df_null − df_residual.
    pub df: usize,
    /// Upper-tail χ² probability.
    pub p_value: f64,
}

/// The likelihood-ratio test against the null model of a survival fit.
///
/// # Formula
/// G = D₀ − D, df = df₀ − df, p = P(χ²_df > G).
pub fn lr_test_vs_null(fit: &SurvivalFit) -> Option<LrTest> {
    let df = fit.glm.df_null.checked_sub(fit.glm.df_residual)?;
    let statistic = fit.glm.null_deviance - fit.glm.deviance;
    let p_value = if df == 0 {
        1.0
    } else {
        ChiSquared::new(df as f64).ok()?.sf(statistic.max(0.0))
    };
    Some(LrTest {
        statistic,
        df,
        p_value,
    })
}

fn fmt_p(p: f64) -> String {
    if p < 1e-16 {
        "<1e-16".into()
    } else if p < 1e-4 {
        format!("{p:.1e}")
    } else {
        format!("{p:.4}")
    }
}

fn fmt_num(v: f64) -> String {
    if v != 0.0 && (v.abs() < 1e-3 || v.abs() >= 1e6) {
        format!("{v:.4e}")
    } else {
        format!("{v:.6}")
    }
}

fn coefficient_table(
    names: &[String],
    est: &[f64],
    se: &[f64],
    stat: &[f64],
    p: &[f64],
    stat_name: &str,
    quantile: f64,
) -> String {
    let width = names
        .iter()
        .map(|n| n.chars().count())
        .max()
        .unwrap_or(4)
        .max(4);
    let mut out = format!(
        "  {:<width$}  {:>12}  {:>12}  {:>9}  {:>9}  {:>27}\n",
        "term", "estimate", "std. error", stat_name, "p", "95 % interval"
    );
    for i in 0..names.len() {
        let lo = est[i] - quantile * se[i];
        let hi = est[i] + quantile * se[i];
        out.push_str(&format!(
            "  {:<width$}  {:>12}  {:>12}  {:>9.3}  {:>9}  {:>27}\n",
            names[i],
            fmt_num(est[i]),
            fmt_num(se[i]),
            stat[i],
            fmt_p(p[i]),
            format!("[{}, {}]", fmt_num(lo), fmt_num(hi))
        ));
    }
    out
}

fn warnings_block(warnings: &[String]) -> String {
    warnings
        .iter()
        .map(|w| format!("  warning: {w}\n"))
        .collect()
}

/// A readable text summary of a survival fit.
pub fn survival_text(fit: &SurvivalFit, source: &str) -> String {
    let g = &fit.glm;
    let c = &fit.counts;
    let z975 = Normal::standard().inverse_cdf(0.975);
    let what = match (fit.interval, fit.period_years) {
        (IntervalKind::Fixed, Some(p)) => format!("P({} over {p} years)", fit.outcome),
        (IntervalKind::Fixed, None) => {
            format!("P({}) over the remeasurement interval", fit.outcome)
        }
        (IntervalKind::Annualized, _) => format!("annual P({}), P_L = p^L", fit.outcome),
        (IntervalKind::Exposure, _) => "P(dead in L years) = 1 − exp(−exp(η)·L)".into(),
    };
    let mut out = format!(
        "stemcast survival fit — binomial GLM, {} link, modelling {what}\n",
        g.link.name()
    );
    out.push_str(&format!(
        "  {source}: {} rows read, {} records fitted; left out: {} cut/harvested (censored), {} ingrowth rows\n\n",
        c.rows_read, g.n_obs, c.censored, c.ingrowth
    ));
    out.push_str(&coefficient_table(
        &g.terms,
        &g.coefficients,
        &g.std_errors,
        &g.z,
        &g.p_values,
        "z",
        z975,
    ));
    out.push_str(&format!(
        "\n  residual deviance {:.4} on {} df   null deviance {:.4} on {} df\n",
        g.deviance, g.df_residual, g.null_deviance, g.df_null
    ));
    out.push_str(&format!(
        "  log-likelihood {:.4}   AIC {:.4}   BIC {:.4}\n",
        g.log_likelihood, g.aic, g.bic
    ));
    if let Some(lr) = lr_test_vs_null(fit) {
        out.push_str(&format!(
            "  likelihood ratio vs intercept-only: {:.4} on {} df, p {}\n",
            lr.statistic,
            lr.df,
            if lr.p_value < 1e-16 {
                "< 1e-16".to_string()
            } else {
                format!("= {}", fmt_p(lr.p_value))
            }
        ));
    }
    out.push_str(&format!(
        "  IRLS {} in {} iterations; standard errors from the expected information\n",
        if g.converged {
            "converged"
        } else {
            "did NOT converge"
        },
        g.iterations
    ));
    out.push_str(&warnings_block(&fit.warnings));
    out.push_str(&format!("\n{CAUTION}\n"));
    out
}

/// The JSON object of design §2 for a survival fit.
pub fn survival_json(fit: &SurvivalFit) -> Value {
    let g = &fit.glm;
    let coefficients: Vec<Value> = (0..g.terms.len())
        .map(|i| {
            json!({"term": g.terms[i], "estimate": g.coefficients[i], "std_error": g.std_errors[i],
                   "z": g.z[i], "p_value": g.p_values[i]})
        })
        .collect();
    let lr = lr_test_vs_null(fit)
        .map(|l| json!({"statistic": l.statistic, "df": l.df, "p_value": l.p_value}));
    json!({
        "kind": "survival", "link": g.link.name(), "outcome": fit.outcome.as_str(),
        "interval": fit.model.interval, "period_years": fit.period_years,
        "records": g.n_obs, "censored": fit.counts.censored, "ingrowth_excluded": fit.counts.ingrowth,
        "coefficients": coefficients, "covariance": g.covariance, "covariance_kind": "model",
        "deviance": g.deviance, "null_deviance": g.null_deviance,
        "df_residual": g.df_residual, "df_null": g.df_null,
        "log_likelihood": g.log_likelihood, "aic": g.aic, "bic": g.bic,
        "iterations": g.iterations, "converged": g.converged,
        "lr_test_vs_null": lr, "warnings": fit.warnings,
    })
}

/// A readable text summary of a growth fit.
pub fn growth_text(fit: &GrowthFit, source: &str) -> String {
    let o = &fit.ols;
    let c = &fit.counts;
    let t975 = StudentsT::new(0.0, 1.0, o.df_residual as f64)
        .map(|t| t.inverse_cdf(0.975))
        .unwrap_or(f64::NAN);
    let response = match fit.response {
        GrowthResponse::LnBai => "ln(basal-area increment, cm² per tree)".to_string(),
        GrowthResponse::AnnualIncrement => "annual diameter increment (cm/year)".to_string(),
        GrowthResponse::Column => "the response column as given (not projectable)".to_string(),
    };
    let period = match fit.period_years {
        Some(p) => format!(" over {p} years"),
        None => String::new(),
    };
    let mut out = format!("stemcast growth fit — least squares on {response}{period}\n");
    out.push_str(&format!(
        "  {source}: {} rows read, {} records fitted; left out: {} dead, {} cut, {} without a second diameter, {} ingrowth rows, {} with increment ≤ 0\n\n",
        c.rows_read, o.records, c.dead, c.censored, c.no_second_diameter, c.ingrowth, fit.non_positive_increment
    ));
    out.push_str(&coefficient_table(
        &o.names,
        &o.coefficients,
        &o.std_errors,
        &o.t_values,
        &o.p_values,
        "t",
        t975,
    ));
    out.push_str(&format!(
        "\n  residual SD {:.6} on {} df   R² {:.4}   adjusted R² {:.4}\n",
        o.residual_sd, o.df_residual, o.r_squared, o.adj_r_squared
    ));
    out.push_str(&format!(
        "  log-likelihood {:.4}   AIC {:.4}   BIC {:.4}\n",
        o.log_likelihood, o.aic, o.bic
    ));
    out.push_str(&warnings_block(&fit.warnings));
    out.push_str(&format!("\n{CAUTION}\n"));
    out
}

/// The JSON object of design §2 for a growth fit.
pub fn growth_json(fit: &GrowthFit) -> Value {
    let o = &fit.ols;
    let coefficients: Vec<Value> = (0..o.names.len())
        .map(|i| {
            json!({"term": o.names[i], "estimate": o.coefficients[i], "std_error": o.std_errors[i],
                   "t": o.t_values[i], "p_value": o.p_values[i]})
        })
        .collect();
    let c = &fit.counts;
    json!({
        "kind": "growth", "response": fit.response, "period_years": fit.period_years,
        "records": o.records,
        "excluded": {"ingrowth": c.ingrowth, "dead": c.dead, "censored": c.censored,
                     "no_second_diameter": c.no_second_diameter,
                     "non_positive_increment": fit.non_positive_increment},
        "coefficients": coefficients, "covariance": o.covariance,
        "residual_sd": o.residual_sd, "r_squared": o.r_squared, "adj_r_squared": o.adj_r_squared,
        "df_residual": o.df_residual, "log_likelihood": o.log_likelihood, "aic": o.aic, "bic": o.bic,
        "warnings": fit.warnings,
    })
}
