//! Linear predictors compiled for the projector: every term resolved to a covariate source
//! (tree array, stand scalar or attribute column), categorical levels resolved to integer
//! codes and unit conversions folded into a scale, so the sub-step loop only does arithmetic.

use std::collections::BTreeMap;

use super::design::CategoricalLevels;
use super::fastmath;
use super::stored::LinearPredictor;
use super::terms::{Factor, Transform};
use crate::data::Units;
use crate::data::{AttributeValues, TreeList};

/// cm per inch.
pub use super::compile_error::CompileError;

pub(crate) const CM_PER_IN: f64 = 2.54;
/// Hectares per acre expressed as "per acre × this = per hectare".
pub(crate) const PER_AC_TO_PER_HA: f64 = 2.471_053_8;
/// ft²/ac per m²/ha: (100/2.54)² / 144 ft² per m², divided by acres per hectare.
pub(crate) const FT2_AC_PER_M2_HA: f64 =
    (100.0 / CM_PER_IN) * (100.0 / CM_PER_IN) / 144.0 / PER_AC_TO_PER_HA;

/// Where a factor reads its value.
#[derive(Debug, Clone, Copy, PartialEq)]
pub(crate) enum Source {
    /// Tree DBH.
    Dbh,
    /// Basal area of larger trees.
    Bal,
    /// DBH / QMD.
    RelDbh,
    /// Stand basal area (a stand scalar).
    Ba,
    /// Quadratic mean diameter (a stand scalar).
    Qmd,
    /// Stems per area (a stand scalar).
    Stems,
    /// A numeric attribute column.
    Numeric(usize),
    /// Indicator of a level code of a categorical attribute column (`None`: no tree has it).
    Indicator(usize, Option<u32>),
}

impl Source {
    fn is_stand(self) -> bool {
        matches!(self, Source::Ba | Source::Qmd | Source::Stems)
    }
}

#[derive(Debug, Clone, Copy, PartialEq)]
pub(crate) struct CompiledFactor {
    pub source: Source,
    pub scale: f64,
    pub transform: Transform,
}

#[derive(Debug, Clone, PartialEq)]
struct CompiledTerm {
    coef: usize,
    factors: Vec<CompiledFactor>,
    stand_only: bool,
}

/// The covariates of the live records at the start of a sub-step (metric units).
pub(crate) struct Covariates<'a> {
    pub dbh: &'a [f64],
    pub bal: &'a [f64],
    pub tree: &'a [u32],
    pub ba: f64,
    pub qmd: f64,
    pub stems: f64,
    pub numeric: &'a [Vec<f64>],
    pub codes: &'a [Vec<u32>],
}

/// A linear predictor ready for evaluation on a stand.
#[derive(Debug, Clone, PartialEq)]
pub struct CompiledPredictor {
    intercept: Option<usize>,
    terms: Vec<CompiledTerm>,
    /// Variables with a fitted range: (name, source, scale, [lo, hi]).
    pub(crate) ranged: Vec<(String, Source, f64, [f64; 2])>,
}

impl CompiledPredictor {
    /// Resolve every term of `predictor` against the trees; `units` are the model's.
    pub(crate) fn compile(
        predictor: &LinearPredictor,
        categorical: &BTreeMap<String, CategoricalLevels>,
        units: Units,
        ranges: Option<&BTreeMap<String, [f64; 2]>>,
        trees: &TreeList,
    ) -> Result<CompiledPredictor, CompileError> {
        let (dbh_scale, area_scale, ba_scale) = match units {
            Units::Metric => (1.0, 1.0, 1.0),
            Units::Imperial => (1.0 / CM_PER_IN, 1.0 / PER_AC_TO_PER_HA, FT2_AC_PER_M2_HA),
        };
        let layout = AttributeLayout::of(trees);
        let resolve_numeric = |term: &str, var: &str| -> Result<(Source, f64), CompileError> {
            Ok(match var {
                "dbh" => (Source::Dbh, dbh_scale),
                "bal" => (Source::Bal, ba_scale),
                "ba" => (Source::Ba, ba_scale),
                "qmd" => (Source::Qmd, dbh_scale),
                "rel_dbh" => (Source::RelDbh, 1.0),
                "stems" => (Source::Stems, area_scale),
                _ => match layout.find(var) {
                    Some((k, true)) => (Source::Numeric(k), 1.0),
                    Some((_, false)) => {
                        return Err(CompileError::WrongKind {
                            term: term.into(),
                            var: var.into(),
                            expected: "a number",
                        })
                    }
                    None => {
                        return Err(CompileError::UnknownVariable {
                            term: term.into(),
                            var: var.into(),
                        })
                    }
                },
            })
        };
        // Every level the trees carry must be known to the model for the variables it uses.
        for (var, levels) in categorical {
            if let Some(AttributeValues::Categorical { levels: have, .. }) =
                trees.attribute(var).map(|a| &a.values)
            {
                if let Some(bad) = have.iter().find(|l| !levels.levels.contains(l)) {
                    return Err(CompileError::UnknownLevel {
                        var: var.clone(),
                        level: bad.clone(),
                        known: levels.levels.clone(),
                    });
                }
            }
        }
        let offset = usize::from(predictor.intercept.is_some());
        let mut terms = Vec::with_capacity(predictor.terms.len());
        for (t, term) in predictor.terms.iter().enumerate() {
            let label = term.label();
            let mut factors = Vec::with_capacity(term.factors.len());
            for f in &term.factors {
                factors.push(match f {
                    Factor::Numeric { var, transform } => {
                        let (source, scale) = resolve_numeric(&label, var)?;
                        CompiledFactor {
                            source,
                            scale,
                            transform: *transform,
                        }
                    }
                    Factor::Indicator { var, level } => match layout.find(var) {
                        Some((k, false)) => CompiledFactor {
                            source: Source::Indicator(k, layout.code(trees, var, level)),
                            scale: 1.0,
                            transform: Transform::Identity,
                        },
                        Some((_, true)) => {
                            return Err(CompileError::WrongKind {
                                term: label,
                                var: var.clone(),
                                expected: "a categorical attribute",
                            })
                        }
                        None => {
                            return Err(CompileError::UnknownVariable {
                                term: label,
                                var: var.clone(),
                            })
                        }
                    },
                });
            }
            let stand_only = factors.iter().all(|f| f.source.is_stand());
            terms.push(CompiledTerm {
                coef: t + offset,
                factors,
                stand_only,
            });
        }
        let mut ranged = Vec::new();
        for (var, range) in ranges.into_iter().flatten() {
            if let Ok((source, scale)) = resolve_numeric("", var) {
                ranged.push((var.clone(), source, scale, *range));
            }
        }
        Ok(CompiledPredictor {
            intercept: predictor.intercept.map(|_| 0),
            terms,
            ranged,
        })
    }

    /// True when some term reads a stand-level covariate (ba, bal, qmd, rel_dbh, stems).
    pub fn depends_on_stand(&self) -> bool {
        self.terms.iter().flat_map(|t| &t.factors).any(|f| {
            matches!(
                f.source,
                Source::Bal | Source::RelDbh | Source::Ba | Source::Qmd | Source::Stems
            )
        })
    }

    /// η for every live record: `eta[i] = Σ coef · Π factor values`. `tmp` is scratch of the
    /// same length.
    pub(crate) fn eval(&self, coefs: &[f64], cov: &Covariates, eta: &mut [f64], tmp: &mut [f64]) {
        let mut constant = self.intercept.map_or(0.0, |k| coefs[k]);
        for term in self.terms.iter().filter(|t| t.stand_only) {
            let mut v = coefs[term.coef];
            for f in &term.factors {
                v *= f.transform.apply(f.scale * stand_value(f.source, cov));
            }
            constant += v;
        }
        eta.fill(constant);
        for term in self.terms.iter().filter(|t| !t.stand_only) {
            let coef = coefs[term.coef];
            match term.factors.as_slice() {
                [only] => apply_factor(only, cov, eta, Combine::Add(coef)),
                factors => {
                    tmp.fill(coef);
                    for f in factors {
                        apply_factor(f, cov, tmp, Combine::Multiply);
                    }
                    for (e, t) in eta.iter_mut().zip(tmp.iter()) {
                        *e += t;
                    }
                }
            }
        }
    }
}

/// How a factor's values enter the output array.
#[derive(Debug, Clone, Copy)]
enum Combine {
    /// `out[i] *= v_i` (building a product term in scratch).
    Multiply,
    /// `out[i] += c · v_i` (a single-factor term straight into η).
    Add(f64),
}

#[inline(always)]
fn each(out: &mut [f64], xs: &[f64], how: Combine, f: impl Fn(f64) -> f64) {
    match how {
        Combine::Multiply => {
            for (t, &x) in out.iter_mut().zip(xs) {
                *t *= f(x);
            }
        }
        Combine::Add(c) => {
            for (t, &x) in out.iter_mut().zip(xs) {
                *t += c * f(x);
            }
        }
    }
}

fn stand_value(source: Source, cov: &Covariates) -> f64 {
    match source {
        Source::Ba => cov.ba,
        Source::Qmd => cov.qmd,
        Source::Stems => cov.stems,
        _ => f64::NAN,
    }
}

/// Combine `transform(scale · x_i)` into `out`, specialised per source and transform so that
/// the common cases compile to straight loops.
fn apply_factor(f: &CompiledFactor, cov: &Covariates, out: &mut [f64], how: Combine) {
    let s = f.scale;
    match f.source {
        Source::Dbh => by_transform(f.transform, out, cov.dbh, s, how, true),
        Source::Bal => by_transform(f.transform, out, cov.bal, s, how, false),
        Source::RelDbh => by_transform(f.transform, out, cov.dbh, s / cov.qmd, how, true),
        Source::Ba | Source::Qmd | Source::Stems => {
            let v = f.transform.apply(s * stand_value(f.source, cov));
            match how {
                Combine::Multiply => out.iter_mut().for_each(|t| *t *= v),
                Combine::Add(c) => out.iter_mut().for_each(|t| *t += c * v),
            }
        }
        Source::Numeric(k) => {
            let col = &cov.numeric[k];
            for (t, &r) in out.iter_mut().zip(cov.tree) {
                let v = f.transform.apply(s * col[r as usize]);
                match how {
                    Combine::Multiply => *t *= v,
                    Combine::Add(c) => *t += c * v,
                }
            }
        }
        Source::Indicator(k, code) => {
            let col = &cov.codes[k];
            for (t, &r) in out.iter_mut().zip(cov.tree) {
                let hit = Some(col[r as usize]) == code;
                match how {
                    Combine::Multiply if !hit => *t = 0.0,
                    Combine::Add(c) if hit => *t += c,
                    _ => {}
                }
            }
        }
    }
}

/// `diameters`: the values are positive diameters (or ratios of them), so the inlined
/// logarithm applies.
#[inline]
fn by_transform(tr: Transform, out: &mut [f64], xs: &[f64], s: f64, how: Combine, diameters: bool) {
    match tr {
        Transform::Identity => each(out, xs, how, |x| s * x),
        Transform::Power(2) => each(out, xs, how, |x| (s * x) * (s * x)),
        Transform::Ln if diameters => each(out, xs, how, |x| fastmath::ln_positive(s * x)),
        Transform::Ln => each(out, xs, how, |x| (s * x).ln()),
        Transform::Sqrt => each(out, xs, how, |x| (s * x).sqrt()),
        other => each(out, xs, how, |x| other.apply(s * x)),
    }
}

/// Attribute columns split into numeric and categorical tables, with their indices.
struct AttributeLayout<'a> {
    names: Vec<(&'a str, usize, bool)>,
}

impl<'a> AttributeLayout<'a> {
    fn of(trees: &'a TreeList) -> Self {
        let (mut num, mut cat) = (0, 0);
        let names = trees
            .attributes
            .iter()
            .map(|a| match a.values {
                AttributeValues::Numeric(_) => {
                    num += 1;
                    (a.name.as_str(), num - 1, true)
                }
                AttributeValues::Categorical { .. } => {
                    cat += 1;
                    (a.name.as_str(), cat - 1, false)
                }
            })
            .collect();
        AttributeLayout { names }
    }

    /// (column index within its table, is numeric).
    fn find(&self, var: &str) -> Option<(usize, bool)> {
        self.names
            .iter()
            .find(|(n, _, _)| *n == var)
            .map(|&(_, k, num)| (k, num))
    }

    fn code(&self, trees: &TreeList, var: &str, level: &str) -> Option<u32> {
        match trees.attribute(var).map(|a| &a.values) {
            Some(AttributeValues::Categorical { levels, .. }) => {
                levels.iter().position(|l| l == level).map(|i| i as u32)
            }
            _ => None,
        }
    }
}

/// Numeric and categorical attribute columns of a tree list, in the layout the compiled
/// predictors index.
pub(crate) fn attribute_tables(trees: &TreeList) -> (Vec<Vec<f64>>, Vec<Vec<u32>>) {
    let mut numeric = Vec::new();
    let mut codes = Vec::new();
    for a in &trees.attributes {
        match &a.values {
            AttributeValues::Numeric(v) => numeric.push(v.clone()),
            AttributeValues::Categorical { codes: c, .. } => codes.push(c.clone()),
        }
    }
    (numeric, codes)
}
