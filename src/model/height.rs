//! Height–diameter curves: the three forms, their evaluation and derivatives, and the
//! automatic start values of the nonlinear least-squares fit (docs/height-volume.md).

use std::fmt;
use std::str::FromStr;

use serde::{Deserialize, Serialize};

use super::ModelError;
use crate::data::Units;

/// Breast height in metres (metric units).
pub const BREAST_HEIGHT_M: f64 = 1.3;
/// Breast height in feet (imperial units).
pub const BREAST_HEIGHT_FT: f64 = 4.5;

/// The breast height of a unit system: 1.3 m or 4.5 ft.
pub fn breast_height(units: Units) -> f64 {
    match units {
        Units::Metric => BREAST_HEIGHT_M,
        Units::Imperial => BREAST_HEIGHT_FT,
    }
}

/// A height–diameter form. Every form gives total height as breast height plus a part that
/// is zero at D = 0 (Näslund, Chapman–Richards) or small there (log-reciprocal).
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize, Deserialize)]
#[serde(rename_all = "snake_case")]
pub enum HeightForm {
    /// H = bh + a (1 − e^(−bD))^c.
    ChapmanRichards,
    /// H = bh + D² / (a + bD)².
    Naslund,
    /// H = bh + exp(a + b / (D + 1)).
    LogReciprocal,
}

/// A form name that is not one of the three.
#[derive(Debug, Clone, PartialEq, Eq, thiserror::Error)]
#[error("unknown height form `{0}` (chapman-richards, naslund or log-reciprocal)")]
pub struct UnknownForm(pub String);

impl FromStr for HeightForm {
    type Err = UnknownForm;

    /// Accepts the model-file spelling (`chapman_richards`) and the command-line one
    /// (`chapman-richards`).
    fn from_str(s: &str) -> Result<Self, Self::Err> {
        match s.trim().replace('-', "_").as_str() {
            "chapman_richards" => Ok(HeightForm::ChapmanRichards),
            "naslund" => Ok(HeightForm::Naslund),
            "log_reciprocal" => Ok(HeightForm::LogReciprocal),
            _ => Err(UnknownForm(s.to_string())),
        }
    }
}

impl fmt::Display for HeightForm {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        f.write_str(self.as_str())
    }
}

impl HeightForm {
    /// The model-file name: `chapman_richards`, `naslund` or `log_reciprocal`.
    pub fn as_str(self) -> &'static str {
        match self {
            HeightForm::ChapmanRichards => "chapman_richards",
            HeightForm::Naslund => "naslund",
            HeightForm::LogReciprocal => "log_reciprocal",
        }
    }

    /// The parameter names in coefficient order.
    pub fn parameter_names(self) -> &'static [&'static str] {
        match self {
            HeightForm::ChapmanRichards => &["a", "b", "c"],
            HeightForm::Naslund | HeightForm::LogReciprocal => &["a", "b"],
        }
    }

    /// Number of parameters.
    pub fn n_params(self) -> usize {
        self.parameter_names().len()
    }

    /// The formula with breast height `bh` written in, for summaries.
    pub fn formula(self, bh: f64) -> String {
        match self {
            HeightForm::ChapmanRichards => format!("H = {bh} + a·(1 − exp(−b·D))^c"),
            HeightForm::Naslund => format!("H = {bh} + D² / (a + b·D)²"),
            HeightForm::LogReciprocal => format!("H = {bh} + exp(a + b / (D + 1))"),
        }
    }

    /// Height above breast height at diameter `d` with parameters `theta` (in coefficient
    /// order; the caller guarantees the length).
    ///
    /// # Formula
    /// Chapman–Richards a (1 − e^(−bD))^c; Näslund D² / (a + bD)²; log-reciprocal
    /// exp(a + b / (D + 1)). 1 − e^(−bD) is computed as −expm1(−bD).
    #[inline]
    pub fn above_breast_height(self, d: f64, theta: &[f64]) -> f64 {
        match self {
            HeightForm::ChapmanRichards => {
                let u = -(-theta[1] * d).exp_m1();
                theta[0] * u.powf(theta[2])
            }
            HeightForm::Naslund => {
                let q = theta[0] + theta[1] * d;
                d * d / (q * q)
            }
            HeightForm::LogReciprocal => (theta[0] + theta[1] / (d + 1.0)).exp(),
        }
    }

    /// The derivatives of [`above_breast_height`](Self::above_breast_height) with respect to
    /// the parameters, written into `out` (length [`n_params`](Self::n_params)).
    ///
    /// # Formula
    /// Chapman–Richards with u = 1 − e^(−bD): ∂/∂a = u^c, ∂/∂b = a c u^(c−1) D e^(−bD),
    /// ∂/∂c = a u^c ln u (0 at u = 0). Näslund with q = a + bD: ∂/∂a = −2D²/q³,
    /// ∂/∂b = −2D³/q³. Log-reciprocal with f = exp(a + b/(D + 1)): ∂/∂a = f,
    /// ∂/∂b = f/(D + 1).
    #[inline]
    pub fn gradient(self, d: f64, theta: &[f64], out: &mut [f64]) {
        match self {
            HeightForm::ChapmanRichards => {
                let (a, b, c) = (theta[0], theta[1], theta[2]);
                let e = (-b * d).exp();
                let u = -(-b * d).exp_m1();
                let uc = u.powf(c);
                out[0] = uc;
                out[1] = if u > 0.0 { a * c * uc / u * d * e } else { 0.0 };
                out[2] = if u > 0.0 { a * uc * u.ln() } else { 0.0 };
            }
            HeightForm::Naslund => {
                let q = theta[0] + theta[1] * d;
                let g = -2.0 * d * d / (q * q * q);
                out[0] = g;
                out[1] = g * d;
            }
            HeightForm::LogReciprocal => {
                let f = (theta[0] + theta[1] / (d + 1.0)).exp();
                out[0] = f;
                out[1] = f / (d + 1.0);
            }
        }
    }

    /// Start values for the least-squares fit, from linearisations of the form.
    ///
    /// # Formula
    /// Chapman–Richards: a₀ = max(H) − bh, c₀ = 1, and b₀ the least-squares slope through the
    /// origin of z = −ln(1 − min((H − bh)/a₀, 0.99)) on D (the form with c = 1 solved for bD).
    /// Näslund: intercept and slope of the least-squares line of D/√(H − bh) on D.
    /// Log-reciprocal: intercept and slope of the least-squares line of ln(H − bh) on
    /// 1/(D + 1). The last two use only trees taller than breast height.
    ///
    /// # Errors
    /// [`ModelError::Invalid`] when the data cannot give start values (no tree taller than
    /// breast height, or all usable diameters equal); give `--start` then.
    pub fn start_values(
        self,
        bh: f64,
        dbh: &[f64],
        height: &[f64],
    ) -> Result<Vec<f64>, ModelError> {
        let no_start = |why: &str| {
            ModelError::Invalid(format!(
                "no automatic start values for the {} form: {why}; give them with --start",
                self.as_str()
            ))
        };
        match self {
            HeightForm::ChapmanRichards => {
                let a0 = height.iter().copied().fold(f64::NEG_INFINITY, f64::max) - bh;
                if !(a0 > 0.0 && a0.is_finite()) {
                    return Err(no_start("no tree is taller than breast height"));
                }
                let (mut sdz, mut sdd) = (0.0, 0.0);
                for (&d, &h) in dbh.iter().zip(height) {
                    let z = -(1.0 - ((h - bh) / a0).min(0.99)).ln();
                    sdz += d * z;
                    sdd += d * d;
                }
                let b0 = sdz / sdd;
                if !(b0 > 0.0 && b0.is_finite()) {
                    return Err(no_start("the linearised slope is not positive"));
                }
                Ok(vec![a0, b0, 1.0])
            }
            HeightForm::Naslund | HeightForm::LogReciprocal => {
                let pairs = dbh.iter().zip(height).filter(|(_, &h)| h > bh);
                let (x, y): (Vec<f64>, Vec<f64>) = match self {
                    HeightForm::Naslund => pairs.map(|(&d, &h)| (d, d / (h - bh).sqrt())).unzip(),
                    _ => pairs
                        .map(|(&d, &h)| (1.0 / (d + 1.0), (h - bh).ln()))
                        .unzip(),
                };
                let (intercept, slope) = simple_regression(&x, &y).ok_or_else(|| {
                    no_start("fewer than two distinct diameters above breast height")
                })?;
                Ok(vec![intercept, slope])
            }
        }
    }
}

/// Intercept and slope of the least-squares line of `y` on `x`; `None` with fewer than two
/// points or no spread in `x`.
///
/// # Formula
/// slope = Σ(x − x̄)(y − ȳ) / Σ(x − x̄)², intercept = ȳ − slope · x̄.
fn simple_regression(x: &[f64], y: &[f64]) -> Option<(f64, f64)> {
    let n = x.len();
    if n < 2 {
        return None;
    }
    let mx = x.iter().sum::<f64>() / n as f64;
    let my = y.iter().sum::<f64>() / n as f64;
    let sxx: f64 = x.iter().map(|v| (v - mx) * (v - mx)).sum();
    let sxy: f64 = x.iter().zip(y).map(|(a, b)| (a - mx) * (b - my)).sum();
    if sxx.partial_cmp(&0.0) != Some(std::cmp::Ordering::Greater) {
        return None;
    }
    let slope = sxy / sxx;
    Some((my - slope * mx, slope))
}

/// One fitted or typed curve: a form, its parameters and the breast height.
#[derive(Debug, Clone, PartialEq)]
pub struct HeightCurve {
    form: HeightForm,
    parameters: Vec<f64>,
    breast_height: f64,
}

impl HeightCurve {
    /// A curve from its parts.
    ///
    /// # Errors
    /// [`ModelError::Invalid`] when the number of parameters does not match the form or a
    /// value is not finite.
    pub fn new(
        form: HeightForm,
        parameters: Vec<f64>,
        breast_height: f64,
    ) -> Result<Self, ModelError> {
        if parameters.len() != form.n_params() {
            return Err(ModelError::Invalid(format!(
                "the {} form has {} parameters ({}), got {}",
                form,
                form.n_params(),
                form.parameter_names().join(", "),
                parameters.len()
            )));
        }
        if let Some(v) = parameters
            .iter()
            .chain([&breast_height])
            .find(|v| !v.is_finite())
        {
            return Err(ModelError::Invalid(format!("{v} is not a finite number")));
        }
        Ok(HeightCurve {
            form,
            parameters,
            breast_height,
        })
    }

    /// The form.
    pub fn form(&self) -> HeightForm {
        self.form
    }

    /// The parameters in the form's order.
    pub fn parameters(&self) -> &[f64] {
        &self.parameters
    }

    /// Breast height in the curve's height unit.
    pub fn breast_height(&self) -> f64 {
        self.breast_height
    }

    /// Total height of a tree of diameter `dbh` (breast height included).
    #[inline]
    pub fn height(&self, dbh: f64) -> f64 {
        self.breast_height + self.form.above_breast_height(dbh, &self.parameters)
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    fn numeric_gradient(form: HeightForm, d: f64, theta: &[f64]) -> Vec<f64> {
        (0..theta.len())
            .map(|j| {
                let h = 1e-6 * theta[j].abs().max(1e-3);
                let (mut up, mut down) = (theta.to_vec(), theta.to_vec());
                up[j] += h;
                down[j] -= h;
                (form.above_breast_height(d, &up) - form.above_breast_height(d, &down)) / (2.0 * h)
            })
            .collect()
    }

    // Check value: central differences of the function itself (outside the analytic code).
    #[test]
    fn analytic_gradients_match_central_differences() {
        let cases: [(HeightForm, &[f64]); 3] = [
            (HeightForm::ChapmanRichards, &[27.6, 0.041, 1.37]),
            (HeightForm::Naslund, &[2.45, 0.16]),
            (HeightForm::LogReciprocal, &[3.48, -19.4]),
        ];
        for (form, theta) in cases {
            for d in [0.5, 5.0, 23.7, 60.0] {
                let mut g = vec![0.0; theta.len()];
                form.gradient(d, theta, &mut g);
                for (a, n) in g.iter().zip(numeric_gradient(form, d, theta)) {
                    assert!(
                        (a - n).abs() <= 1e-7 * n.abs().max(1e-3),
                        "{form} d={d}: {a} vs {n}"
                    );
                }
            }
        }
    }

    // Check values from hd_speciesA_*.json `model.start` (tests/fixtures/hd_volume), whose
    // start_rule is the rule documented on `start_values`; the species-A rows are filtered in
    // tests/it/height.rs, so here only a hand-worked case:
    // D = 10, 20 and H − 1.3 = 4, 9: Näslund x = D, y = D/√(H − bh) = 5, 20/3, slope
    // (20/3 − 5)/10 = 1/6, intercept 5 − 10/6 = 10/3 (derived analytically).
    #[test]
    fn naslund_start_is_the_linearised_line() {
        let s = HeightForm::Naslund
            .start_values(1.3, &[10.0, 20.0], &[5.3, 10.3])
            .unwrap();
        assert!((s[0] - 10.0 / 3.0).abs() < 1e-12 && (s[1] - 1.0 / 6.0).abs() < 1e-12);
        assert!(HeightForm::LogReciprocal
            .start_values(1.3, &[10.0], &[5.0])
            .is_err());
    }

    #[test]
    fn forms_parse_in_both_spellings() {
        assert_eq!("chapman-richards".parse(), Ok(HeightForm::ChapmanRichards));
        assert_eq!("log_reciprocal".parse(), Ok(HeightForm::LogReciprocal));
        assert!("weibull".parse::<HeightForm>().is_err());
    }

    // Derived analytically: at D = 0 the Näslund and Chapman–Richards curves equal breast
    // height; a curve needs as many parameters as its form has.
    #[test]
    fn curves_start_at_breast_height() {
        let c = HeightCurve::new(HeightForm::Naslund, vec![2.0, 0.2], 1.3).unwrap();
        assert_eq!(c.height(0.0), 1.3);
        let c = HeightCurve::new(HeightForm::ChapmanRichards, vec![20.0, 0.05, 1.2], 4.5).unwrap();
        assert_eq!(c.height(0.0), 4.5);
        assert!(HeightCurve::new(HeightForm::Naslund, vec![2.0], 1.3).is_err());
    }
}
