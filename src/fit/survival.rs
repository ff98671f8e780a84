//! `fit survival`: from a remeasurement CSV to a fitted binomial GLM and its model file.

use ndarray::Array1;

use super::{common_interval, term_needs, DataOptions, Years};
use crate::data::{
    load_remeasurement, FrameColumn, Outcome, Purpose, RemeasureCounts, RemeasureSpec,
    Remeasurement, Required,
};
use crate::model::design::{build_design, Design, DesignOptions};
use crate::model::file::{
    CoefficientEntry, CovarianceEntry, CovarianceKind, FitInfo, IntervalKind, ModelFile, ModelKind,
};
use crate::model::glm::{fit_glm, GlmData, GlmFit, GlmOptions};
use crate::model::link::Link;
use crate::model::ModelError;
use crate::Error;

/// The response of a survival fit.
#[derive(Debug, Clone, PartialEq)]
pub enum SurvivalResponse {
    /// One row per tree with a status column; `outcome` says what a status of 1 means.
    Status {
        /// What the modelled probability is about.
        outcome: Outcome,
    },
    /// Grouped binomial counts: `successes` of `trials`.
    Counts {
        /// Column of successes.
        successes: String,
        /// Column of trials.
        trials: String,
    },
}

/// Everything `fit survival` needs.
#[derive(Debug, Clone)]
pub struct SurvivalSpec {
    /// Where and how to read the data.
    pub data: DataOptions,
    /// The predictor list (`--predictors`).
    pub predictors: String,
    /// Status or counts.
    pub response: SurvivalResponse,
    /// Prior (frequency) weights column.
    pub weights: Option<String>,
    /// Offset column.
    pub offset: Option<String>,
    /// The remeasurement interval.
    pub years: Years,
    /// How the interval enters the model.
    pub interval: IntervalKind,
    /// Link function.
    pub link: Link,
}

/// A fitted survival model with everything the summary and the model file need.
#[derive(Debug, Clone)]
pub struct SurvivalFit {
    /// The GLM result.
    pub glm: GlmFit,
    /// What the probability is about.
    pub outcome: Outcome,
    /// How the interval entered.
    pub interval: IntervalKind,
    /// The period the model describes (None: not projectable).
    pub period_years: Option<f64>,
    /// Where the rows of the file went.
    pub counts: RemeasureCounts,
    /// Things the user should know.
    pub warnings: Vec<String>,
    /// The model file to write with `--out`.
    pub model: ModelFile,
}

/// Fit the survival model described by `spec`.
///
/// # Errors
/// Bad data or terms (exit code 2), separation or rank deficiency (2), non-convergence (1).
pub fn fit_survival(spec: &SurvivalSpec) -> Result<SurvivalFit, Error> {
    let needs = term_needs(&spec.predictors, &spec.data.use_columns)?;
    let mut required = needs.required.clone();
    let purpose = match &spec.response {
        SurvivalResponse::Status { .. } => Purpose::Survival,
        SurvivalResponse::Counts { successes, trials } => {
            required.push(Required::new(successes, "--successes"));
            required.push(Required::new(trials, "--trials"));
            Purpose::Counts
        }
    };
    for (col, why) in [(&spec.weights, "--weights"), (&spec.offset, "--offset")] {
        if let Some(c) = col {
            required.push(Required::new(c, why));
        }
    }
    let years_col = match &spec.years {
        Years::Column(c) => Some(c.clone()),
        _ => None,
    };
    let default_years = (spec.years == Years::Default
        && super::file_has_column(&spec.data.path, &spec.data.names.years))
    .then(|| spec.data.names.years.clone());
    if let Some(c) = years_col.as_ref().or(default_years.as_ref()) {
        required.push(Required::new(c, "the remeasurement interval"));
    }
    if spec.interval != IntervalKind::Fixed && spec.years == Years::Default {
        return Err(Error::Usage(format!(
            "--interval {} needs the interval of each record: give --years-col COL",
            interval_name(spec.interval)
        )));
    }
    if spec.interval == IntervalKind::Exposure {
        check_exposure(spec)?;
    }
    let outcome = match &spec.response {
        SurvivalResponse::Status { outcome } => *outcome,
        SurvivalResponse::Counts { .. } => Outcome::Alive,
    };
    let load = RemeasureSpec {
        names: spec.data.names.clone(),
        purpose,
        one_means: outcome,
        required,
        derived: needs.derived.clone(),
        use_columns: spec.data.use_columns.clone(),
        categorical: spec.data.categorical.clone(),
        units: spec.data.units,
    };
    let data = load_remeasurement(&spec.data.path, &load)?;
    let design = build_design(
        &needs.terms,
        &data.frame,
        &DesignOptions {
            intercept: spec.data.intercept,
            references: spec.data.references.clone(),
        },
    )?;
    let mut warnings = data.warnings.clone();
    let (period_years, years) = resolve_years(spec, &data)?;
    let y = response(spec, &data)?;
    let num = |c: &Option<String>| -> Result<Option<Array1<f64>>, Error> {
        c.as_ref()
            .map(|c| numeric(&data, c).map(Array1::from))
            .transpose()
    };
    let trials = match &spec.response {
        SurvivalResponse::Counts { trials, .. } => Some(Array1::from(numeric(&data, trials)?)),
        SurvivalResponse::Status { .. } => None,
    };
    let weights = num(&spec.weights)?;
    let mut offset = num(&spec.offset)?;
    if spec.interval == IntervalKind::Exposure {
        let ln_years: Array1<f64> = years.iter().map(|l| l.ln()).collect();
        offset = Some(match offset {
            Some(o) => o + &ln_years,
            None => ln_years,
        });
    }
    let glm = fit_glm(
        &GlmData {
            x: design.x.view(),
            terms: &design.names,
            y: y.view(),
            trials: trials.as_ref().map(|t| t.view()),
            weights: weights.as_ref().map(|w| w.view()),
            offset: offset.as_ref().map(|o| o.view()),
        },
        &GlmOptions { link: spec.link },
    )?;
    if !glm.converged {
        return Err(ModelError::NotConverged {
            iterations: glm.iterations,
            deviance: glm.deviance,
            hint: "check for extreme predictor values or try another link".into(),
        }
        .into());
    }
    if period_years.is_none() {
        warnings.push("no remeasurement interval was given (--years N or a `years` column), so the model file has no period_years and cannot drive a projection".into());
    }
    let model = model_file(spec, &glm, &design, &data, outcome, period_years);
    Ok(SurvivalFit {
        glm,
        outcome,
        interval: spec.interval,
        period_years,
        counts: data.counts,
        warnings,
        model,
    })
}

fn interval_name(k: IntervalKind) -> &'static str {
    match k {
        IntervalKind::Fixed => "fixed",
        IntervalKind::Annualized => "annualized",
        IntervalKind::Exposure => "exposure",
    }
}

fn check_exposure(spec: &SurvivalSpec) -> Result<(), Error> {
    let dead = matches!(
        spec.response,
        SurvivalResponse::Status {
            outcome: Outcome::Dead
        }
    );
    if spec.link != Link::Cloglog || !dead {
        return Err(Error::Usage(
            "--interval exposure models the probability of death with a cloglog link and offset ln(years): use it with --link cloglog --outcome dead".into(),
        ));
    }
    Ok(())
}

/// The period of the model and the per-record intervals (empty when unknown).
fn resolve_years(
    spec: &SurvivalSpec,
    data: &Remeasurement,
) -> Result<(Option<f64>, Vec<f64>), Error> {
    let column = match &spec.years {
        Years::Fixed(n) => {
            if !(*n > 0.0 && n.is_finite()) {
                return Err(Error::Usage(format!(
                    "--years {n}: must be a positive number"
                )));
            }
            return Ok((Some(*n), vec![*n; data.frame.len()]));
        }
        Years::Column(c) => c.clone(),
        Years::Default => {
            let c = spec.data.names.years.clone();
            if data.frame.column(&c).is_none() {
                return Ok((None, Vec::new()));
            }
            c
        }
    };
    let years = numeric(data, &column)?;
    if let Some(i) = years.iter().position(|v| v.is_nan() || *v <= 0.0) {
        return Err(crate::data::DataError::Cell {
            file: data.frame.source.clone(),
            line: data.frame.lines.get(i).copied().unwrap_or(0),
            column: column.clone(),
            message: format!("{} is not a positive number of years", years[i]),
        }
        .into());
    }
    let period = match spec.interval {
        IntervalKind::Fixed => common_interval(&years, &data.frame.source)?,
        IntervalKind::Annualized | IntervalKind::Exposure => 1.0,
    };
    Ok((Some(period), years))
}

/// A numeric column of the loaded records, every value present.
fn numeric(data: &Remeasurement, column: &str) -> Result<Vec<f64>, Error> {
    let frame = &data.frame;
    match frame.column(column) {
        Some(FrameColumn::Numeric(v)) => {
            if let Some(i) = v.iter().position(|x| !x.is_finite()) {
                return Err(crate::data::DataError::Cell {
                    file: frame.source.clone(),
                    line: frame.lines.get(i).copied().unwrap_or(0),
                    column: column.to_string(),
                    message: "empty or not a finite number".into(),
                }
                .into());
            }
            Ok(v.clone())
        }
        Some(FrameColumn::Text { first_text, .. }) => {
            let (line, value) = first_text.clone().unwrap_or((0, String::new()));
            Err(crate::data::DataError::Cell {
                file: frame.source.clone(),
                line,
                column: column.to_string(),
                message: format!("\"{value}\" is not a number"),
            }
            .into())
        }
        None => Err(Error::Usage(format!(
            "{}: column `{column}` was not loaded",
            frame.source
        ))),
    }
}

fn response(spec: &SurvivalSpec, data: &Remeasurement) -> Result<Array1<f64>, Error> {
    match &spec.response {
        SurvivalResponse::Status { outcome } => {
            let alive = data.alive.as_ref().ok_or_else(|| {
                Error::Usage(format!("{}: no status column was read", data.frame.source))
            })?;
            Ok(alive
                .iter()
                .map(|a| f64::from(u8::from(*a == (*outcome == Outcome::Alive))))
                .collect())
        }
        SurvivalResponse::Counts { successes, .. } => Ok(Array1::from(numeric(data, successes)?)),
    }
}

fn model_file(
    spec: &SurvivalSpec,
    glm: &GlmFit,
    design: &Design,
    data: &Remeasurement,
    outcome: Outcome,
    period_years: Option<f64>,
) -> ModelFile {
    let coefficients = glm
        .terms
        .iter()
        .zip(&glm.coefficients)
        .zip(&glm.std_errors)
        .map(|((t, b), s)| CoefficientEntry {
            term: t.clone(),
            estimate: *b,
            std_error: Some(*s),
        })
        .collect();
    ModelFile {
        kind: ModelKind::Survival,
        link: Some(glm.link.name().to_string()),
        outcome: Some(outcome),
        interval: Some(spec.interval),
        period_years,
        units: Some(spec.data.units.as_str().to_string()),
        response: None,
        residual_sd: None,
        coefficients,
        categorical: design.categorical.clone(),
        covariance: Some(CovarianceEntry {
            kind: CovarianceKind::Model,
            terms: glm.terms.clone(),
            matrix: glm.covariance.clone(),
        }),
        fit: Some(FitInfo {
            records: Some(glm.n_obs as u64),
            source: Some(spec.data.path.display().to_string()),
            source_sha256: Some(data.sha256.clone()),
            predictors: Some(spec.predictors.clone()),
            deviance: Some(glm.deviance),
            null_deviance: Some(glm.null_deviance),
            log_likelihood: Some(glm.log_likelihood),
            aic: Some(glm.aic),
            bic: Some(glm.bic),
            r_squared: None,
            iterations: Some(glm.iterations as u64),
            converged: Some(glm.converged),
            ranges: design.ranges.clone(),
        }),
    }
}
