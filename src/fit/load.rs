//! The load stage of a survival fit: read the records once, with every column that any of the
//! requested predictor sets needs, and turn the response, weights, offset, intervals, clusters
//! and stands into plain arrays. `fit survival` fits one predictor set on the result; `rank`
//! fits several on the same records.

use std::collections::HashMap;

use ndarray::Array1;

use super::source::{has_column, load_records, plot_column, Loaded};
use super::survival::{SurvivalResponse, SurvivalSpec};
use super::{common_interval, term_needs, Years};
use crate::data::{
    DataError, DerivedCovariate, FrameColumn, Outcome, Purpose, RemeasureSpec, Remeasurement,
    Required,
};
use crate::model::file::IntervalKind;
use crate::model::link::Link;
use crate::Error;

/// What to load besides the columns of the response and the predictor sets.
#[derive(Debug, Clone, Default)]
pub struct LoadOptions {
    /// Every predictor list that will be fitted on the records (their union is loaded).
    pub predictor_sets: Vec<String>,
    /// A cluster column (`--cluster`) whose values become integer codes.
    pub cluster: Option<String>,
    /// Whether the stand column is needed (cross-validation folds grouped by stand).
    pub stands: bool,
    /// Why the stand column is needed, for the missing-column message.
    pub stands_why: String,
    /// The plot column of a plot effect (`--plot-effect`).
    pub plot: Option<String>,
}

/// Survival records ready for fitting: the frame plus the response and per-record arrays.
#[derive(Debug, Clone)]
pub struct SurvivalData {
    /// The records and their columns (including derived covariates).
    pub records: Remeasurement,
    /// The response: 0/1 for the modelled outcome, or successes for counts data.
    pub y: Array1<f64>,
    /// Trials per record for successes/trials data.
    pub trials: Option<Array1<f64>>,
    /// Prior (frequency) weights.
    pub weights: Option<Array1<f64>>,
    /// The offset: the `--offset` column, plus ln(years) for `--interval exposure`.
    pub offset: Option<Array1<f64>>,
    /// Remeasurement interval per record (empty when the data has none).
    pub years: Vec<f64>,
    /// The period the model describes (None: not projectable).
    pub period_years: Option<f64>,
    /// What the modelled probability is about.
    pub outcome: Outcome,
    /// Cluster code per record (`--cluster`).
    pub clusters: Option<Vec<u32>>,
    /// Plot code per record (the `--plot` column, else the stand), when asked for.
    pub stands: Option<Vec<u32>>,
    /// Things the user should know about the data.
    pub warnings: Vec<String>,
    /// What data screening found.
    pub screening: super::source::Screening,
}

/// The name used on the command line for an interval kind.
pub fn interval_name(k: IntervalKind) -> &'static str {
    match k {
        IntervalKind::Fixed => "fixed",
        IntervalKind::Annualized => "annualized",
        IntervalKind::Exposure => "exposure",
    }
}

/// Check the combinations of interval, link and response that have no model (exit code 2),
/// before anything is read.
///
/// # Errors
/// [`Error::Usage`] naming the options to use instead.
pub fn check_interval(spec: &SurvivalSpec) -> Result<(), Error> {
    let outcome = match &spec.response {
        SurvivalResponse::Status { outcome } => Some(*outcome),
        SurvivalResponse::Counts { .. } => None,
    };
    if spec.interval != IntervalKind::Fixed
        && spec.years == Years::Default
        && !has_column(&spec.data, &spec.data.names.years)
    {
        return Err(Error::Usage(format!(
            "--interval {} needs the interval of each record: give --years-col COL (the file has no `{}` column)",
            interval_name(spec.interval),
            spec.data.names.years
        )));
    }
    match spec.interval {
        IntervalKind::Exposure if spec.link != Link::Cloglog || outcome != Some(Outcome::Dead) => {
            Err(Error::Usage(
                "--interval exposure models the probability of death with a cloglog link and offset ln(years): use it with --link cloglog --outcome dead".into(),
            ))
        }
        IntervalKind::Annualized if spec.link != Link::Logit || outcome != Some(Outcome::Alive) => {
            Err(Error::Usage(
                "--interval annualized fits an annual logistic survival probability p with P = p^L: use it with --link logit and --outcome alive on a status column".into(),
            ))
        }
        _ => Ok(()),
    }
}

/// Load the records of `spec` for every predictor set in `opts`.
///
/// # Errors
/// Bad terms, options or data (exit code 2).
pub fn load_survival(spec: &SurvivalSpec, opts: &LoadOptions) -> Result<SurvivalData, Error> {
    check_interval(spec)?;
    let mut required: Vec<Required> = Vec::new();
    let mut derived: Vec<DerivedCovariate> = Vec::new();
    for set in &opts.predictor_sets {
        let needs = term_needs(set, &spec.data)?;
        for r in needs.required {
            if !required.iter().any(|q| q.column == r.column) {
                required.push(r);
            }
        }
        for d in needs.derived {
            if !derived.contains(&d) {
                derived.push(d);
            }
        }
    }
    let purpose = match &spec.response {
        SurvivalResponse::Status { .. } => Purpose::Survival,
        SurvivalResponse::Counts { successes, trials } => {
            required.push(Required::new(successes, "--successes"));
            required.push(Required::new(trials, "--trials"));
            Purpose::Counts
        }
    };
    for (col, why) in [
        (&spec.weights, "--weights"),
        (&spec.offset, "--offset"),
        (&opts.cluster, "--cluster"),
        (
            &opts.plot,
            "--plot-effect (the plot column; name it with --plot COL)",
        ),
    ] {
        if let Some(c) = col {
            required.push(Required::new(c, why));
        }
    }
    if opts.stands {
        required.push(Required::new(plot_column(&spec.data), &opts.stands_why));
    }
    let years_col = match &spec.years {
        Years::Column(c) => Some(c.clone()),
        Years::Default if has_column(&spec.data, &spec.data.names.years) => {
            Some(spec.data.names.years.clone())
        }
        _ => None,
    };
    if let Some(c) = &years_col {
        required.push(Required::new(c, "the remeasurement interval"));
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
        derived,
        use_columns: spec.data.use_columns.clone(),
        categorical: spec.data.categorical.clone(),
        units: spec.data.units,
        status_codes: None,
    };
    let Loaded { records, screening } = load_records(&spec.data, load)?;
    let (period_years, years) = resolve_years(spec, &records)?;
    let y = response(spec, &records)?;
    let num = |c: &Option<String>| -> Result<Option<Array1<f64>>, Error> {
        c.as_ref()
            .map(|c| numeric(&records, c).map(Array1::from))
            .transpose()
    };
    let trials = match &spec.response {
        SurvivalResponse::Counts { trials, .. } => Some(Array1::from(numeric(&records, trials)?)),
        SurvivalResponse::Status { .. } => None,
    };
    let weights = num(&spec.weights)?;
    check_counts(spec, &records, &y, trials.as_ref(), weights.as_ref())?;
    let mut offset = num(&spec.offset)?;
    if spec.interval == IntervalKind::Exposure {
        let ln_years: Array1<f64> = years.iter().map(|l| l.ln()).collect();
        offset = Some(match offset {
            Some(o) => o + &ln_years,
            None => ln_years,
        });
    }
    let clusters = opts
        .cluster
        .as_ref()
        .map(|c| codes(&records, c))
        .transpose()?;
    let stands = if opts.stands {
        Some(codes(&records, plot_column(&spec.data))?)
    } else {
        None
    };
    let warnings = records.warnings.clone();
    Ok(SurvivalData {
        records,
        y,
        trials,
        weights,
        offset,
        years,
        period_years,
        outcome,
        clusters,
        stands,
        warnings,
        screening,
    })
}

/// Grouped counts must be whole numbers with 0 ≤ successes ≤ trials, and prior weights must
/// be non-negative; the error names the file, line and column of the first bad record.
fn check_counts(
    spec: &SurvivalSpec,
    records: &Remeasurement,
    y: &Array1<f64>,
    trials: Option<&Array1<f64>>,
    weights: Option<&Array1<f64>>,
) -> Result<(), Error> {
    if let (
        SurvivalResponse::Counts {
            successes,
            trials: tc,
        },
        Some(t),
    ) = (&spec.response, trials)
    {
        for i in 0..y.len() {
            let (k, n) = (y[i], t[i]);
            if n < 0.0 || n.fract() != 0.0 {
                return Err(cell(
                    records,
                    i,
                    tc,
                    format!("{n} is not a whole number of trials"),
                ));
            }
            if k < 0.0 || k.fract() != 0.0 || k > n {
                return Err(cell(
                    records,
                    i,
                    successes,
                    format!("{k} successes out of {n} trials is not a whole number between 0 and the trials"),
                ));
            }
        }
    }
    if let (Some(c), Some(w)) = (&spec.weights, weights) {
        if let Some(i) = w.iter().position(|v| *v < 0.0) {
            return Err(cell(
                records,
                i,
                c,
                format!("{} is not a non-negative weight", w[i]),
            ));
        }
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
        return Err(cell(
            data,
            i,
            &column,
            format!("{} is not a positive number of years", years[i]),
        ));
    }
    let period = match spec.interval {
        IntervalKind::Fixed => common_interval(&years, &data.frame.source)?,
        IntervalKind::Annualized | IntervalKind::Exposure => 1.0,
    };
    Ok((Some(period), years))
}

fn cell(data: &Remeasurement, i: usize, column: &str, message: String) -> Error {
    DataError::Cell {
        file: data.frame.source.clone(),
        line: data.frame.lines.get(i).copied().unwrap_or(0),
        column: column.to_string(),
        message,
    }
    .into()
}

/// A numeric column of the loaded records, every value present.
pub(crate) fn numeric(data: &Remeasurement, column: &str) -> Result<Vec<f64>, Error> {
    match data.frame.column(column) {
        Some(FrameColumn::Numeric(v)) => {
            if let Some(i) = v.iter().position(|x| !x.is_finite()) {
                return Err(cell(data, i, column, "empty or not a finite number".into()));
            }
            Ok(v.clone())
        }
        Some(FrameColumn::Text { first_text, .. }) => {
            let (line, value) = first_text.clone().unwrap_or((0, String::new()));
            Err(DataError::Cell {
                file: data.frame.source.clone(),
                line,
                column: column.to_string(),
                message: format!("\"{value}\" is not a number"),
            }
            .into())
        }
        None => Err(Error::Usage(format!(
            "{}: column `{column}` was not loaded",
            data.frame.source
        ))),
    }
}

/// Integer codes of a column's values (numbers or text), in order of first appearance.
pub(crate) fn codes(data: &Remeasurement, column: &str) -> Result<Vec<u32>, Error> {
    match data.frame.column(column) {
        Some(FrameColumn::Text { codes, .. }) => {
            if let Some(i) = codes.iter().position(|&c| c == u32::MAX) {
                return Err(cell(
                    data,
                    i,
                    column,
                    "empty; every record needs a value".into(),
                ));
            }
            Ok(codes.clone())
        }
        Some(FrameColumn::Numeric(v)) => {
            let mut seen: HashMap<u64, u32> = HashMap::new();
            v.iter()
                .enumerate()
                .map(|(i, x)| {
                    if x.is_nan() {
                        return Err(cell(
                            data,
                            i,
                            column,
                            "empty; every record needs a value".into(),
                        ));
                    }
                    let next = seen.len() as u32;
                    Ok(*seen.entry((x + 0.0).to_bits()).or_insert(next))
                })
                .collect()
        }
        None => Err(Error::Usage(format!(
            "{}: column `{column}` was not loaded",
            data.frame.source
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
