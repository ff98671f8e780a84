//! Text and JSON renderings of an ingrowth hurdle fit (`docs/ingrowth.md`, "Summary").

use serde_json::{json, Value};
use statrs::distribution::{ContinuousCDF, Normal};

use super::ingrowth::IngrowthFit;
use super::summary::{coefficient_table, fmt_num, warnings_block, CAUTION};
use crate::model::ingrowth_trees::IngrowthTrees;
use crate::model::truncated::CountFamily;

fn family_words(family: CountFamily) -> &'static str {
    match family {
        CountFamily::NegativeBinomial => "zero-truncated negative binomial (NB2)",
        CountFamily::Poisson => "zero-truncated Poisson",
    }
}

/// A readable text summary of an ingrowth fit.
pub fn ingrowth_text(fit: &IngrowthFit, source: &str) -> String {
    let h = &fit.hurdle;
    let (a, c) = (&h.any, &h.count);
    let z975 = Normal::standard().inverse_cdf(0.975);
    let mut out = format!(
        "stemcast ingrowth fit — hurdle: logit P(any new tree in the period) and a {} count given any\n",
        family_words(c.family)
    );
    out.push_str(&format!(
        "  {source}: {} plot periods, {} with ingrowth, {} without\n\n",
        h.n_obs,
        h.n_positive,
        h.n_obs - h.n_positive
    ));
    out.push_str("P(any ingrowth): logistic regression on every plot period\n");
    out.push_str(&coefficient_table(
        &a.terms,
        &a.coefficients,
        &a.std_errors,
        &a.z,
        &a.p_values,
        "z",
        z975,
    ));
    out.push_str(&format!(
        "  log-likelihood {:.4}   AIC {:.4}   BIC {:.4}   deviance {:.4} (null {:.4})   {} IRLS iterations\n\n",
        a.log_likelihood, a.aic, a.bic, a.deviance, a.null_deviance, a.iterations
    ));
    out.push_str(&format!(
        "Count given any: {}, log link, offset ln(area·years), on the {} plot periods with ingrowth\n",
        family_words(c.family),
        c.n_obs
    ));
    out.push_str(&coefficient_table(
        &c.terms,
        &c.coefficients,
        &c.std_errors,
        &c.z,
        &c.p_values,
        "z",
        z975,
    ));
    if let (Some(alpha), Some(se)) = (c.alpha, c.alpha_std_error) {
        out.push_str(&format!(
            "  dispersion α {} (SE {}), Var = μ + αμ² before truncation; θ = 1/α {} (SE {})\n",
            fmt_num(alpha),
            fmt_num(se),
            fmt_num(1.0 / alpha),
            fmt_num(se / (alpha * alpha))
        ));
    }
    out.push_str(&format!(
        "  log-likelihood {:.4}   AIC {:.4}   BIC {:.4}   {} Newton iterations\n\n",
        c.log_likelihood, c.aic, c.bic, c.iterations
    ));
    out.push_str(&format!(
        "Hurdle: log-likelihood {:.4} with {} parameters   AIC {:.4}   BIC {:.4}\n",
        h.log_likelihood, h.n_params, h.aic, h.bic
    ));
    out.push_str("  standard errors: inverse information (any part: Fisher = observed for the logit; count part: observed, in (β, α))\n");
    if let Some(t) = &fit.trees {
        out.push_str(&trees_text(t));
    }
    out.push_str(&warnings_block(&fit.warnings));
    out.push_str(&format!("\n{CAUTION}\n"));
    out
}

fn trees_text(t: &IngrowthTrees) -> String {
    let Some(all) = t.groups.first() else {
        return String::new();
    };
    let q = |v: &[f64]| match (v.first(), v.get(v.len() / 2), v.last()) {
        (Some(lo), Some(mid), Some(hi)) => format!("{lo:.1} / {mid:.1} / {hi:.1}"),
        _ => String::new(),
    };
    let mut out = format!(
        "\nNew trees: {} records; diameter quantiles at {:.3} / {:.3} / {:.3}: {}\n",
        all.records,
        t.probabilities.first().copied().unwrap_or(f64::NAN),
        t.probabilities
            .get(t.probabilities.len() / 2)
            .copied()
            .unwrap_or(f64::NAN),
        t.probabilities.last().copied().unwrap_or(f64::NAN),
        q(&all.dbh_quantiles)
    );
    for s in &all.species {
        out.push_str(&format!(
            "  {:<12} share {:.4} ({} records)\n",
            s.species, s.share, s.records
        ));
    }
    if let Some(by) = &t.by {
        out.push_str(&format!(
            "  shares and quantiles stored for {} levels of `{by}`\n",
            t.groups.len() - 1
        ));
    }
    out
}

fn coefficients(names: &[String], b: &[f64], se: &[f64], z: &[f64], p: &[f64]) -> Vec<Value> {
    (0..names.len())
        .map(|i| {
            json!({"term": names[i], "estimate": b[i], "std_error": se[i], "z": z[i], "p_value": p[i]})
        })
        .collect()
}

/// The JSON object of an ingrowth fit: `any` and `count` blocks, `alpha`, and the hurdle's
/// `log_likelihood` and `aic`.
pub fn ingrowth_json(fit: &IngrowthFit) -> Value {
    let h = &fit.hurdle;
    let (a, c) = (&h.any, &h.count);
    json!({
        "kind": "ingrowth",
        "counts": c.family.as_str(),
        "records": h.n_obs,
        "positive": h.n_positive,
        "any": {
            "coefficients": coefficients(&a.terms, &a.coefficients, &a.std_errors, &a.z, &a.p_values),
            "covariance": a.covariance,
            "log_likelihood": a.log_likelihood,
            "aic": a.aic, "bic": a.bic,
            "deviance": a.deviance, "null_deviance": a.null_deviance,
            "n_obs": a.n_obs, "iterations": a.iterations, "converged": a.converged,
        },
        "count": {
            "family": c.family.as_str(),
            "offset": "ln(area) + ln(years)",
            "coefficients": coefficients(&c.terms, &c.coefficients, &c.std_errors, &c.z, &c.p_values),
            "alpha": c.alpha, "alpha_std_error": c.alpha_std_error,
            "covariance": {"terms": c.covariance_names(), "matrix": c.covariance},
            "log_likelihood": c.log_likelihood,
            "aic": c.aic, "bic": c.bic,
            "n_obs": c.n_obs, "iterations": c.iterations,
        },
        "alpha": c.alpha,
        "alpha_std_error": c.alpha_std_error,
        "theta": c.alpha.map(|a| 1.0 / a),
        "theta_std_error": c.alpha.zip(c.alpha_std_error).map(|(a, s)| s / (a * a)),
        "log_likelihood": h.log_likelihood,
        "n_params": h.n_params,
        "aic": h.aic,
        "bic": h.bic,
        "trees": fit.trees,
        "warnings": fit.warnings,
    })
}
