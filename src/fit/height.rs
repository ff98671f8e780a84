//! `fit height`: from a CSV of measured trees to height–diameter curves (one for all trees,
//! or one per level of `--by`) and their model file (docs/height-volume.md).

use std::collections::BTreeMap;
use std::path::PathBuf;

use super::measured::{apply_filter, numbers, read_measured, require_positive, RowFilter};
use crate::data::{FrameColumn, Units};
use crate::model::file::{CoefficientEntry, CovarianceEntry, CovarianceKind, FitInfo, ModelKind};
use crate::model::height::{breast_height, HeightForm};
use crate::model::height_file::{HeightCurveEntry, HeightModelFile};
use crate::model::nls::{fit_height_curve, NlsFit};
use crate::model::ModelError;
use crate::Error;

/// At most this many levels of `--by` (each gets a nonlinear fit of its own).
pub const MAX_LEVELS: usize = 1000;

/// Everything `fit height` needs.
#[derive(Debug, Clone)]
pub struct HeightSpec {
    /// The CSV of measured trees.
    pub path: PathBuf,
    /// The curve form.
    pub form: HeightForm,
    /// Diameter column.
    pub dbh: String,
    /// Total-height column.
    pub height: String,
    /// Fit one curve per level of this column.
    pub by: Option<String>,
    /// Keep only the rows where a column has a value.
    pub filter: Option<RowFilter>,
    /// Start values instead of the automatic ones.
    pub start: Option<Vec<f64>>,
    /// metric (D cm, H m, bh 1.3 m) or imperial (D in, H ft, bh 4.5 ft).
    pub units: Units,
}

/// The fit of one level (or of all trees).
#[derive(Debug, Clone)]
pub struct LevelFit {
    /// The level of `--by`; `None` for a curve of all trees.
    pub level: Option<String>,
    /// The curve and its statistics.
    pub fit: NlsFit,
}

/// Fitted height–diameter curves.
#[derive(Debug, Clone)]
pub struct HeightFit {
    /// The form.
    pub form: HeightForm,
    /// Units of the data and the curves.
    pub units: Units,
    /// Breast height.
    pub breast_height: f64,
    /// The grouping column.
    pub by: Option<String>,
    /// Whether the start values were given (`--start`) rather than found.
    pub start_given: bool,
    /// Data rows in the file.
    pub rows_read: usize,
    /// Rows dropped by `--where`.
    pub filtered_out: usize,
    /// Rows left out for an empty diameter or height.
    pub missing: usize,
    /// Rows left out for an empty `--by` cell.
    pub no_level: usize,
    /// One fit per level, in level order.
    pub fits: Vec<LevelFit>,
    /// Things the user should know.
    pub warnings: Vec<String>,
    /// The model file to write with `--out`.
    pub model: HeightModelFile,
}

/// Fit the curves described by `spec`.
///
/// # Errors
/// Bad data, columns or options (exit code 2); a curve that does not converge (exit code 1),
/// naming its level.
pub fn fit_height(spec: &HeightSpec) -> Result<HeightFit, Error> {
    let p = spec.form.n_params();
    if let Some(s) = &spec.start {
        if s.len() != p {
            return Err(Error::Usage(format!(
                "--start: the {} form has {p} parameters ({}), got {} values",
                spec.form,
                spec.form.parameter_names().join(","),
                s.len()
            )));
        }
    }
    let mut text: Vec<(&str, &str)> = Vec::new();
    if let Some(by) = &spec.by {
        text.push((by, "--by"));
    }
    if let Some(f) = &spec.filter {
        if !text.iter().any(|(c, _)| *c == f.column) {
            text.push((&f.column, "--where"));
        }
    }
    let numeric = [
        (spec.dbh.as_str(), "--dbh"),
        (spec.height.as_str(), "--height"),
    ];
    let table = read_measured(&spec.path, &numeric, &text)?;
    let mut frame = table.frame;
    let rows_read = frame.len();
    let filtered_out = match &spec.filter {
        Some(f) => apply_filter(&mut frame, f)?,
        None => 0,
    };
    let dbh = numbers(&frame, &spec.dbh)?;
    let height = numbers(&frame, &spec.height)?;
    require_positive(&frame, &spec.dbh, &dbh)?;
    require_positive(&frame, &spec.height, &height)?;
    let complete: Vec<bool> = dbh
        .iter()
        .zip(&height)
        .map(|(d, h)| !d.is_nan() && !h.is_nan())
        .collect();
    let missing = complete.iter().filter(|c| !**c).count();

    // Rows per level (one group of every row without --by).
    let mut groups: Vec<(Option<String>, Vec<usize>)> = Vec::new();
    let mut no_level = 0;
    match &spec.by {
        None => groups.push((None, (0..frame.len()).filter(|&i| complete[i]).collect())),
        Some(by) => {
            let Some(FrameColumn::Text { levels, codes, .. }) = frame.column(by) else {
                return Err(Error::Usage(format!(
                    "--by {by}: the column was not read as text"
                )));
            };
            if levels.len() > MAX_LEVELS {
                return Err(Error::Usage(format!(
                    "--by {by}: {} levels, more than the {MAX_LEVELS} that get a curve each",
                    levels.len()
                )));
            }
            let mut rows = vec![Vec::new(); levels.len()];
            for (i, &code) in codes.iter().enumerate() {
                if code == u32::MAX {
                    no_level += usize::from(complete[i]);
                } else if complete[i] {
                    rows[code as usize].push(i);
                }
            }
            groups.extend(levels.iter().cloned().map(Some).zip(rows));
        }
    }
    let bh = breast_height(spec.units);
    let mut warnings = Vec::new();
    if missing > 0 {
        warnings.push(format!(
            "{missing} rows without a diameter or a height were left out"
        ));
    }
    if no_level > 0 {
        warnings.push(format!(
            "{no_level} rows with an empty {} were left out",
            spec.by.as_deref().unwrap_or("")
        ));
    }
    let mut fits = Vec::with_capacity(groups.len());
    for (level, rows) in groups {
        if rows.is_empty() {
            continue;
        }
        let d: Vec<f64> = rows.iter().map(|&i| dbh[i]).collect();
        let h: Vec<f64> = rows.iter().map(|&i| height[i]).collect();
        let in_level = |e: ModelError| name_level(e, spec.by.as_deref(), level.as_deref());
        let start = match &spec.start {
            Some(s) => s.clone(),
            None => spec.form.start_values(bh, &d, &h).map_err(in_level)?,
        };
        let fit = fit_height_curve(spec.form, bh, &d, &h, &start).map_err(in_level)?;
        fits.push(LevelFit { level, fit });
    }
    if fits.is_empty() {
        return Err(Error::Usage(format!(
            "{}: no tree has both a diameter and a height",
            frame.source
        )));
    }
    let model = model_file(spec, &fits, &frame.source, &table.sha256, bh);
    Ok(HeightFit {
        form: spec.form,
        units: spec.units,
        breast_height: bh,
        by: spec.by.clone(),
        start_given: spec.start.is_some(),
        rows_read,
        filtered_out,
        missing,
        no_level,
        fits,
        warnings,
        model,
    })
}

/// Put the level into the message of a per-level error.
fn name_level(e: ModelError, by: Option<&str>, level: Option<&str>) -> ModelError {
    let (Some(by), Some(level)) = (by, level) else {
        return e;
    };
    match e {
        ModelError::CurveNotConverged(m) => {
            ModelError::CurveNotConverged(format!("{by} = {level}: {m}"))
        }
        ModelError::Invalid(m) => ModelError::Invalid(format!("{by} = {level}: {m}")),
        other => other,
    }
}

/// The stored curve of one fit.
fn curve_entry(f: &NlsFit, fit: FitInfo) -> HeightCurveEntry {
    HeightCurveEntry {
        residual_sd: Some(f.residual_sd),
        coefficients: (0..f.names.len())
            .map(|k| CoefficientEntry {
                term: f.names[k].clone(),
                estimate: f.coefficients[k],
                std_error: Some(f.std_errors[k]),
            })
            .collect(),
        covariance: Some(CovarianceEntry {
            kind: CovarianceKind::Model,
            terms: f.names.clone(),
            matrix: f.covariance.clone(),
        }),
        fit: Some(FitInfo {
            records: Some(f.records as u64),
            log_likelihood: Some(f.log_likelihood),
            aic: Some(f.aic),
            bic: Some(f.bic),
            iterations: Some(f.evaluations as u64),
            converged: Some(true),
            ranges: BTreeMap::from([("dbh".to_string(), f.dbh_range)]),
            ..fit
        }),
    }
}

fn model_file(
    spec: &HeightSpec,
    fits: &[LevelFit],
    source: &str,
    sha256: &str,
    bh: f64,
) -> HeightModelFile {
    let provenance = FitInfo {
        source: Some(source.to_string()),
        source_sha256: Some(sha256.to_string()),
        method: Some("least_squares".to_string()),
        ..FitInfo::default()
    };
    let mut file = HeightModelFile {
        kind: ModelKind::Height,
        form: spec.form,
        units: Some(spec.units),
        breast_height: Some(bh),
        by: spec.by.clone(),
        residual_sd: None,
        coefficients: Vec::new(),
        covariance: None,
        fit: None,
        levels: BTreeMap::new(),
    };
    match spec.by {
        None => {
            let entry = curve_entry(&fits[0].fit, provenance);
            file.residual_sd = entry.residual_sd;
            file.coefficients = entry.coefficients;
            file.covariance = entry.covariance;
            file.fit = entry.fit;
        }
        Some(_) => {
            file.fit = Some(FitInfo {
                records: Some(fits.iter().map(|f| f.fit.records as u64).sum()),
                ..provenance
            });
            for f in fits {
                let level = f.level.clone().unwrap_or_default();
                file.levels
                    .insert(level, curve_entry(&f.fit, FitInfo::default()));
            }
        }
    }
    file
}
