//! The load stage of a growth fit: read the records once (pair file or history), with every
//! column the requested predictor sets need, and compute the response. `fit growth` fits one
//! predictor set on the result; `rank --growth` fits several on the same records.

use super::growth::{GrowthSpec, GrowthTarget};
use super::source::{load_records, plot_column, record_names, Screening};
use super::{common_interval, term_needs, Years};
use crate::data::{
    DataError, DerivedCovariate, FrameColumn, Outcome, Purpose, RemeasureSpec, Remeasurement,
    Required,
};
use crate::model::file::GrowthResponse;
use crate::model::growth::growth_response;
use crate::Error;

/// Growth records ready for fitting.
#[derive(Debug, Clone)]
pub struct GrowthData {
    /// The records that enter the fit (records whose response is undefined already left out).
    pub records: Remeasurement,
    /// The response per record.
    pub y: Vec<f64>,
    /// Which response.
    pub response: GrowthResponse,
    /// The period the model describes (None: not projectable).
    pub period_years: Option<f64>,
    /// Records left out because their basal-area increment was ≤ 0.
    pub non_positive_increment: usize,
    /// Plot code per record, when asked for (cross-validation folds).
    pub plots: Option<Vec<u32>>,
    /// Things the user should know.
    pub warnings: Vec<String>,
    /// What data screening found.
    pub screening: Screening,
}

/// Load the growth records of `spec` with the columns of every predictor set in `sets`;
/// with `plots`, also the plot column (its reason for the missing-column message), and the
/// `extra` (column, reason) pairs of options such as `--cluster`.
///
/// # Errors
/// Bad terms, options or data (exit code 2).
pub fn load_growth(
    spec: &GrowthSpec,
    sets: &[String],
    plots: Option<&str>,
    extra: &[(String, &'static str)],
) -> Result<GrowthData, Error> {
    let mut required: Vec<Required> = Vec::new();
    let mut derived: Vec<DerivedCovariate> = Vec::new();
    for set in sets {
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
    let names = record_names(&spec.data);
    let years_col = match &spec.years {
        Years::Column(c) => Some(c.clone()),
        Years::Default if super::source::has_column(&spec.data, &names.years) => {
            Some(names.years.clone())
        }
        _ => None,
    };
    let purpose = match &spec.target {
        GrowthTarget::Column(c) => {
            required.push(Required::new(c, "--response-col"));
            Purpose::Counts
        }
        GrowthTarget::Increment(_) => Purpose::Growth,
    };
    if let (Some(c), GrowthTarget::Increment(_)) = (&years_col, &spec.target) {
        required.push(Required::new(c, "the remeasurement interval"));
    }
    if let Some(why) = plots {
        required.push(Required::new(plot_column(&spec.data), why));
    }
    for (column, why) in extra {
        if !required.iter().any(|q| &q.column == column) {
            required.push(Required::new(column, *why));
        }
    }
    let load = RemeasureSpec {
        names: spec.data.names.clone(),
        purpose,
        one_means: Outcome::Alive,
        required,
        derived,
        use_columns: spec.data.use_columns.clone(),
        categorical: spec.data.categorical.clone(),
        units: spec.data.units,
        status_codes: None,
    };
    let loaded = load_records(&spec.data, load)?;
    let mut data = loaded.records;
    let mut warnings = data.warnings.clone();
    let frame = &data.frame;
    let column = |c: &str| numbers(frame, c);
    let (response, y, keep, period_years, excluded) = match &spec.target {
        GrowthTarget::Column(c) => {
            let y = column(c)?;
            let n = y.len();
            (GrowthResponse::Column, y, vec![true; n], None, 0)
        }
        GrowthTarget::Increment(kind) => {
            let d1 = column(&names.dbh)?;
            let d2 = column(&names.dbh2)?;
            let (years, period, annualize) = match (&spec.years, &years_col) {
                (Years::Fixed(n), _) => (vec![*n; d1.len()], Some(*n), false),
                (_, Some(c)) => {
                    let years = column(c)?;
                    match common_interval(&years, &frame.source) {
                        Ok(p) if *kind == GrowthResponse::LnBai => (years, Some(p), false),
                        Ok(p) => (years, Some(p), true),
                        Err(_) => {
                            warnings.push("remeasurement intervals differ; the increment is divided by each record's interval and the model describes one year".to_string());
                            (years, Some(1.0), true)
                        }
                    }
                }
                _ if *kind == GrowthResponse::AnnualIncrement => {
                    return Err(Error::Usage("--response annual_increment needs the remeasurement interval: give --years N or --years-col COL".into()))
                }
                _ => (vec![1.0; d1.len()], None, false),
            };
            let period = if *kind == GrowthResponse::AnnualIncrement {
                Some(1.0)
            } else {
                period
            };
            let mut y = Vec::with_capacity(d1.len());
            let mut keep = Vec::with_capacity(d1.len());
            for i in 0..d1.len() {
                match growth_response(*kind, d1[i], d2[i], years[i], annualize) {
                    Ok(v) => {
                        y.push(v);
                        keep.push(true);
                    }
                    Err(_) => keep.push(false),
                }
            }
            let excluded = keep.iter().filter(|k| !**k).count();
            (*kind, y, keep, period, excluded)
        }
    };
    if excluded > 0 {
        warnings.push(format!("{excluded} records with a basal-area increment ≤ 0 (second diameter not larger than the first) were left out"));
        data.frame.retain(&keep);
    }
    if period_years.is_none() && response != GrowthResponse::Column {
        warnings.push("no remeasurement interval was given (--years N or a `years` column), so the model file has no period_years and cannot drive a projection".into());
    }
    let plots = match plots {
        Some(_) => Some(super::load::codes(&data, plot_column(&spec.data))?),
        None => None,
    };
    Ok(GrowthData {
        records: data,
        y,
        response,
        period_years,
        non_positive_increment: excluded,
        plots,
        warnings,
        screening: loaded.screening,
    })
}

/// A numeric column of the loaded records.
fn numbers(frame: &crate::data::Frame, c: &str) -> Result<Vec<f64>, Error> {
    match frame.column(c) {
        Some(FrameColumn::Numeric(v)) => Ok(v.clone()),
        Some(FrameColumn::Text { first_text, .. }) => {
            let (line, value) = first_text.clone().unwrap_or((0, String::new()));
            Err(DataError::Cell {
                file: frame.source.clone(),
                line,
                column: c.to_string(),
                message: format!("\"{value}\" is not a number"),
            }
            .into())
        }
        None => Err(Error::Usage(format!(
            "{}: column `{c}` was not loaded",
            frame.source
        ))),
    }
}
