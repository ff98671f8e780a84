//! Detection of complete and quasi-complete separation, when the binomial maximum-likelihood
//! estimate does not exist, by the linear programs of Konis (2007).
//!
//! # When the check runs
//! The linear program costs far more than IRLS on large data, so [`crate::model::glm::fit_glm`]
//! runs it before iterating whenever the data has at most [`ALWAYS_CHECK_MAX_ROWS`] records
//! with non-zero weight, and on larger data only when IRLS fails to converge or ends with a
//! fitted probability within [`EXTREME_MU`] of 0 or 1 : separation drives
//! some fitted probabilities to 0 or 1, so a converged fit with every μ inside
//! (1e-8, 1 − 1e-8) has a maximum-likelihood estimate.

use std::collections::HashSet;

use microlp::{ComparisonOp, OptimizationDirection, Problem, Variable};

use super::glm::{prepare_response, GlmData};
use super::irls::Response;
use super::ModelError;

/// Data with at most this many records of non-zero weight are always checked.
pub const ALWAYS_CHECK_MAX_ROWS: usize = 20_000;

/// A fitted probability this close to 0 or 1 triggers the check on large data.
pub const EXTREME_MU: f64 = 1e-8;

/// LP optima and coefficients below this (on columns scaled to max |x| = 1) count as zero.
const LP_TOL: f64 = 1e-6;

/// Complete or quasi-complete separation.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum SeparationKind {
    /// Some β gives ỹᵢ xᵢᵀβ > 0 for every record: the outcome is perfectly predicted.
    Complete,
    /// Some β gives ỹᵢ xᵢᵀβ ≥ 0 for every record, with equality for some.
    QuasiComplete,
}

impl SeparationKind {
    /// `"complete"` or `"quasi-complete"`.
    pub fn as_str(self) -> &'static str {
        match self {
            SeparationKind::Complete => "complete",
            SeparationKind::QuasiComplete => "quasi-complete",
        }
    }
}

/// A separation found in the data.
#[derive(Debug, Clone, PartialEq, Eq)]
pub struct Separation {
    /// Complete or quasi-complete.
    pub kind: SeparationKind,
    /// Terms with a non-zero coefficient in the separating direction (the intercept is named
    /// only when it separates alone).
    pub terms: Vec<String>,
}

/// Runs the separation check on a data set whatever its size (for example to explain why a
/// Firth fit was chosen).
///
/// # Errors
/// [`ModelError::Invalid`] for inconsistent shapes or values, as [`fit_glm`](super::glm::fit_glm).
pub fn find_separation(data: &GlmData) -> Result<Option<Separation>, ModelError> {
    let r = prepare_response(data)?;
    let x = data.x.as_standard_layout();
    let xs = x
        .as_slice()
        .ok_or_else(|| ModelError::Invalid("design matrix layout".into()))?;
    Ok(detect(xs, data.x.ncols(), &r, data.terms))
}

/// One distinct constraint row: signed, scaled covariates and whether it must hold with
/// equality (a grouped row with both outcomes).
type Row = (Vec<f64>, bool);

fn constraint_rows(x: &[f64], p: usize, r: &Response, scale: &[f64]) -> Vec<Row> {
    let mut seen = HashSet::new();
    let mut rows = Vec::new();
    for (i, xi) in x.chunks_exact(p).enumerate() {
        if r.wt[i] == 0.0 {
            continue;
        }
        let (sign, equality) = match r.y[i] {
            y if y >= 1.0 => (1.0, false),
            y if y <= 0.0 => (-1.0, false),
            _ => (1.0, true),
        };
        let row: Vec<f64> = xi.iter().zip(scale).map(|(v, s)| sign * v / s).collect();
        let key: Vec<u64> = row
            .iter()
            .map(|v| v.to_bits())
            .chain([u64::from(equality)])
            .collect();
        if seen.insert(key) {
            rows.push((row, equality));
        }
    }
    rows
}

fn add_rows(lp: &mut Problem, beta: &[Variable], rows: &[Row], margin: Option<Variable>) {
    for (row, equality) in rows {
        let mut expr: Vec<(Variable, f64)> =
            beta.iter().copied().zip(row.iter().copied()).collect();
        let op = if *equality {
            ComparisonOp::Eq
        } else {
            if let Some(t) = margin {
                expr.push((t, -1.0));
            }
            ComparisonOp::Ge
        };
        expr.retain(|&(_, c)| c != 0.0);
        if !expr.is_empty() {
            lp.add_constraint(expr.as_slice(), op, 0.0);
        }
    }
}

/// Looks for separation in the rows with non-zero weight of a row-major n×p design.
///
/// # Formula
/// With ỹᵢ = +1 for outcome 1 and −1 for outcome 0, maximise Σᵢ ỹᵢ xᵢᵀβ subject to
/// ỹᵢ xᵢᵀβ ≥ 0 (xᵢᵀβ = 0 for grouped rows with both outcomes) and −1 ≤ βⱼ ≤ 1, on columns
/// scaled to max |x| = 1. A positive optimum means separation; its non-zero βⱼ name the terms.
/// It is complete when a second program, maximise t subject to ỹᵢ xᵢᵀβ ≥ t, 0 ≤ t ≤ 1, in the
/// same box, has a positive optimum (a direction that classifies every record strictly);
/// otherwise quasi-complete. A solver failure is reported as no separation found.
pub(crate) fn detect(x: &[f64], p: usize, r: &Response, terms: &[String]) -> Option<Separation> {
    let scale: Vec<f64> = (0..p)
        .map(|j| {
            x.chunks_exact(p)
                .map(|row| row[j].abs())
                .fold(0.0, f64::max)
                .max(f64::MIN_POSITIVE)
        })
        .collect();
    let rows = constraint_rows(x, p, r, &scale);
    let mut objective = vec![0.0; p];
    for (row, equality) in rows.iter().filter(|(_, e)| !e) {
        debug_assert!(!equality);
        for (o, v) in objective.iter_mut().zip(row) {
            *o += v;
        }
    }
    let mut lp = Problem::new(OptimizationDirection::Maximize);
    let beta: Vec<Variable> = objective
        .iter()
        .map(|&c| lp.add_var(c, (-1.0, 1.0)))
        .collect();
    add_rows(&mut lp, &beta, &rows, None);
    let solution = lp.solve().ok()?.into_solution().ok()?;
    if solution.objective() <= LP_TOL {
        return None;
    }
    let intercept = (0..p).find(|&j| x.chunks_exact(p).all(|row| row[j] == 1.0));
    let nonzero: Vec<usize> = (0..p)
        .filter(|&j| solution.var_value(beta[j]).abs() > LP_TOL)
        .collect();
    let named: Vec<String> = nonzero
        .iter()
        .filter(|&&j| Some(j) != intercept || nonzero.len() == 1)
        .map(|&j| terms[j].clone())
        .collect();
    let kind = if rows.iter().any(|(_, e)| *e) || !strictly_separable(&rows, p) {
        SeparationKind::QuasiComplete
    } else {
        SeparationKind::Complete
    };
    Some(Separation { kind, terms: named })
}

fn strictly_separable(rows: &[Row], p: usize) -> bool {
    let mut lp = Problem::new(OptimizationDirection::Maximize);
    let beta: Vec<Variable> = (0..p).map(|_| lp.add_var(0.0, (-1.0, 1.0))).collect();
    let t = lp.add_var(1.0, (0.0, 1.0));
    add_rows(&mut lp, &beta, rows, Some(t));
    match lp.solve().map(|o| o.into_solution()) {
        Ok(Ok(s)) => s.objective() > LP_TOL,
        _ => false,
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    fn binary(x: &[f64], y: &[f64]) -> (Vec<f64>, Response) {
        let design: Vec<f64> = x.iter().flat_map(|&v| [1.0, v]).collect();
        let r = Response::new(y.to_vec(), vec![1.0; y.len()]);
        (design, r)
    }

    fn terms() -> Vec<String> {
        vec!["(intercept)".into(), "x".into()]
    }

    #[test]
    fn complete_separation_is_found() {
        // Derived: y = 1 exactly when x > 5.5.
        let x: Vec<f64> = (1..=10).map(f64::from).collect();
        let y: Vec<f64> = x.iter().map(|&v| f64::from(u8::from(v > 5.5))).collect();
        let (d, r) = binary(&x, &y);
        let s = detect(&d, 2, &r, &terms()).unwrap();
        assert_eq!(s.kind, SeparationKind::Complete);
        assert_eq!(s.terms, vec!["x".to_string()]);
    }

    #[test]
    fn quasi_complete_when_a_tie_straddles_the_cut() {
        // Derived: y = 1 for x > 5, y = 0 for x < 5, both outcomes at x = 5.
        let x = [1.0, 2.0, 3.0, 5.0, 5.0, 7.0, 8.0, 9.0];
        let y = [0.0, 0.0, 0.0, 0.0, 1.0, 1.0, 1.0, 1.0];
        let (d, r) = binary(&x, &y);
        let s = detect(&d, 2, &r, &terms()).unwrap();
        assert_eq!(s.kind, SeparationKind::QuasiComplete);
    }

    #[test]
    fn overlapping_data_are_not_separated() {
        let x = [1.0, 2.0, 3.0, 4.0, 5.0, 6.0];
        let y = [0.0, 1.0, 0.0, 1.0, 0.0, 1.0];
        let (d, r) = binary(&x, &y);
        assert_eq!(detect(&d, 2, &r, &terms()), None);
    }
}
