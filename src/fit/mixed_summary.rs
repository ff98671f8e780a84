//! Text and JSON renderings of a plot effect (docs/mixed-models.md), shared by the survival
//! and growth summaries.

use serde_json::{json, Value};

use super::mixed::PlotEffectSummary;
use super::summary::{fmt_num, p_clause};
use crate::model::mixed::PlotEffectMethod;

/// Plots listed in the text summary before it says "… and N more".
const TEXT_PLOTS: usize = 20;

/// The `plot_effect` object of the JSON summary (null without a plot effect).
pub fn plot_effect_json(pe: Option<&PlotEffectSummary>) -> Value {
    let Some(pe) = pe else {
        return Value::Null;
    };
    let plots: Vec<Value> = pe
        .plots
        .iter()
        .map(|(id, mode, sd)| json!({"stand": id, "mode": mode, "sd": sd}))
        .collect();
    json!({
        "column": pe.column, "sd": pe.sd, "std_error_sd": pe.std_error_sd,
        "method": pe.method.name(), "nodes": pe.nodes,
        "lr_test": {"statistic": pe.lr_test.statistic, "p_value": pe.lr_test.p_value,
                    "log_likelihood_without": pe.log_likelihood_without,
                    "null_distribution": "0.5 chi2(0) + 0.5 chi2(1)"},
        "intraclass_correlation": pe.intraclass_correlation,
        "plots": plots,
    })
}

/// How the plot effect was estimated, for the summary's title line.
pub fn method_phrase(pe: &PlotEffectSummary) -> String {
    match (pe.method, pe.nodes) {
        (PlotEffectMethod::Laplace, _) => "Laplace approximation".into(),
        (PlotEffectMethod::Agq, Some(k)) => format!("adaptive Gauss–Hermite quadrature, {k} nodes"),
        (PlotEffectMethod::Agq, None) => "adaptive Gauss–Hermite quadrature".into(),
        (PlotEffectMethod::Reml, _) => "REML".into(),
        (PlotEffectMethod::Ml, _) => "maximum likelihood".into(),
    }
}

/// The text block of a plot effect: σ_u, the test, the ICC and the plots.
pub fn plot_effect_text(pe: &PlotEffectSummary, latent: bool) -> String {
    let se = pe.std_error_sd.map_or("–".to_string(), fmt_num);
    let mut out = format!(
        "\n  plot effect (random intercept per `{}`, {} plots): SD {} (std. error {se})\n",
        pe.column,
        pe.plots.len(),
        fmt_num(pe.sd)
    );
    out.push_str(&format!(
        "  likelihood ratio for SD > 0: {:.4}, {} (½χ²₀ + ½χ²₁); without the plot effect ℓ = {:.4}\n",
        pe.lr_test.statistic,
        p_clause(pe.lr_test.p_value),
        pe.log_likelihood_without
    ));
    out.push_str(&format!(
        "  intraclass correlation {:.4}{}\n",
        pe.intraclass_correlation,
        if latent { " (latent scale)" } else { "" }
    ));
    if pe.sd == 0.0 {
        out.push_str("  the maximum is at SD = 0: the estimates are those of the model without a plot effect\n");
    }
    out.push_str(&format!(
        "    {:<14}  {:>12}  {:>12}\n",
        "plot", "mode", "cond. SD"
    ));
    for (id, mode, sd) in pe.plots.iter().take(TEXT_PLOTS) {
        out.push_str(&format!(
            "    {:<14}  {:>12}  {:>12}\n",
            id,
            fmt_num(*mode),
            fmt_num(*sd)
        ));
    }
    if pe.plots.len() > TEXT_PLOTS {
        out.push_str(&format!(
            "    … and {} more (all in --format json and the model file)\n",
            pe.plots.len() - TEXT_PLOTS
        ));
    }
    out
}
