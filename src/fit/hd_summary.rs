//! Text and JSON renderings of `fit height` and `fit volume` results (the JSON layout is in
//! docs/height-volume.md).

use serde_json::{json, Map, Value};
use statrs::distribution::{ContinuousCDF, StudentsT};

use super::height::HeightFit;
use super::summary::{coefficient_table, warnings_block, CAUTION};
use super::volume::VolumeFit;
use crate::data::Units;
use crate::model::nls::NlsFit;
use crate::model::volume::volume_units_text;

fn t975(df: usize) -> f64 {
    StudentsT::new(0.0, 1.0, df as f64)
        .map(|t| t.inverse_cdf(0.975))
        .unwrap_or(f64::NAN)
}

fn coefficients_json(
    names: &[String],
    est: &[f64],
    se: &[f64],
    t: &[f64],
    p: &[f64],
) -> Vec<Value> {
    (0..names.len())
        .map(|i| json!({"term": names[i], "estimate": est[i], "std_error": se[i], "t": t[i], "p_value": p[i]}))
        .collect()
}

fn height_units_text(units: Units) -> &'static str {
    match units {
        Units::Metric => "D in cm, H in m",
        Units::Imperial => "D in inches, H in ft",
    }
}

/// The JSON fields of one curve.
fn nls_json(f: &NlsFit) -> Map<String, Value> {
    let start: Map<String, Value> = f
        .names
        .iter()
        .cloned()
        .zip(f.start.iter().map(|v| json!(v)))
        .collect();
    let value = json!({
        "records": f.records,
        "coefficients": coefficients_json(&f.names, &f.coefficients, &f.std_errors, &f.t_values, &f.p_values),
        "covariance": f.covariance,
        "rss": f.rss, "residual_sd": f.residual_sd, "df_residual": f.df_residual,
        "log_likelihood": f.log_likelihood, "aic": f.aic, "bic": f.bic,
        "start": start, "converged": true, "evaluations": f.evaluations, "runs": f.runs,
        "relative_offset": f.relative_offset, "dbh_range": f.dbh_range,
    });
    match value {
        Value::Object(m) => m,
        _ => Map::new(),
    }
}

/// The JSON object of a height fit: the curve's fields at the top level, or with `--by` a
/// `fits` array with one object per level (each with `level`).
pub fn height_json(fit: &HeightFit) -> Value {
    let mut out = Map::new();
    out.insert("kind".into(), json!("height"));
    out.insert("form".into(), json!(fit.form.as_str()));
    out.insert("formula".into(), json!(fit.form.formula(fit.breast_height)));
    out.insert("units".into(), json!(fit.units.as_str()));
    out.insert("breast_height".into(), json!(fit.breast_height));
    out.insert(
        "start_values".into(),
        json!(if fit.start_given {
            "given"
        } else {
            "automatic"
        }),
    );
    out.insert("rows_read".into(), json!(fit.rows_read));
    out.insert(
        "left_out".into(),
        json!({"where": fit.filtered_out, "missing": fit.missing, "no_level": fit.no_level}),
    );
    match &fit.by {
        None => {
            if let Some(f) = fit.fits.first() {
                out.extend(nls_json(&f.fit));
            }
        }
        Some(by) => {
            out.insert("by".into(), json!(by));
            let fits: Vec<Value> = fit
                .fits
                .iter()
                .map(|f| {
                    let mut m = Map::new();
                    m.insert("level".into(), json!(f.level));
                    m.extend(nls_json(&f.fit));
                    Value::Object(m)
                })
                .collect();
            out.insert("fits".into(), Value::Array(fits));
        }
    }
    out.insert("warnings".into(), json!(fit.warnings));
    Value::Object(out)
}

/// A readable text summary of a height fit.
pub fn height_text(fit: &HeightFit, source: &str) -> String {
    let mut out = format!(
        "stemcast height fit — nonlinear least squares (Levenberg–Marquardt), {}\n  {} ({}; breast height {})\n",
        fit.form.as_str(),
        fit.form.formula(fit.breast_height),
        height_units_text(fit.units),
        fit.breast_height
    );
    out.push_str(&format!(
        "  {source}: {} rows read; left out: {} by --where, {} without a diameter or height, {} without a level; start values {}\n",
        fit.rows_read,
        fit.filtered_out,
        fit.missing,
        fit.no_level,
        if fit.start_given { "given" } else { "automatic" }
    ));
    for lf in &fit.fits {
        let f = &lf.fit;
        out.push('\n');
        if let (Some(by), Some(level)) = (&fit.by, &lf.level) {
            out.push_str(&format!("  {by} = {level}\n"));
        }
        out.push_str(&format!(
            "  {} trees, D from {} to {}; converged after {} evaluations (relative offset {:.1e})\n",
            f.records,
            f.dbh_range[0],
            f.dbh_range[1],
            f.evaluations,
            f.relative_offset
        ));
        out.push_str(&coefficient_table(
            &f.names,
            &f.coefficients,
            &f.std_errors,
            &f.t_values,
            &f.p_values,
            "t",
            t975(f.df_residual),
        ));
        out.push_str(&format!(
            "  residual SD {:.6} on {} df   RSS {:.6}\n  log-likelihood {:.4}   AIC {:.4}   BIC {:.4}\n",
            f.residual_sd, f.df_residual, f.rss, f.log_likelihood, f.aic, f.bic
        ));
    }
    out.push_str(&warnings_block(&fit.warnings));
    out.push_str(&format!("\n{CAUTION}\n"));
    out
}

/// The JSON object of a volume fit.
pub fn volume_json(fit: &VolumeFit) -> Value {
    let o = &fit.ols;
    json!({
        "kind": "volume", "form": fit.form.as_str(), "formula": fit.form.formula(),
        "units": fit.units.as_str(), "rows_read": fit.rows_read, "left_out": {"missing": fit.missing},
        "records": o.records,
        "coefficients": coefficients_json(&o.names, &o.coefficients, &o.std_errors, &o.t_values, &o.p_values),
        "covariance": o.covariance, "rss": o.rss, "residual_sd": o.residual_sd,
        "df_residual": o.df_residual, "r_squared": o.r_squared, "adj_r_squared": o.adj_r_squared,
        "log_likelihood": o.log_likelihood, "aic": o.aic, "bic": o.bic,
        "log_bias_factor": fit.bias_factor, "warnings": fit.warnings,
    })
}

/// A readable text summary of a volume fit.
pub fn volume_text(fit: &VolumeFit, source: &str) -> String {
    let o = &fit.ols;
    let mut out = format!(
        "stemcast volume fit — least squares, {} form\n  {} ({})\n  {source}: {} rows read, {} trees fitted, {} left out without a diameter, height or volume\n\n",
        fit.form.as_str(),
        fit.form.formula(),
        volume_units_text(fit.units),
        fit.rows_read,
        o.records,
        fit.missing
    );
    out.push_str(&coefficient_table(
        &o.names,
        &o.coefficients,
        &o.std_errors,
        &o.t_values,
        &o.p_values,
        "t",
        t975(o.df_residual),
    ));
    out.push_str(&format!(
        "\n  residual SD {:.6} on {} df   R² {:.4}   RSS {:.6}\n  log-likelihood {:.4}   AIC {:.4}   BIC {:.4}\n",
        o.residual_sd, o.df_residual, o.r_squared, o.rss, o.log_likelihood, o.aic, o.bic
    ));
    if let Some(cf) = fit.bias_factor {
        out.push_str(&format!(
            "  log-bias correction exp(s²/2) = {cf:.6}, applied to predicted volumes (log_bias_correction = true in the model file)\n"
        ));
    }
    out.push_str(&warnings_block(&fit.warnings));
    out.push_str(&format!("\n{CAUTION}\n"));
    out
}
