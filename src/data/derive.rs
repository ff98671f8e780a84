//! Deciding where each derived covariate comes from, computing the computed ones per stand,
//! and validating positive-number columns.

use super::columns::EMPTY_CODE;
use super::covariates::{DerivedCovariate, StandCovariates};
use super::frame::{Frame, FrameColumn};
use super::remeasure::RemeasureSpec;
use super::DataError;

/// Where the requested derived covariates come from.
#[derive(Debug, Default)]
pub(super) struct StandPlan {
    /// Computed per stand from dbh and expansion.
    pub compute: Vec<DerivedCovariate>,
    /// Taken from the file column of the same name.
    pub from_field: Vec<DerivedCovariate>,
}

impl StandPlan {
    /// Decide, for each requested derived covariate, whether it is computed or read, and stop
    /// on a name clash (a file column that would be shadowed by a computed covariate).
    pub fn new(
        spec: &RemeasureSpec,
        header: &[String],
        source: &str,
        warnings: &mut Vec<String>,
    ) -> Result<Self, DataError> {
        let has = |c: &str| header.iter().any(|h| h == c);
        let missing = |column: &str, why: String| DataError::MissingColumn {
            file: source.to_string(),
            column: column.to_string(),
            why,
            available: header.join(", "),
        };
        let names = &spec.names;
        for u in &spec.use_columns {
            if !has(u) {
                return Err(missing(u, format!("--use-column {u}")));
            }
        }
        let computable = has(&names.stand) && has(&names.expansion);
        let mut plan = StandPlan::default();
        for &d in &spec.derived {
            if plan.compute.contains(&d) || plan.from_field.contains(&d) {
                continue;
            }
            let name = d.name();
            let chosen = spec.use_columns.iter().any(|u| u == name);
            if chosen || (has(name) && !computable) {
                let why = if chosen {
                    format!("--use-column {name}")
                } else {
                    "the file has no stand and expansion columns to compute it from".to_string()
                };
                warnings.push(format!(
                    "{source}: {name} is taken from the file's column \"{name}\" ({why}); projections recompute {name} from the tree list"
                ));
                plan.from_field.push(d);
            } else if has(name) {
                return Err(DataError::cell(
                    source,
                    1,
                    name,
                    format!(
                        "{name} is also a derived covariate that stemcast computes per stand from \"{}\" and \"{}\"; use --use-column {name} to use the column's values (projections recompute {name}), or rename the column",
                        names.stand, names.expansion
                    ),
                ));
            } else if !computable {
                let absent = if has(&names.stand) {
                    &names.expansion
                } else {
                    &names.stand
                };
                return Err(missing(
                    absent,
                    format!(
                        "the derived covariate {name} is computed per stand from \"{}\", \"{}\" and \"{}\"",
                        names.stand, names.dbh, names.expansion
                    ),
                ));
            } else {
                plan.compute.push(d);
            }
        }
        Ok(plan)
    }

    /// True when some covariate is computed per stand.
    pub fn computes(&self) -> bool {
        !self.compute.is_empty()
    }
}

/// Error unless `column` holds a finite number > 0 on every row where `rows` is true.
/// `what` completes "… is not {what}" (e.g. "a positive diameter").
pub(super) fn check_positive(
    frame: &Frame,
    column: &str,
    rows: &[bool],
    what: &str,
) -> Result<(), DataError> {
    let Some(col) = frame.columns.get(column) else {
        return Ok(());
    };
    for (i, _) in rows.iter().enumerate().filter(|(_, &r)| r) {
        let error =
            |message: String| DataError::cell(&frame.source, frame.lines[i], column, message);
        if col.is_missing(i) {
            return Err(error(format!("the cell is empty; it needs {what}")));
        }
        match col.number(i) {
            Err(text) => return Err(error(format!("\"{text}\" is not a number"))),
            Ok(v) if !(v.is_finite() && v > 0.0) => {
                let text = col.text(i).unwrap_or_default();
                return Err(error(format!("{text} is not {what}")));
            }
            Ok(_) => {}
        }
    }
    Ok(())
}

/// Compute the planned covariates per stand from every row with a first diameter, and add
/// them to the frame (`NaN` on the other rows).
pub(super) fn add_derived(
    frame: &mut Frame,
    plan: &StandPlan,
    spec: &RemeasureSpec,
    has_first: &[bool],
) -> Result<(), DataError> {
    if !plan.computes() {
        return Ok(());
    }
    let names = &spec.names;
    check_positive(
        frame,
        &names.expansion,
        has_first,
        "a positive expansion factor",
    )?;
    let n = frame.len();
    let number_column = |name: &str| -> Vec<f64> {
        match frame.columns.get(name) {
            Some(col) => (0..n).map(|i| col.number(i).unwrap_or(f64::NAN)).collect(),
            None => vec![f64::NAN; n],
        }
    };
    let dbh = number_column(&names.dbh);
    let expansion = number_column(&names.expansion);

    // Group rows by stand code (the stand column is read as text) with a counting sort.
    let (n_stands, stand_codes) = match frame.columns.get(&names.stand) {
        Some(FrameColumn::Text { levels, codes, .. }) => (levels.len(), codes.as_slice()),
        _ => (0, &[][..]),
    };
    let mut starts = vec![0usize; n_stands + 1];
    for (i, &code) in stand_codes.iter().enumerate() {
        if !has_first[i] {
            continue;
        }
        if code == EMPTY_CODE {
            return Err(DataError::cell(
                &frame.source,
                frame.lines[i],
                &names.stand,
                "the stand is empty; every tree needs a stand to compute stand covariates",
            ));
        }
        starts[code as usize + 1] += 1;
    }
    for s in 0..n_stands {
        starts[s + 1] += starts[s];
    }
    let mut fill = starts.clone();
    let mut rows = vec![0usize; starts[n_stands]];
    for (i, &code) in stand_codes.iter().enumerate() {
        if has_first[i] {
            rows[fill[code as usize]] = i;
            fill[code as usize] += 1;
        }
    }

    let mut out: Vec<Vec<f64>> = vec![vec![f64::NAN; n]; plan.compute.len()];
    let mut cov = StandCovariates::default();
    let (mut d, mut e) = (Vec::new(), Vec::new());
    for s in 0..n_stands {
        let members = &rows[starts[s]..starts[s + 1]];
        d.clear();
        e.clear();
        d.extend(members.iter().map(|&i| dbh[i]));
        e.extend(members.iter().map(|&i| expansion[i]));
        cov.compute_into(&d, &e, spec.units);
        for (k, &which) in plan.compute.iter().enumerate() {
            for (j, &i) in members.iter().enumerate() {
                out[k][i] = cov.value(which, j);
            }
        }
    }
    for (which, values) in plan.compute.iter().zip(out) {
        frame
            .columns
            .insert(which.name().to_string(), FrameColumn::Numeric(values));
    }
    Ok(())
}
