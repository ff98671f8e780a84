//! Text and JSON renderings of a survival fit (`docs/commands.md#fit-survival`), with its
//! diagnostics.

use serde_json::{json, Value};
use statrs::distribution::{ContinuousCDF, Normal};

use super::estimate::Estimator;
use super::judge::Calibration;
use super::summary::{coefficient_table, fmt_num, fmt_p, p_clause, warnings_block, CAUTION};
use super::survival::SurvivalFit;
use crate::model::diagnostics::Unavailable;
use crate::model::file::{CovarianceKind, IntervalKind};

/// How the Hosmer–Lemeshow groups are formed, for summaries and `--help`.
pub const HL_RULE: &str = "10 groups cut at the type-7 deciles of the fitted probabilities (repeated cut points dropped, groups right-closed so ties stay together), summed over both outcome columns, χ² on 8 df, as R ResourceSelection::hoslem.test(g = 10)";

fn covariance_line(fit: &SurvivalFit) -> String {
    let inf = &fit.inference;
    if fit.plot_effect.is_some() {
        return "inverse observed information of the marginal likelihood in (β, σ_u)".into();
    }
    match (inf.kind, fit.estimator, fit.interval) {
        (CovarianceKind::ClusterRobust, _, _) => format!(
            "cluster-robust (CR1 sandwich, {} clusters)",
            inf.n_clusters.unwrap_or(0)
        ),
        (_, Estimator::Firth, _) => {
            "inverse penalised information (XᵀWX)⁻¹ at the Firth estimate".into()
        }
        (_, _, IntervalKind::Annualized) => "inverse observed information".into(),
        _ => "model-based, inverse expected (Fisher) information".into(),
    }
}

fn calibration_text(c: &Calibration, units: &str) -> String {
    let mut out = format!(
        "  calibration by {} class ({units}{}): observed vs mean predicted survival\n",
        c.column,
        if c.default_breaks {
            "; default classes, set them with --dbh-classes"
        } else {
            ""
        }
    );
    out.push_str(&format!(
        "    {:<14}  {:>8}  {:>9}  {:>9}\n",
        "class", "records", "observed", "predicted"
    ));
    for r in &c.classes {
        let label = match r.upper {
            Some(u) => format!("[{}, {})", r.lower, u),
            None => format!("[{}, ∞)", r.lower),
        };
        let cell = |v: f64| {
            if v.is_finite() {
                format!("{v:.4}")
            } else {
                "–".into()
            }
        };
        out.push_str(&format!(
            "    {:<14}  {:>8}  {:>9}  {:>9}\n",
            label,
            r.records,
            cell(r.observed),
            cell(r.mean_predicted)
        ));
    }
    out
}

/// A readable text summary of a survival fit.
pub fn survival_text(fit: &SurvivalFit, source: &str) -> String {
    let g = &fit.glm;
    let c = &fit.counts;
    let d = &fit.diagnostics;
    let z975 = Normal::standard().inverse_cdf(0.975);
    let what = match (fit.interval, fit.period_years) {
        (IntervalKind::Fixed, Some(p)) => format!(
            "P({} over {p} year{})",
            fit.outcome,
            if p == 1.0 { "" } else { "s" }
        ),
        (IntervalKind::Fixed, None) => {
            format!("P({}) over the remeasurement interval", fit.outcome)
        }
        (IntervalKind::Annualized, _) => format!("annual P({}), P_L = p^L", fit.outcome),
        (IntervalKind::Exposure, _) => "P(dead in L years) = 1 − exp(−exp(η)·L)".into(),
    };
    let method = match fit.estimator {
        Estimator::Firth => "Firth penalised-likelihood logistic regression",
        Estimator::MaximumLikelihood if fit.interval == IntervalKind::Annualized => {
            "annualised logistic survival (Newton–Raphson)"
        }
        Estimator::MaximumLikelihood => "binomial GLM",
    };
    let mixed;
    let method = match &fit.plot_effect {
        Some(pe) => {
            mixed = format!(
                "{} with a random plot intercept ({})",
                if fit.interval == IntervalKind::Annualized {
                    "annualised logistic survival"
                } else {
                    "binomial GLMM"
                },
                super::mixed_summary::method_phrase(pe)
            );
            mixed.as_str()
        }
        None => method,
    };
    let mut out = format!(
        "stemcast survival fit — {method}, {} link, modelling {what}\n",
        g.link.name()
    );
    out.push_str(&format!(
        "  {source}: {} rows read, {} records fitted; left out: {} cut/harvested (censored), {} ingrowth rows\n\n",
        c.rows_read, g.n_obs, c.censored, c.ingrowth
    ));
    let inf = &fit.inference;
    out.push_str(&coefficient_table(
        &g.terms,
        &g.coefficients,
        &inf.std_errors,
        &inf.z,
        fit.plr_p_values.as_deref().unwrap_or(&inf.p_values),
        "z",
        z975,
    ));
    if fit.plr_p_values.is_some() {
        out.push_str(&format!(
            "  standard errors, z and Wald intervals: {}; p: penalised-likelihood-ratio tests of each coefficient = 0 (penalty from the full design, as logistf)\n",
            covariance_line(fit)
        ));
    } else {
        out.push_str(&format!(
            "  standard errors, z, p and intervals: {}\n",
            covariance_line(fit)
        ));
    }
    out.push_str(&format!(
        "\n  residual deviance {:.4} on {} df   null deviance {:.4} on {} df\n",
        g.deviance, g.df_residual, g.null_deviance, g.df_null
    ));
    out.push_str(&format!(
        "  log-likelihood {:.4}   AIC {:.4}   BIC {:.4}\n",
        g.log_likelihood, g.aic, g.bic
    ));
    if let Some(pl) = fit.penalized_log_likelihood {
        out.push_str(&format!(
            "  penalised log-likelihood {pl:.4} (the estimate maximises it; AIC and BIC use the ordinary log-likelihood there)\n"
        ));
    }
    let reason = |u: &Unavailable| format!("not available: {u}");
    out.push_str(&match &d.lr_test_vs_null {
        Ok(lr) => format!(
            "  likelihood ratio vs intercept-only: {:.4} on {} df, {}\n",
            lr.statistic,
            lr.df,
            p_clause(lr.p_value)
        ),
        Err(u) => format!("  likelihood ratio vs intercept-only: {}\n", reason(u)),
    });
    out.push_str(&match &d.auc {
        Ok(a) => format!(
            "  ROC AUC {:.4} ({} outcome 1, {} outcome 0; ties count ½)\n",
            a.auc, a.n_events, a.n_nonevents
        ),
        Err(u) => format!("  ROC AUC: {}\n", reason(u)),
    });
    out.push_str(&match &d.hosmer_lemeshow {
        Ok(h) => format!(
            "  Hosmer–Lemeshow {} on {} df, p = {} ({} non-empty groups at the deciles of the fitted probabilities)\n",
            fmt_num(h.statistic),
            h.df,
            fmt_p(h.p_value),
            h.n_groups
        ),
        Err(u) => format!("  Hosmer–Lemeshow: {}\n", reason(u)),
    });
    let units = if g.terms.is_empty() {
        ""
    } else {
        units_of(fit)
    };
    out.push_str(&match &d.calibration {
        Ok(c) => calibration_text(c, units),
        Err(u) => format!("  calibration by diameter class: {}\n", reason(u)),
    });
    if let Some(pe) = &fit.plot_effect {
        out.push_str(&super::mixed_summary::plot_effect_text(pe, true));
    }
    let iterations = match (fit.estimator, fit.interval) {
        _ if fit.plot_effect.is_some() => "quasi-Newton iterations",
        (Estimator::Firth, _) => "Firth Newton iterations",
        (_, IntervalKind::Annualized) => "Newton–Raphson iterations",
        _ => "IRLS iterations",
    };
    out.push_str(&format!(
        "  {} {} ({})\n",
        g.iterations,
        iterations,
        if g.converged {
            "converged"
        } else {
            "did NOT converge"
        }
    ));
    out.push_str(&warnings_block(&fit.warnings));
    out.push_str(&format!("\n{CAUTION}\n"));
    out
}

fn units_of(fit: &SurvivalFit) -> &'static str {
    match fit.model.units.as_deref() {
        Some("imperial") => "in",
        _ => "cm",
    }
}

fn or_reason<T>(r: &Result<T, Unavailable>, f: impl Fn(&T) -> Value) -> (Value, Value) {
    match r {
        Ok(v) => (f(v), Value::Null),
        Err(u) => (Value::Null, Value::String(u.0.clone())),
    }
}

/// The JSON object of `docs/commands.md#survival-json` for a survival fit, with its diagnostics. A
/// diagnostic that does not apply is `null`, and `unavailable` says why.
pub fn survival_json(fit: &SurvivalFit) -> Value {
    let g = &fit.glm;
    let inf = &fit.inference;
    let d = &fit.diagnostics;
    let coefficients: Vec<Value> = (0..g.terms.len())
        .map(|i| match &fit.plr_p_values {
            Some(plr) => {
                json!({"term": g.terms[i], "estimate": g.coefficients[i], "std_error": inf.std_errors[i],
                       "z": inf.z[i], "p_value": plr[i], "p_value_kind": "penalized_likelihood_ratio",
                       "wald_p_value": inf.p_values[i]})
            }
            None => {
                json!({"term": g.terms[i], "estimate": g.coefficients[i], "std_error": inf.std_errors[i],
                       "z": inf.z[i], "p_value": inf.p_values[i]})
            }
        })
        .collect();
    let (auc, auc_why) = or_reason(&d.auc, |a| json!(a.auc));
    let (hl, hl_why) = or_reason(
        &d.hosmer_lemeshow,
        |h| json!({"statistic": h.statistic, "df": h.df, "p_value": h.p_value, "n_groups": h.n_groups}),
    );
    let (hl_groups, _) = or_reason(&d.hosmer_lemeshow, |h| {
        json!({"group_sizes": h.group_sizes, "observed_events": h.observed_events,
               "expected_events": h.expected_events, "breaks": h.breaks})
    });
    let (lr, lr_why) = or_reason(
        &d.lr_test_vs_null,
        |l| json!({"statistic": l.statistic, "df": l.df, "p_value": l.p_value}),
    );
    let (cal, cal_why) = or_reason(&d.calibration, |c| {
        let classes: Vec<Value> = c
            .classes
            .iter()
            .map(|r| {
                let num = |v: f64| if v.is_finite() { json!(v) } else { Value::Null };
                json!({"lower": r.lower, "upper": r.upper, "records": r.records,
                       "observed_survival": num(r.observed),
                       "mean_predicted_survival": num(r.mean_predicted)})
            })
            .collect();
        json!({"column": c.column, "default_classes": c.default_breaks, "classes": classes})
    });
    let estimator = match fit.estimator {
        Estimator::Firth => "firth",
        Estimator::MaximumLikelihood => "maximum_likelihood",
    };
    let null_deviance = if g.null_deviance.is_finite() {
        json!(g.null_deviance)
    } else {
        Value::Null
    };
    let mut out = json!({
        "kind": "survival", "link": g.link.name(), "outcome": fit.outcome.as_str(),
        "interval": fit.model.interval, "period_years": fit.period_years, "estimator": estimator,
        "records": g.n_obs, "censored": fit.counts.censored, "ingrowth_excluded": fit.counts.ingrowth,
        "coefficients": coefficients, "covariance": inf.covariance, "covariance_kind": inf.kind,
        "n_clusters": inf.n_clusters,
        "deviance": g.deviance, "null_deviance": null_deviance,
        "df_residual": g.df_residual, "df_null": g.df_null,
        "log_likelihood": g.log_likelihood, "aic": g.aic, "bic": g.bic,
        "penalized_log_likelihood": fit.penalized_log_likelihood,
        "iterations": g.iterations, "converged": g.converged,
        "auc": auc, "hosmer_lemeshow": hl, "hosmer_lemeshow_groups": hl_groups,
        "lr_test_vs_null": lr, "calibration": cal,
        "unavailable": {"auc": auc_why, "hosmer_lemeshow": hl_why, "lr_test_vs_null": lr_why,
                        "calibration": cal_why},
        "screening": fit.screening.json(),
        "warnings": fit.warnings,
    });
    out["plot_effect"] = super::mixed_summary::plot_effect_json(fit.plot_effect.as_ref());
    out
}
