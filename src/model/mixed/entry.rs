//! The validated `[plot_effect]` of a model file (docs/mixed-models.md, "Model files").

use crate::model::file::PlotEffectEntry;
use crate::model::ModelError;

/// A validated plot effect: σ_u ≥ 0 and the fitted plots' conditional modes and SDs.
#[derive(Debug, Clone, PartialEq)]
pub struct PlotEffect {
    /// σ_u on the linear-predictor scale.
    pub sd: f64,
    /// How it was estimated (laplace, agq, reml, ml), when known.
    pub method: Option<String>,
    /// Fitted plots: id, conditional mode, conditional SD.
    pub plots: Vec<(String, f64, f64)>,
}

/// Validate a `[plot_effect]` table; errors name the key.
pub(crate) fn plot_effect_from(
    p: &PlotEffectEntry,
    err: &dyn Fn(&str, String) -> ModelError,
) -> Result<PlotEffect, ModelError> {
    let non_negative = |v: f64| v >= 0.0 && v.is_finite();
    if !non_negative(p.sd) {
        return Err(err(
            "plot_effect.sd",
            format!("{} is not a non-negative number", p.sd),
        ));
    }
    if let Some(m) = &p.method {
        if !["laplace", "agq", "reml", "ml"].contains(&m.as_str()) {
            return Err(err(
                "plot_effect.method",
                format!("`{m}` is not one of laplace, agq, reml, ml"),
            ));
        }
    }
    let mut plots = Vec::with_capacity(p.plots.len());
    for (i, e) in p.plots.iter().enumerate() {
        if !e.mode.is_finite() {
            return Err(err(
                &format!("plot_effect.plots[{i}].mode"),
                format!("{} is not a finite number", e.mode),
            ));
        }
        if !non_negative(e.sd) {
            return Err(err(
                &format!("plot_effect.plots[{i}].sd"),
                format!("{} is not a non-negative number", e.sd),
            ));
        }
        if plots.iter().any(|(id, _, _)| *id == e.plot) {
            return Err(err(
                &format!("plot_effect.plots[{i}].plot"),
                format!("plot `{}` appears twice", e.plot),
            ));
        }
        plots.push((e.plot.clone(), e.mode, e.sd));
    }
    Ok(PlotEffect {
        sd: p.sd,
        method: p.method.clone(),
        plots,
    })
}
