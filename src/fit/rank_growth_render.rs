//! Text, CSV and JSON renderings of a [`GrowthRanking`].

use serde_json::{json, Value};

use super::rank_growth::GrowthRanking;
use super::summary::{p_clause, CAUTION};
use crate::model::file::GrowthResponse;

fn response_name(r: GrowthResponse) -> &'static str {
    match r {
        GrowthResponse::LnBai => "ln(basal-area increment)",
        GrowthResponse::AnnualIncrement => "annual diameter increment",
        GrowthResponse::Column => "the response column",
    }
}

/// A readable table, smallest AIC first, followed by the nested-pair F-tests.
pub fn rank_growth_text(r: &GrowthRanking) -> String {
    let mut out = format!(
        "stemcast rank --growth — {} candidates for {} on the same {} records in {} plots; {}-fold cross-validation grouped by plot (seed {})\n\n",
        r.rows.len(),
        response_name(r.response),
        r.records,
        r.plots,
        r.folds,
        r.seed
    );
    let width = r
        .rows
        .iter()
        .map(|c| c.predictors.chars().count())
        .max()
        .unwrap_or(10)
        .max(10);
    out.push_str(&format!(
        "  {:>4}  {:<width$}  {:>3}  {:>14}  {:>14}  {:>9}  {:>7}  {:>14}  {:>7}  {:>10}  {:>10}\n",
        "rank",
        "predictors",
        "k",
        "log-lik",
        "AIC",
        "ΔAIC",
        "weight",
        "BIC",
        "adj R²",
        "resid SD",
        "CV RMSE"
    ));
    for (i, c) in r.rows.iter().enumerate() {
        out.push_str(&format!(
            "  {:>4}  {:<width$}  {:>3}  {:>14.4}  {:>14.4}  {:>9.3}  {:>7.4}  {:>14.4}  {:>7.4}  {:>10.6}  {:>10.6}\n",
            i + 1,
            c.predictors,
            c.k,
            c.log_likelihood,
            c.aic,
            c.delta_aic,
            c.akaike_weight,
            c.bic,
            c.adj_r_squared,
            c.residual_sd,
            c.cv_rmse
        ));
    }
    out.push_str("\n  k: coefficients (AIC and BIC also count σ); CV RMSE: √(mean held-out squared error of the response)\n");
    if !r.nested.is_empty() {
        out.push_str("\n  nested candidates, F-tests:\n");
        for n in &r.nested {
            out.push_str(&format!(
                "    \"{}\" within \"{}\": F = {:.4} on {} and {} df, {}\n",
                n.reduced,
                n.full,
                n.f,
                n.df1,
                n.df2,
                p_clause(n.p_value)
            ));
        }
    }
    for w in &r.warnings {
        out.push_str(&format!("  warning: {w}\n"));
    }
    out.push_str(&format!("\n{CAUTION}\n"));
    out
}

fn csv_field(s: &str) -> String {
    if s.contains([',', '"', '\n']) {
        format!("\"{}\"", s.replace('"', "\"\""))
    } else {
        s.to_string()
    }
}

/// One CSV row per candidate, smallest AIC first, full precision.
pub fn rank_growth_csv(r: &GrowthRanking) -> String {
    let mut out = String::from(
        "rank,predictors,k,log_likelihood,aic,delta_aic,akaike_weight,bic,r_squared,adj_r_squared,residual_sd,cv_rmse\n",
    );
    for (i, c) in r.rows.iter().enumerate() {
        out.push_str(&format!(
            "{},{},{},{},{},{},{},{},{},{},{},{}\n",
            i + 1,
            csv_field(&c.predictors),
            c.k,
            c.log_likelihood,
            c.aic,
            c.delta_aic,
            c.akaike_weight,
            c.bic,
            c.r_squared,
            c.adj_r_squared,
            c.residual_sd,
            c.cv_rmse
        ));
    }
    out
}

/// The ranking as one JSON object.
pub fn rank_growth_json(r: &GrowthRanking) -> Value {
    let rows: Vec<Value> = r
        .rows
        .iter()
        .map(|c| {
            json!({"predictors": c.predictors, "terms": c.terms, "k": c.k,
                   "log_likelihood": c.log_likelihood, "aic": c.aic, "delta_aic": c.delta_aic,
                   "akaike_weight": c.akaike_weight, "bic": c.bic, "r_squared": c.r_squared,
                   "adj_r_squared": c.adj_r_squared, "residual_sd": c.residual_sd,
                   "cv_rmse": c.cv_rmse})
        })
        .collect();
    let nested: Vec<Value> = r
        .nested
        .iter()
        .map(|n| {
            json!({"reduced": n.reduced, "full": n.full, "f": n.f, "df1": n.df1,
                   "df2": n.df2, "p_value": n.p_value})
        })
        .collect();
    json!({"kind": "rank_growth", "response": r.response, "records": r.records,
           "plots": r.plots, "folds": r.folds, "seed": r.seed, "candidates": rows,
           "nested_f_tests": nested, "warnings": r.warnings})
}
