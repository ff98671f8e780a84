//! Terms → design matrix: expands bare categorical names into indicators, evaluates every term
//! on every record, and reports the first record where a term cannot be evaluated.

use std::collections::BTreeMap;

use ndarray::Array2;
use serde::{Deserialize, Serialize};

use super::terms::{Factor, Term, Transform, INTERCEPT};
use super::ModelError;
use crate::data::{DataError, Frame, FrameColumn};

/// Levels of a categorical variable and its reference level (the one without an indicator).
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct CategoricalLevels {
    /// All levels, in byte order.
    pub levels: Vec<String>,
    /// The reference level.
    pub reference: String,
}

/// How to build a design matrix.
#[derive(Debug, Clone, Default)]
pub struct DesignOptions {
    /// Add an intercept column first.
    pub intercept: bool,
    /// Reference level per categorical variable (`--reference COL=LEVEL`); otherwise the first
    /// level in byte order.
    pub references: BTreeMap<String, String>,
    /// Columns the user declared categorical (`--categorical`): used as labels without question.
    pub declared_categorical: Vec<String>,
}

/// The n×p design matrix and what its columns mean.
#[derive(Debug, Clone)]
pub struct Design {
    /// Row-major n×p matrix, one row per record of the frame.
    pub x: Array2<f64>,
    /// Column names (canonical term labels, `(intercept)` first when present).
    pub names: Vec<String>,
    /// The expanded terms, one per column after the intercept.
    pub terms: Vec<Term>,
    /// Whether column 0 is the intercept.
    pub intercept: bool,
    /// The categorical variables used, with levels and reference.
    pub categorical: BTreeMap<String, CategoricalLevels>,
    /// Range [min, max] of every numeric variable used, over the records.
    pub ranges: BTreeMap<String, [f64; 2]>,
    /// Things the user should know (e.g. a mostly numeric column read as categorical).
    pub warnings: Vec<String>,
}

/// Build the design matrix of `terms` over the records of `frame`.
///
/// # Errors
/// - [`ModelError::Term`]: a variable that is neither a column nor a derived covariate, a
///   level that does not occur, a transform of a text column, an indicator of a numeric
///   column, a reference level that does not occur;
/// - [`ModelError::Data`]: an empty cell or a value where the transform is undefined, naming
///   file, line and column;
/// - [`ModelError::RankDeficient`]: a constant predictor alongside an intercept.
pub fn build_design(
    terms: &[Term],
    frame: &Frame,
    opts: &DesignOptions,
) -> Result<Design, ModelError> {
    for (var, level) in &opts.references {
        match frame.column(var) {
            Some(FrameColumn::Text { levels, .. }) if levels.contains(level) => {}
            Some(FrameColumn::Text { levels, .. }) => {
                return Err(ModelError::Invalid(format!(
                "--reference {var}={level}: `{level}` is not a level of `{var}` in {} (levels: {})",
                frame.source,
                levels.join(", ")
            )))
            }
            _ if !terms
                .iter()
                .any(|t| t.factors.iter().any(|f| f.var() == var)) =>
            {
                return Err(ModelError::Invalid(format!(
                    "--reference {var}={level}: no predictor term uses `{var}`"
                )))
            }
            _ => {
                return Err(ModelError::Invalid(format!(
                    "--reference {var}={level}: `{var}` is not a categorical column of {}",
                    frame.source
                )))
            }
        }
    }
    let mut categorical = BTreeMap::new();
    let mut expanded: Vec<Term> = Vec::new();
    let warnings = Vec::new();
    for term in terms {
        for f in &term.factors {
            let v = f.var();
            if opts.declared_categorical.iter().any(|c| c == v) {
                continue;
            }
            if let Some(message) = mixed_column(v, frame) {
                return Err(ModelError::Term {
                    term: term.label(),
                    message,
                });
            }
        }
    }
    for term in terms {
        for t in expand(term, frame, opts, &mut categorical)? {
            if expanded.iter().any(|e| e.label() == t.label()) {
                return Err(ModelError::Term {
                    term: t.label(),
                    message: "appears twice after expanding categorical variables".into(),
                });
            }
            expanded.push(t);
        }
    }
    let offset = usize::from(opts.intercept);
    let p = expanded.len() + offset;
    let n = frame.len();
    let mut x = Array2::<f64>::zeros((n, p));
    if opts.intercept {
        x.column_mut(0).fill(1.0);
    }
    let mut ranges = BTreeMap::new();
    for (j, term) in expanded.iter().enumerate() {
        let mut col = vec![1.0; n];
        for factor in &term.factors {
            multiply_factor(&mut col, factor, term, frame, &mut ranges)?;
        }
        x.column_mut(j + offset)
            .assign(&ndarray::ArrayView1::from(&col));
        if opts.intercept && n > 1 && col.iter().all(|v| *v == col[0]) {
            return Err(ModelError::RankDeficient {
                term: term.label(),
                message: format!(
                    "term `{}` is constant (every record of {} has the value {}), so its effect cannot be told apart from the intercept; drop it",
                    term.label(),
                    frame.source,
                    col[0]
                ),
            });
        }
    }
    let mut names: Vec<String> = Vec::with_capacity(p);
    if opts.intercept {
        names.push(INTERCEPT.to_string());
    }
    names.extend(expanded.iter().map(Term::label));
    Ok(Design {
        x,
        names,
        terms: expanded,
        intercept: opts.intercept,
        categorical,
        ranges,
        warnings,
    })
}

/// A text column whose values are mostly numbers is almost always a numeric column with a
/// malformed cell (`12,5`), which would otherwise silently turn a numeric predictor into a
/// factor; it is refused unless declared categorical.
fn mixed_column(var: &str, frame: &Frame) -> Option<String> {
    let Some(FrameColumn::Text {
        levels,
        first_text: Some((line, value)),
        ..
    }) = frame.column(var)
    else {
        return None;
    };
    let numeric = levels.iter().filter(|l| l.parse::<f64>().is_ok()).count();
    (2 * numeric > levels.len()).then(|| {
        format!(
            "`{var}` mixes numbers and text: {}, line {line}, holds \"{value}\", which is not a number; fix that cell, or declare --categorical {var} to use the values as labels",
            frame.source
        )
    })
}

/// Expand bare categorical names (also inside interactions) into indicators of every
/// non-reference level.
fn expand(
    term: &Term,
    frame: &Frame,
    opts: &DesignOptions,
    categorical: &mut BTreeMap<String, CategoricalLevels>,
) -> Result<Vec<Term>, ModelError> {
    let mut out: Vec<Vec<Factor>> = vec![Vec::new()];
    for factor in &term.factors {
        let options: Vec<Factor> = match factor {
            Factor::Numeric {
                var,
                transform: Transform::Identity,
            } => match frame.column(var) {
                Some(FrameColumn::Text { levels, .. }) => {
                    let spec = register(var, levels, opts, categorical);
                    levels
                        .iter()
                        .filter(|l| **l != spec.reference)
                        .map(|l| Factor::Indicator {
                            var: var.clone(),
                            level: l.clone(),
                        })
                        .collect()
                }
                _ => vec![factor.clone()],
            },
            Factor::Indicator { var, level } => match frame.column(var) {
                Some(FrameColumn::Text { levels, .. }) => {
                    if !levels.contains(level) {
                        return Err(ModelError::Term {
                            term: term.label(),
                            message: format!(
                                "`{level}` is not a level of `{var}` in {} (levels: {})",
                                frame.source,
                                levels.join(", ")
                            ),
                        });
                    }
                    register(var, levels, opts, categorical);
                    vec![factor.clone()]
                }
                Some(FrameColumn::Numeric(_)) => {
                    return Err(ModelError::Term {
                        term: term.label(),
                        message: format!(
                            "`{var}` is a numeric column; declare it with --categorical {var} to use its levels"
                        ),
                    })
                }
                None => return Err(unknown_variable(term, var, frame)),
            },
            Factor::Numeric { .. } => vec![factor.clone()],
        };
        if options.is_empty() {
            return Err(ModelError::Term {
                term: term.label(),
                message: format!(
                    "`{}` has a single level, so it has no effect to estimate",
                    factor.var()
                ),
            });
        }
        out = out
            .into_iter()
            .flat_map(|prefix| {
                options.iter().map(move |f| {
                    let mut v = prefix.clone();
                    v.push(f.clone());
                    v
                })
            })
            .collect();
    }
    Ok(out.into_iter().map(|factors| Term { factors }).collect())
}

fn register(
    var: &str,
    levels: &[String],
    opts: &DesignOptions,
    categorical: &mut BTreeMap<String, CategoricalLevels>,
) -> CategoricalLevels {
    categorical
        .entry(var.to_string())
        .or_insert_with(|| CategoricalLevels {
            levels: levels.to_vec(),
            reference: opts
                .references
                .get(var)
                .cloned()
                .unwrap_or_else(|| levels.first().cloned().unwrap_or_default()),
        })
        .clone()
}

fn unknown_variable(term: &Term, var: &str, frame: &Frame) -> ModelError {
    let names: Vec<&str> = frame.columns.keys().map(String::as_str).collect();
    ModelError::Term {
        term: term.label(),
        message: format!(
            "no column or derived covariate `{var}` in {} (available: {})",
            frame.source,
            names.join(", ")
        ),
    }
}

fn multiply_factor(
    col: &mut [f64],
    factor: &Factor,
    term: &Term,
    frame: &Frame,
    ranges: &mut BTreeMap<String, [f64; 2]>,
) -> Result<(), ModelError> {
    let var = factor.var();
    let column = frame
        .column(var)
        .ok_or_else(|| unknown_variable(term, var, frame))?;
    let cell_error = |i: usize, message: String| {
        ModelError::Data(DataError::Cell {
            file: frame.source.clone(),
            line: frame.lines.get(i).copied().unwrap_or(0),
            column: var.to_string(),
            message,
        })
    };
    match (factor, column) {
        (Factor::Numeric { transform, .. }, FrameColumn::Numeric(values)) => {
            let mut lo = f64::INFINITY;
            let mut hi = f64::NEG_INFINITY;
            for (i, (c, &v)) in col.iter_mut().zip(values).enumerate() {
                if v.is_nan() {
                    return Err(cell_error(
                        i,
                        format!("empty, but term `{}` needs a value", term.label()),
                    ));
                }
                let t = transform.apply(v);
                if !t.is_finite() {
                    return Err(cell_error(
                        i,
                        format!("term `{}` is undefined at {var} = {v}", term.label()),
                    ));
                }
                lo = lo.min(v);
                hi = hi.max(v);
                *c *= t;
            }
            let r = ranges.entry(var.to_string()).or_insert([lo, hi]);
            r[0] = r[0].min(lo);
            r[1] = r[1].max(hi);
        }
        (Factor::Indicator { level, .. }, FrameColumn::Text { levels, codes, .. }) => {
            let code = levels.iter().position(|l| l == level).unwrap_or(usize::MAX);
            for (i, (c, &k)) in col.iter_mut().zip(codes).enumerate() {
                if k == u32::MAX {
                    return Err(cell_error(
                        i,
                        format!("empty, but term `{}` needs a level", term.label()),
                    ));
                }
                if k as usize != code {
                    *c = 0.0;
                }
            }
        }
        (Factor::Numeric { .. }, FrameColumn::Text { first_text, .. }) => {
            let detail = match first_text {
                Some((line, value)) => {
                    format!("line {line} holds \"{value}\", which is not a number")
                }
                None => "it was declared categorical".to_string(),
            };
            return Err(ModelError::Term {
                term: term.label(),
                message: format!(
                    "`{var}` in {} is not numeric ({detail}); a transform needs numbers",
                    frame.source
                ),
            });
        }
        (Factor::Indicator { .. }, FrameColumn::Numeric(_)) => {
            return Err(ModelError::Term {
                term: term.label(),
                message: format!(
                    "`{var}` is a numeric column; declare it with --categorical {var}"
                ),
            })
        }
    }
    Ok(())
}
