//! Text and JSON renderings of fit results (`docs/commands.md#fit-survival`,
//! `docs/commands.md#fit-growth`). The library renders to strings; only the command-line layer
//! prints them.

use serde_json::{json, Value};
use statrs::distribution::{ContinuousCDF, StudentsT};

use super::growth::GrowthFit;
pub use super::survival_summary::{survival_json, survival_text};
use crate::model::file::GrowthResponse;

pub use crate::report::CAUTION;

pub(crate) fn fmt_p(p: f64) -> String {
    if p < 1e-16 {
        "<1e-16".into()
    } else if p < 1e-4 {
        format!("{p:.1e}")
    } else {
        format!("{p:.4}")
    }
}

/// "p = 0.0123" or "p < 1e-16", for sentences.
pub(crate) fn p_clause(p: f64) -> String {
    if p < 1e-16 {
        "p < 1e-16".into()
    } else {
        format!("p = {}", fmt_p(p))
    }
}

pub(crate) fn fmt_num(v: f64) -> String {
    if v != 0.0 && (v.abs() < 1e-3 || v.abs() >= 1e6) {
        format!("{v:.4e}")
    } else {
        format!("{v:.6}")
    }
}

/// Widest padded term column; a longer label (say a 65,536-character category level) runs
/// past it instead of asking the formatter for a width it cannot pad to.
const TERM_COLUMN_MAX: usize = 60;

pub(crate) fn coefficient_table(
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
        .clamp(4, TERM_COLUMN_MAX);
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

pub(crate) fn warnings_block(warnings: &[String]) -> String {
    warnings
        .iter()
        .map(|w| format!("  warning: {w}\n"))
        .collect()
}

/// A readable text summary of a growth fit.
pub fn growth_text(fit: &GrowthFit, source: &str) -> String {
    let o = &fit.ols;
    let c = &fit.counts;
    let t975 = StudentsT::new(0.0, 1.0, o.df_residual as f64)
        .map(|t| t.inverse_cdf(0.975))
        .unwrap_or(f64::NAN);
    let imperial = fit.model.units.as_deref() == Some("imperial");
    let (area, length) = if imperial {
        ("in²", "in")
    } else {
        ("cm²", "cm")
    };
    let response = match fit.response {
        GrowthResponse::LnBai => format!("ln(basal-area increment, {area} per tree)"),
        GrowthResponse::AnnualIncrement => format!("annual diameter increment ({length}/year)"),
        GrowthResponse::Column => "the response column as given (not projectable)".to_string(),
    };
    let period = match fit.period_years {
        Some(p) => format!(" over {p} year{}", if p == 1.0 { "" } else { "s" }),
        None => String::new(),
    };
    let method = match &fit.plot_effect {
        Some(pe) => format!(
            "linear mixed model with a random plot intercept ({})",
            super::mixed_summary::method_phrase(pe)
        ),
        None => "least squares".to_string(),
    };
    let mut out = format!("stemcast growth fit — {method} on {response}{period}\n");
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
    match (fit.covariance_kind, fit.n_clusters, &fit.plot_effect) {
        (_, Some(g), _) => out.push_str(&format!(
            "  standard errors, t, p and intervals: cluster-robust (CR1 sandwich, {g} clusters)\n"
        )),
        (_, _, Some(_)) => out.push_str(
            "  standard errors: (Σ X_jᵀV_j⁻¹X_j)⁻¹ at the estimated variances; p and intervals from the normal distribution\n",
        ),
        _ => {}
    }
    if fit.plot_effect.is_some() {
        out.push_str(&format!("\n  residual SD {:.6}\n", o.residual_sd));
    } else {
        out.push_str(&format!(
            "\n  residual SD {:.6} on {} df   R² {:.4}   adjusted R² {:.4}\n",
            o.residual_sd, o.df_residual, o.r_squared, o.adj_r_squared
        ));
    }
    out.push_str(&format!(
        "  log-likelihood {:.4}   AIC {:.4}   BIC {:.4}\n",
        o.log_likelihood, o.aic, o.bic
    ));
    if let Some(pe) = &fit.plot_effect {
        out.push_str(&super::mixed_summary::plot_effect_text(pe, false));
    }
    out.push_str(&warnings_block(&fit.warnings));
    out.push_str(&format!("\n{CAUTION}\n"));
    out
}

/// The JSON object of `docs/commands.md#growth-json` for a growth fit.
pub fn growth_json(fit: &GrowthFit) -> Value {
    let o = &fit.ols;
    let coefficients: Vec<Value> = (0..o.names.len())
        .map(|i| {
            json!({"term": o.names[i], "estimate": o.coefficients[i], "std_error": o.std_errors[i],
                   "t": o.t_values[i], "p_value": o.p_values[i]})
        })
        .collect();
    let c = &fit.counts;
    let finite = |v: f64| if v.is_finite() { json!(v) } else { Value::Null };
    json!({
        "kind": "growth", "response": fit.response, "period_years": fit.period_years,
        "records": o.records,
        "excluded": {"ingrowth": c.ingrowth, "dead": c.dead, "censored": c.censored,
                     "no_second_diameter": c.no_second_diameter,
                     "non_positive_increment": fit.non_positive_increment},
        "coefficients": coefficients, "covariance": o.covariance,
        "covariance_kind": fit.covariance_kind, "n_clusters": fit.n_clusters,
        "residual_sd": o.residual_sd, "r_squared": finite(o.r_squared),
        "adj_r_squared": finite(o.adj_r_squared),
        "plot_effect": super::mixed_summary::plot_effect_json(fit.plot_effect.as_ref()),
        "df_residual": o.df_residual, "log_likelihood": o.log_likelihood, "aic": o.aic, "bic": o.bic,
        "screening": fit.screening.json(),
        "warnings": fit.warnings,
    })
}

#[cfg(test)]
mod tests {
    #[test]
    fn a_65536_character_label_does_not_panic() {
        // The label is longer than the formatter can pad (u16::MAX); it must print as it is.
        let name = "x".repeat(65_536);
        let t = super::coefficient_table(
            std::slice::from_ref(&name),
            &[1.0],
            &[0.1],
            &[10.0],
            &[1e-5],
            "z",
            1.96,
        );
        assert!(t.contains(&name));
    }
}
