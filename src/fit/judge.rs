//! The diagnostics every survival fit reports: ROC AUC, the Hosmer–Lemeshow test, the
//! likelihood-ratio test against the intercept-only model, and a calibration table of observed
//! against predicted survival by diameter class. The statistics are those of
//! [`crate::model::diagnostics`]; this module decides what applies to a fit and says why not.

use super::estimate::{Estimate, Estimator};
use super::load::SurvivalData;
use crate::data::{FrameColumn, Outcome, Units};
use crate::model::diagnostics::{
    calibration_by_class, hosmer_lemeshow, lr_test_vs_null, require_unit_binary, roc_auc, Auc,
    CalibrationClass, HosmerLemeshow, LrTest, Unavailable,
};

/// Default diameter-class lower bounds in cm: 5 cm wide to 30 cm, 10 cm wide to 60 cm, the
/// last class open. Bounds above the largest diameter in the data are dropped.
pub const DEFAULT_DBH_CLASSES_CM: [f64; 10] =
    [0.0, 5.0, 10.0, 15.0, 20.0, 25.0, 30.0, 40.0, 50.0, 60.0];
/// Default diameter-class lower bounds in inches (`--units imperial`): 2 in wide to 12 in,
/// 4 in wide to 24 in, the last class open.
pub const DEFAULT_DBH_CLASSES_IN: [f64; 10] =
    [0.0, 2.0, 4.0, 6.0, 8.0, 10.0, 12.0, 16.0, 20.0, 24.0];

/// Observed and predicted survival by diameter class.
#[derive(Debug, Clone, PartialEq)]
pub struct Calibration {
    /// The diameter column used.
    pub column: String,
    /// Class lower bounds; classes are [bᵢ, bᵢ₊₁), the last one open.
    pub breaks: Vec<f64>,
    /// True when the default classes were used (no `--dbh-classes`).
    pub default_breaks: bool,
    /// One row per class: records, observed survival, mean predicted survival.
    pub classes: Vec<CalibrationClass>,
}

/// The diagnostics of one fit; each is either a value or the reason it does not apply.
#[derive(Debug, Clone, PartialEq)]
pub struct Diagnostics {
    /// ROC AUC for the modelled outcome (ties ½).
    pub auc: Result<Auc, Unavailable>,
    /// Hosmer–Lemeshow test with 10 groups.
    pub hosmer_lemeshow: Result<HosmerLemeshow, Unavailable>,
    /// Likelihood-ratio test against the intercept-only model.
    pub lr_test_vs_null: Result<LrTest, Unavailable>,
    /// Calibration by diameter class on the survival scale.
    pub calibration: Result<Calibration, Unavailable>,
}

/// Compute the diagnostics of `est`, using the diameter column `dbh_column` and class bounds
/// `classes` (default: [`DEFAULT_DBH_CLASSES_CM`] or [`DEFAULT_DBH_CLASSES_IN`]).
pub fn diagnose(
    data: &SurvivalData,
    est: &Estimate,
    estimator: Estimator,
    dbh_column: &str,
    classes: Option<&[f64]>,
    units: Units,
) -> Diagnostics {
    let y = data.y.as_slice().unwrap_or(&[]);
    let unit = require_unit_binary(
        data.trials.is_some(),
        data.weights.as_ref().and_then(|w| w.as_slice()),
    );
    let auc = unit.clone().and_then(|_| roc_auc(y, &est.fitted));
    let hosmer_lemeshow = unit.clone().and_then(|_| hosmer_lemeshow(y, &est.fitted));
    let lr = if estimator == Estimator::Firth {
        Err(Unavailable(
            "not reported for a Firth fit: it maximises a penalised likelihood".into(),
        ))
    } else if !est.glm.null_deviance.is_finite() {
        Err(Unavailable(
            "needs an intercept-only model, and the model has no intercept".into(),
        ))
    } else {
        Ok(lr_test_vs_null(&est.glm))
    };
    let calibration = unit.and_then(|_| calibrate(data, est, dbh_column, classes, units));
    Diagnostics {
        auc,
        hosmer_lemeshow,
        lr_test_vs_null: lr,
        calibration,
    }
}

fn calibrate(
    data: &SurvivalData,
    est: &Estimate,
    dbh_column: &str,
    classes: Option<&[f64]>,
    units: Units,
) -> Result<Calibration, Unavailable> {
    let Some(FrameColumn::Numeric(dbh)) = data.records.frame.column(dbh_column) else {
        return Err(Unavailable(format!(
            "the data has no numeric diameter column `{dbh_column}`"
        )));
    };
    let breaks: Vec<f64> = match classes {
        Some(b) => b.to_vec(),
        None => {
            let max = dbh
                .iter()
                .copied()
                .filter(|v| v.is_finite())
                .fold(f64::NEG_INFINITY, f64::max);
            let defaults: &[f64] = match units {
                Units::Metric => &DEFAULT_DBH_CLASSES_CM,
                Units::Imperial => &DEFAULT_DBH_CLASSES_IN,
            };
            let mut b: Vec<f64> = defaults.iter().copied().filter(|&v| v <= max).collect();
            if b.is_empty() {
                b.push(defaults[0]);
            }
            b
        }
    };
    let flip = data.outcome == Outcome::Dead;
    let survived: Vec<f64> = data
        .y
        .iter()
        .map(|&v| if flip { 1.0 - v } else { v })
        .collect();
    let predicted: Vec<f64> = est
        .fitted
        .iter()
        .map(|&p| if flip { 1.0 - p } else { p })
        .collect();
    let rows = calibration_by_class(dbh, &survived, &predicted, &breaks)?;
    Ok(Calibration {
        column: dbh_column.to_string(),
        breaks,
        default_breaks: classes.is_none(),
        classes: rows,
    })
}
