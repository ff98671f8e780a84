//! Fitted survival probability against diameter, one curve per level of a categorical
//! predictor, for the calibration chart. Other numeric covariates are held at their mean over
//! the fitted records and other categorical variables at their reference level.

use super::estimate::Estimate;
use super::load::{numeric, SurvivalData};
use super::survival::SurvivalSpec;
use crate::data::{FrameColumn, Outcome};
use crate::model::file::IntervalKind;
use crate::model::terms::Factor;
use crate::Error;

/// Points per curve.
const GRID_POINTS: usize = 120;

/// Fitted survival curves against diameter.
#[derive(Debug, Clone, PartialEq)]
pub struct SurvivalCurves {
    /// The diameter column.
    pub dbh_column: String,
    /// What the probability covers, e.g. "over 5 years", "per year".
    pub period: String,
    /// The categorical predictor the curves are split by, if any.
    pub by: Option<String>,
    /// (level, points (dbh, survival probability)) per curve.
    pub curves: Vec<(String, Vec<(f64, f64)>)>,
}

fn mean(values: &[f64]) -> f64 {
    let (s, n) = values
        .iter()
        .filter(|v| v.is_finite())
        .fold((0.0, 0usize), |(s, n), v| (s + v, n + 1));
    s / n.max(1) as f64
}

/// Evaluate the fitted survival curves of `est` on a grid over the observed diameters.
///
/// # Errors
/// The data has no numeric diameter column (exit code 2).
pub fn survival_curves(
    spec: &SurvivalSpec,
    data: &SurvivalData,
    est: &Estimate,
) -> Result<SurvivalCurves, Error> {
    let dbh_name = &spec.data.names.dbh;
    let frame = &data.records.frame;
    let Some(FrameColumn::Numeric(dbh)) = frame.column(dbh_name) else {
        return Err(Error::Usage(format!(
            "--calibration-svg: {} has no numeric diameter column `{dbh_name}` (name it with --dbh COL)",
            frame.source
        )));
    };
    let finite = dbh.iter().copied().filter(|v| v.is_finite());
    let lo = finite.clone().fold(f64::INFINITY, f64::min);
    let hi = finite.fold(f64::NEG_INFINITY, f64::max);
    let design = &est.design;
    let by = design
        .terms
        .iter()
        .flat_map(|t| &t.factors)
        .find_map(|f| match f {
            Factor::Indicator { var, .. } => Some(var.clone()),
            Factor::Numeric { .. } => None,
        });
    let levels: Vec<Option<String>> = match by.as_ref().and_then(|v| design.categorical.get(v)) {
        Some(c) => c.levels.iter().cloned().map(Some).collect(),
        None => vec![None],
    };
    let user_offset = match &spec.offset {
        Some(c) => mean(&numeric(&data.records, c)?),
        None => 0.0,
    };
    let means: std::collections::BTreeMap<&str, f64> = frame
        .columns
        .iter()
        .filter_map(|(k, c)| match c {
            FrameColumn::Numeric(v) => Some((k.as_str(), mean(v))),
            FrameColumn::Text { .. } => None,
        })
        .collect();
    let link = est.glm.link;
    let flip = data.outcome == Outcome::Dead;
    let mut curves = Vec::new();
    for level in &levels {
        let points = (0..GRID_POINTS)
            .map(|i| {
                let d = lo + (hi - lo) * i as f64 / (GRID_POINTS - 1) as f64;
                let mut eta = user_offset;
                let mut j = 0;
                if design.intercept {
                    eta += est.glm.coefficients[0];
                    j = 1;
                }
                for (term, b) in design.terms.iter().zip(&est.glm.coefficients[j..]) {
                    let value: f64 = term
                        .factors
                        .iter()
                        .map(|f| match f {
                            Factor::Numeric { var, transform } => {
                                let v = if var == dbh_name {
                                    d
                                } else {
                                    means.get(var.as_str()).copied().unwrap_or(f64::NAN)
                                };
                                transform.apply(v)
                            }
                            Factor::Indicator { var, level: l } => {
                                let chosen = if Some(var) == by.as_ref() {
                                    level.clone()
                                } else {
                                    design.categorical.get(var).map(|c| c.reference.clone())
                                };
                                f64::from(u8::from(chosen.as_deref() == Some(l.as_str())))
                            }
                        })
                        .product();
                    eta += b * value;
                }
                let mu = link.inverse(eta);
                let survival = match spec.interval {
                    IntervalKind::Exposure => (-eta.exp()).exp(),
                    _ if flip => 1.0 - mu,
                    _ => mu,
                };
                (d, survival)
            })
            .filter(|(_, s)| s.is_finite())
            .collect();
        curves.push((level.clone().unwrap_or_else(|| "fitted".into()), points));
    }
    let period = match (spec.interval, data.period_years) {
        (IntervalKind::Fixed, Some(p)) => {
            format!("over {p} year{}", if p == 1.0 { "" } else { "s" })
        }
        (IntervalKind::Fixed, None) => "over the remeasurement interval".into(),
        _ => "per year".into(),
    };
    Ok(SurvivalCurves {
        dbh_column: dbh_name.clone(),
        period,
        by,
        curves,
    })
}
