//! `fit volume`: least squares of a volume equation on measured trees (combined variable on
//! D²H, or logarithmic on ln D and ln H) and its model file (docs/height-volume.md).

use std::collections::BTreeMap;
use std::path::PathBuf;

use ndarray::{Array1, Array2};

use super::measured::{numbers, read_measured, require_positive};
use crate::data::Units;
use crate::model::file::{CoefficientEntry, CovarianceEntry, CovarianceKind, FitInfo, ModelKind};
use crate::model::growth::{fit_ols, OlsFit};
use crate::model::volume::{log_bias_factor, VolumeForm, VolumeModelFile};
use crate::Error;

/// Everything `fit volume` needs.
#[derive(Debug, Clone)]
pub struct VolumeSpec {
    /// The CSV of measured trees.
    pub path: PathBuf,
    /// The equation form.
    pub form: VolumeForm,
    /// Diameter column.
    pub dbh: String,
    /// Total-height column.
    pub height: String,
    /// Volume column.
    pub volume: String,
    /// metric (cm, m, m³) or imperial (in, ft, ft³).
    pub units: Units,
}

/// A fitted volume equation.
#[derive(Debug, Clone)]
pub struct VolumeFit {
    /// The form.
    pub form: VolumeForm,
    /// Units of D, H and V.
    pub units: Units,
    /// The least-squares fit (of V on D²H, or of ln V on ln D and ln H).
    pub ols: OlsFit,
    /// The log-bias correction factor exp(s²/2) (logarithmic form).
    pub bias_factor: Option<f64>,
    /// Data rows in the file.
    pub rows_read: usize,
    /// Rows left out for an empty diameter, height or volume.
    pub missing: usize,
    /// Things the user should know.
    pub warnings: Vec<String>,
    /// The model file to write with `--out`.
    pub model: VolumeModelFile,
}

/// Fit the equation described by `spec`.
///
/// # Errors
/// Bad data or columns, non-positive values, too few trees (exit code 2).
pub fn fit_volume(spec: &VolumeSpec) -> Result<VolumeFit, Error> {
    let numeric = [
        (spec.dbh.as_str(), "--dbh"),
        (spec.height.as_str(), "--height"),
        (spec.volume.as_str(), "--volume"),
    ];
    let table = read_measured(&spec.path, &numeric, &[])?;
    let frame = &table.frame;
    let columns: Vec<Vec<f64>> = numeric
        .iter()
        .map(|(c, _)| {
            let v = numbers(frame, c)?;
            require_positive(frame, c, &v)?;
            Ok(v)
        })
        .collect::<Result<_, Error>>()?;
    let (d, h, v) = (&columns[0], &columns[1], &columns[2]);
    let rows: Vec<usize> = (0..frame.len())
        .filter(|&i| !(d[i].is_nan() || h[i].is_nan() || v[i].is_nan()))
        .collect();
    let missing = frame.len() - rows.len();
    let names: Vec<String> = spec
        .form
        .parameter_names()
        .iter()
        .map(|s| s.to_string())
        .collect();
    let p = names.len();
    let mut x = Array2::<f64>::ones((rows.len(), p));
    let mut y = Array1::<f64>::zeros(rows.len());
    for (r, &i) in rows.iter().enumerate() {
        match spec.form {
            VolumeForm::Combined => {
                x[[r, 1]] = d[i] * d[i] * h[i];
                y[r] = v[i];
            }
            VolumeForm::Logarithmic => {
                x[[r, 1]] = d[i].ln();
                x[[r, 2]] = h[i].ln();
                y[r] = v[i].ln();
            }
        }
    }
    let ols = fit_ols(x.view(), y.view(), &names, true)?;
    let bias_factor =
        (spec.form == VolumeForm::Logarithmic).then(|| log_bias_factor(ols.residual_sd));
    let mut warnings = Vec::new();
    if missing > 0 {
        warnings.push(format!(
            "{missing} rows without a diameter, height or volume were left out"
        ));
    }
    let range = |values: &[f64]| {
        rows.iter()
            .fold([f64::INFINITY, f64::NEG_INFINITY], |[lo, hi], &i| {
                [lo.min(values[i]), hi.max(values[i])]
            })
    };
    let model = VolumeModelFile {
        kind: ModelKind::Volume,
        form: spec.form,
        units: Some(spec.units),
        source: Some(format!("fitted by stemcast fit volume to {}", frame.source)),
        residual_sd: Some(ols.residual_sd),
        log_bias_correction: bias_factor.map(|_| true),
        coefficients: (0..p)
            .map(|k| CoefficientEntry {
                term: names[k].clone(),
                estimate: ols.coefficients[k],
                std_error: Some(ols.std_errors[k]),
            })
            .collect(),
        covariance: Some(CovarianceEntry {
            kind: CovarianceKind::Model,
            terms: names.clone(),
            matrix: ols.covariance.clone(),
        }),
        fit: Some(FitInfo {
            records: Some(ols.records as u64),
            source: Some(frame.source.clone()),
            source_sha256: Some(table.sha256.clone()),
            method: Some("least_squares".into()),
            log_likelihood: Some(ols.log_likelihood),
            aic: Some(ols.aic),
            bic: Some(ols.bic),
            r_squared: Some(ols.r_squared),
            ranges: BTreeMap::from([
                ("dbh".to_string(), range(d)),
                ("height".to_string(), range(h)),
            ]),
            ..FitInfo::default()
        }),
    };
    Ok(VolumeFit {
        form: spec.form,
        units: spec.units,
        ols,
        bias_factor,
        rows_read: frame.len(),
        missing,
        warnings,
        model,
    })
}
