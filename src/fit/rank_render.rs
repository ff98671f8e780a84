//! Text, CSV and JSON renderings of a [`Ranking`].

use serde_json::{json, Value};

use super::rank::Ranking;
use super::summary::{p_clause, CAUTION};

fn num(v: Option<f64>, digits: usize) -> String {
    match v {
        Some(x) if x.is_finite() => format!("{x:.digits$}"),
        _ => "–".into(),
    }
}

/// A readable table, smallest AIC first, followed by the nested-pair tests.
pub fn rank_text(r: &Ranking) -> String {
    let mut out = format!(
        "stemcast rank — {} candidates on the same {} records in {} plots; {}-fold cross-validation grouped by plot (seed {})\n\n",
        r.rows.len(),
        r.records,
        r.stands,
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
        "  {:>4}  {:<width$}  {:>3}  {:>14}  {:>14}  {:>9}  {:>7}  {:>14}  {:>6}  {:>11}\n",
        "rank", "predictors", "k", "log-lik", "AIC", "ΔAIC", "weight", "BIC", "AUC", "CV log-loss"
    ));
    for (i, c) in r.rows.iter().enumerate() {
        out.push_str(&format!(
            "  {:>4}  {:<width$}  {:>3}  {:>14.4}  {:>14.4}  {:>9.3}  {:>7.4}  {:>14.4}  {:>6}  {:>11.6}\n",
            i + 1,
            c.predictors,
            c.k,
            c.log_likelihood,
            c.aic,
            c.delta_aic,
            c.akaike_weight,
            c.bic,
            num(c.auc, 4),
            c.cv_log_loss
        ));
    }
    out.push_str("\n  weight: Akaike weight exp(−ΔAIC/2) normalised over the candidates; CV log-loss: mean held-out −[y ln p + (1 − y) ln(1 − p)] per record\n");
    if !r.nested.is_empty() {
        out.push_str("\n  nested candidates, likelihood-ratio tests:\n");
        for n in &r.nested {
            out.push_str(&format!(
                "    \"{}\" within \"{}\": G = {:.4} on {} df, {}\n",
                n.reduced,
                n.full,
                n.test.statistic,
                n.test.df,
                p_clause(n.test.p_value)
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

/// One CSV row per candidate, smallest AIC first; full precision; empty AUC when unavailable.
pub fn rank_csv(r: &Ranking) -> String {
    let mut out = String::from(
        "rank,predictors,k,log_likelihood,aic,delta_aic,akaike_weight,bic,auc,cv_log_loss\n",
    );
    for (i, c) in r.rows.iter().enumerate() {
        out.push_str(&format!(
            "{},{},{},{},{},{},{},{},{},{}\n",
            i + 1,
            csv_field(&c.predictors),
            c.k,
            c.log_likelihood,
            c.aic,
            c.delta_aic,
            c.akaike_weight,
            c.bic,
            c.auc.map(|a| a.to_string()).unwrap_or_default(),
            c.cv_log_loss
        ));
    }
    out
}

/// The ranking as one JSON object.
pub fn rank_json(r: &Ranking) -> Value {
    let rows: Vec<Value> = r
        .rows
        .iter()
        .map(|c| {
            json!({"predictors": c.predictors, "terms": c.terms, "k": c.k,
                   "log_likelihood": c.log_likelihood, "aic": c.aic, "delta_aic": c.delta_aic,
                   "akaike_weight": c.akaike_weight, "bic": c.bic, "auc": c.auc,
                   "cv_log_loss": c.cv_log_loss})
        })
        .collect();
    let nested: Vec<Value> = r
        .nested
        .iter()
        .map(|n| {
            json!({"reduced": n.reduced, "full": n.full, "statistic": n.test.statistic,
                   "df": n.test.df, "p_value": n.test.p_value})
        })
        .collect();
    json!({"kind": "rank", "records": r.records, "stands": r.stands, "folds": r.folds,
           "seed": r.seed, "candidates": rows, "nested_lr_tests": nested,
           "warnings": r.warnings})
}
