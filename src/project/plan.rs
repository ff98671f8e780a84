//! What `check` reports: the projection plan in words, and extrapolation warnings from the
//! expected trajectory against the models' fitting ranges.

use super::{run_scenario, RunOptions};
use crate::data::AttributeValues;
use crate::model::stored::LinearPredictor;
use crate::scenario::Scenario;

/// The result of checking a scenario.
#[derive(Debug, Clone, PartialEq)]
pub struct CheckReport {
    /// One line per fact of the plan.
    pub plan: Vec<String>,
    /// Extrapolation warnings found along the expected trajectory.
    pub warnings: Vec<String>,
}

/// The name a value has in model files (its serde form), e.g. `annualized`, `ln_bai`.
fn name_of<T: serde::Serialize>(value: &T) -> String {
    match serde_json::to_value(value) {
        Ok(serde_json::Value::String(s)) => s,
        _ => String::from("?"),
    }
}

fn terms(p: &LinearPredictor) -> String {
    p.names().join(" + ")
}

/// Describe the plan of a validated scenario and run its expected trajectory to find
/// extrapolation beyond the models' `[fit.ranges]`.
///
/// # Errors
/// Whatever the expected projection returns (nothing for a valid scenario in practice).
pub fn check(s: &Scenario) -> Result<CheckReport, crate::Error> {
    let t = &s.trees;
    let stems: f64 = t.stems_per_ha.iter().sum();
    let (lo, hi) = t
        .dbh_cm
        .iter()
        .fold((f64::INFINITY, f64::NEG_INFINITY), |(a, b), &d| {
            (a.min(d), b.max(d))
        });
    let attrs: Vec<String> = t
        .attributes
        .iter()
        .map(|a| match &a.values {
            AttributeValues::Numeric(_) => format!("{} (numeric)", a.name),
            AttributeValues::Categorical { levels, .. } => {
                format!("{} ({})", a.name, levels.join(", "))
            }
        })
        .collect();
    let sm = &s.survival.model;
    let gm = &s.growth.model;
    let u = s.uncertainty;
    let mut plan = vec![
        format!("scenario \"{}\" ({})", s.name, s.file),
        format!(
            "trees: {} records of stand {}, {stems:.1} stems/ha, DBH {lo:.2}–{hi:.2} cm{}",
            t.len(),
            t.stand,
            if attrs.is_empty() {
                String::new()
            } else {
                format!(", attributes: {}", attrs.join("; "))
            }
        ),
        format!(
            "survival model {}: {} link, outcome {}, interval {}, period {} years, {} units; η = {}",
            s.survival.path.display(),
            sm.link.name(),
            name_of(&sm.outcome),
            name_of(&sm.interval),
            s.survival.period_years,
            name_of(&sm.common.units),
            terms(&sm.common.predictor)
        ),
        format!(
            "growth model {}: response {}, period {} years, residual SD {}, {} units; η = {}",
            s.growth.path.display(),
            name_of(&gm.response),
            s.growth.period_years,
            gm.residual_sd,
            name_of(&gm.common.units),
            terms(&gm.common.predictor)
        ),
        format!(
            "projection: {} years, output every {} years, sub-steps of {} years ({} per output step)",
            s.horizon_years,
            s.step_years,
            s.sub_step_years,
            (s.step_years / s.sub_step_years).round()
        ),
        format!(
            "Monte Carlo: {} replicates, seed {}; mortality {}; parameter draws {}; growth residuals {}",
            s.replicates,
            s.seed,
            match (u.process, s.area_ha) {
                (false, _) => "expected (no process noise)".to_string(),
                (true, None) => "Bernoulli per record".to_string(),
                (true, Some(a)) => format!("binomial whole stems on {a} ha"),
            },
            if u.parameters { "on" } else { "off" },
            if u.growth_residual { "on" } else { "off" }
        ),
        if s.depends_on_stand() {
            "model terms read stand covariates, so the Monte Carlo mean can differ from the expected trajectory".to_string()
        } else {
            "no model term reads stand covariates: the Monte Carlo mean estimates the expected trajectory".to_string()
        },
    ];
    for (kind, units) in [("survival", sm.common.units), ("growth", gm.common.units)] {
        if units == crate::data::Units::Imperial {
            plan.push(format!(
                "the {kind} model is in imperial units: its terms see DBH and QMD in inches, basal area in ft²/ac and stems per acre; its predictions are converted back to metric"
            ));
        }
    }
    for (i, a) in s.actions.iter().enumerate() {
        let when = if a.at == 0 {
            "before the first sub-step".to_string()
        } else {
            format!("after sub-step {}", a.at)
        };
        plan.push(format!("action {}: {} ({when})", i + 1, a.describe()));
    }
    if let Some(a) = s.start_age_years {
        plan.push(format!("ages: {a} at year 0"));
    }
    let expected = run_scenario(
        s,
        &RunOptions {
            expected: true,
            ..RunOptions::default()
        },
    )?;
    Ok(CheckReport {
        plan,
        warnings: expected.warnings,
    })
}
