//! Predictor terms: the grammar of `docs/model-files.md#term-grammar`, parsing, canonical labels,
//! and transforms.
//!
//! A term is a product of one or more factors (`a:b`). A factor is either a numeric variable
//! under a transform (`dbh`, `ln(dbh)`, `ln(bal+1)`, `sqrt(dbh)`, `dbh^2`, `dbh^-1`) or the
//! indicator of one level of a categorical variable (`treatment=b`, `treatment="no release"`).
//! A bare name that turns out to be categorical expands to one indicator per non-reference level
//! (see [`crate::model::design`]).

use super::ModelError;

/// Name of the intercept term in coefficient lists and model files.
pub const INTERCEPT: &str = "(intercept)";

/// Stand-level covariates derived from the tree list (`docs/data.md#derived-covariates`); the
/// projector recomputes them every sub-step.
pub const DERIVED: [&str; 5] = ["ba", "bal", "qmd", "rel_dbh", "stems"];

/// Derived covariates that can be exactly zero (so `ln(x)` and negative powers are refused).
pub const CAN_BE_ZERO: [&str; 3] = ["ba", "bal", "stems"];

/// A transform of a numeric variable.
#[derive(Debug, Clone, Copy, PartialEq)]
pub enum Transform {
    /// The value itself.
    Identity,
    /// Natural logarithm.
    Ln,
    /// ln(x + c) for a positive constant c.
    LnPlus(f64),
    /// Square root.
    Sqrt,
    /// x^k for a non-zero integer k.
    Power(i32),
}

impl Transform {
    /// Apply the transform. Returns NaN or ±inf where the transform is not defined; callers
    /// check the result and report the record.
    ///
    /// # Formula
    /// `x`, `ln x`, `ln(x + c)`, `√x`, `x^k`.
    #[inline]
    pub fn apply(self, x: f64) -> f64 {
        match self {
            Transform::Identity => x,
            Transform::Ln => x.ln(),
            Transform::LnPlus(c) => (x + c).ln(),
            Transform::Sqrt => x.sqrt(),
            Transform::Power(2) => x * x,
            Transform::Power(k) => x.powi(k),
        }
    }

    /// Whether the transform is defined at `x` (finite result).
    pub fn defined_at(self, x: f64) -> bool {
        self.apply(x).is_finite()
    }

    fn label(self, var: &str) -> String {
        match self {
            Transform::Identity => var.to_string(),
            Transform::Ln => format!("ln({var})"),
            Transform::LnPlus(c) => format!("ln({var}+{c})"),
            Transform::Sqrt => format!("sqrt({var})"),
            Transform::Power(k) => format!("{var}^{k}"),
        }
    }
}

/// One factor of a term.
#[derive(Debug, Clone, PartialEq)]
pub enum Factor {
    /// A numeric variable under a transform.
    Numeric {
        /// Column, attribute or derived covariate name.
        var: String,
        /// The transform applied to it.
        transform: Transform,
    },
    /// 1 when the categorical variable `var` has value `level`, else 0.
    Indicator {
        /// Categorical variable name.
        var: String,
        /// The level.
        level: String,
    },
}

impl Factor {
    /// The variable this factor reads.
    pub fn var(&self) -> &str {
        match self {
            Factor::Numeric { var, .. } | Factor::Indicator { var, .. } => var,
        }
    }

    /// Canonical label (`ln(dbh)`, `treatment=b`, `treatment="no release"`).
    pub fn label(&self) -> String {
        match self {
            Factor::Numeric { var, transform } => transform.label(var),
            Factor::Indicator { var, level } => {
                if level_needs_quotes(level) {
                    format!("{var}=\"{level}\"")
                } else {
                    format!("{var}={level}")
                }
            }
        }
    }
}

fn level_needs_quotes(level: &str) -> bool {
    level.is_empty()
        || level
            .chars()
            .any(|c| !(c.is_alphanumeric() || c == '_' || c == '-' || c == '.'))
}

/// A predictor term: the product of its factors.
#[derive(Debug, Clone, PartialEq)]
pub struct Term {
    /// The factors, in the order written.
    pub factors: Vec<Factor>,
}

impl Term {
    /// Canonical label: factor labels joined by `:`.
    pub fn label(&self) -> String {
        self.factors
            .iter()
            .map(Factor::label)
            .collect::<Vec<_>>()
            .join(":")
    }

    /// True when the term is a single untransformed name (a candidate for categorical
    /// expansion).
    pub fn bare_name(&self) -> Option<&str> {
        match self.factors.as_slice() {
            [Factor::Numeric {
                var,
                transform: Transform::Identity,
            }] => Some(var),
            _ => None,
        }
    }

    /// Parse one term. The intercept is not a term here.
    ///
    /// # Errors
    /// [`ModelError::Term`] for anything outside the grammar (`docs/model-files.md#term-grammar`),
    /// and for `ln(x)` or negative powers of covariates that can be zero (`ba`, `bal`, `stems`).
    pub fn parse(text: &str) -> Result<Term, ModelError> {
        let text = text.trim();
        let err = |message: String| ModelError::Term {
            term: text.to_string(),
            message,
        };
        if text.is_empty() {
            return Err(err("empty term".into()));
        }
        let factors = split_outside_quotes(text, ':')
            .iter()
            .map(|f| parse_factor(f.trim()).map_err(&err))
            .collect::<Result<Vec<_>, _>>()?;
        Ok(Term { factors })
    }
}

/// Parse a comma-separated predictor list (`"dbh, dbh^2, bal, treatment"`). A term `1` is
/// the intercept, as in R formulas: `"1"` alone is the intercept-only model (no terms).
///
/// # Errors
/// The first term that does not parse; a term given twice.
pub fn parse_predictors(text: &str) -> Result<Vec<Term>, ModelError> {
    let mut terms: Vec<Term> = Vec::new();
    for piece in split_outside_quotes(text, ',') {
        if piece.trim().is_empty() || piece.trim() == INTERCEPT_ONLY {
            continue;
        }
        let term = Term::parse(&piece)?;
        if terms.iter().any(|t| t.label() == term.label()) {
            return Err(ModelError::Term {
                term: term.label(),
                message: "given twice in the predictor list".into(),
            });
        }
        terms.push(term);
    }
    Ok(terms)
}

/// The predictor list (or term) that stands for the intercept, as R's `~ 1`.
pub const INTERCEPT_ONLY: &str = "1";

/// Split on `sep` where it is outside double quotes and parentheses.
fn split_outside_quotes(text: &str, sep: char) -> Vec<String> {
    let mut out = Vec::new();
    let mut current = String::new();
    let mut in_quotes = false;
    let mut depth = 0usize;
    for c in text.chars() {
        match c {
            '"' => in_quotes = !in_quotes,
            '(' if !in_quotes => depth += 1,
            ')' if !in_quotes => depth = depth.saturating_sub(1),
            _ => {}
        }
        if c == sep && !in_quotes && depth == 0 {
            out.push(std::mem::take(&mut current));
        } else {
            current.push(c);
        }
    }
    out.push(current);
    out
}

fn is_name(s: &str) -> bool {
    let mut chars = s.chars();
    match chars.next() {
        Some(c) if c.is_alphabetic() || c == '_' => {}
        _ => return false,
    }
    chars.all(|c| c.is_alphanumeric() || c == '_' || c == '.')
}

fn parse_factor(text: &str) -> Result<Factor, String> {
    if let Some((var, level)) = text.split_once('=') {
        let var = var.trim();
        if !is_name(var) {
            return Err(format!("`{var}` is not a variable name"));
        }
        let level = level.trim();
        let level = match level.strip_prefix('"') {
            Some(rest) => rest
                .strip_suffix('"')
                .ok_or_else(|| "unterminated quoted level".to_string())?
                .to_string(),
            None => level.to_string(),
        };
        if level.is_empty() {
            return Err("empty level after `=`".into());
        }
        return Ok(Factor::Indicator {
            var: var.to_string(),
            level,
        });
    }
    let compact: String = text.chars().filter(|c| !c.is_whitespace()).collect();
    let numeric = |var: &str, transform: Transform| -> Result<Factor, String> {
        if !is_name(var) {
            return Err(format!("`{var}` is not a variable name"));
        }
        check_zero_safe(var, transform)?;
        Ok(Factor::Numeric {
            var: var.to_string(),
            transform,
        })
    };
    if let Some(inner) = compact
        .strip_prefix("ln(")
        .or_else(|| compact.strip_prefix("log("))
        .and_then(|r| r.strip_suffix(')'))
    {
        if let Some((var, c)) = inner.split_once('+') {
            let c: f64 = c
                .parse()
                .map_err(|_| format!("`{c}` in ln({inner}) is not a number"))?;
            if !(c > 0.0 && c.is_finite()) {
                return Err(format!("the constant in ln({inner}) must be positive"));
            }
            return numeric(var, Transform::LnPlus(c));
        }
        return numeric(inner, Transform::Ln);
    }
    if let Some(inner) = compact
        .strip_prefix("sqrt(")
        .and_then(|r| r.strip_suffix(')'))
    {
        return numeric(inner, Transform::Sqrt);
    }
    if let Some((var, k)) = compact.split_once('^') {
        let k: i32 = k
            .trim_start_matches('(')
            .trim_end_matches(')')
            .parse()
            .map_err(|_| format!("the power `{k}` must be a non-zero integer"))?;
        if k == 0 {
            return Err("the power must be a non-zero integer".into());
        }
        if k == 1 {
            return numeric(var, Transform::Identity);
        }
        return numeric(var, Transform::Power(k));
    }
    if compact.contains('(') || compact.contains(')') {
        return Err(
            "not understood; terms are a name, ln(x), ln(x+c), sqrt(x), x^k, name=level or a:b"
                .into(),
        );
    }
    numeric(&compact, Transform::Identity)
}

fn check_zero_safe(var: &str, transform: Transform) -> Result<(), String> {
    if !CAN_BE_ZERO.contains(&var) {
        return Ok(());
    }
    match transform {
        Transform::Ln => Err(format!(
            "`{var}` can be zero (bal is 0 for the largest tree of a stand; ba and stems are 0 in an empty stand), so ln({var}) is undefined; use ln({var}+1)"
        )),
        Transform::Power(k) if k < 0 => Err(format!(
            "`{var}` can be zero, so a negative power is undefined; use ln({var}+1) or a positive power"
        )),
        _ => Ok(()),
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    fn labels(text: &str) -> Vec<String> {
        parse_predictors(text)
            .unwrap()
            .iter()
            .map(Term::label)
            .collect()
    }

    #[test]
    fn parses_the_grammar_of_design_section_6() {
        assert_eq!(
            labels("dbh, dbh^2, ln(dbh), ln( bal + 1 ), sqrt(dbh), dbh^-1, treatment=b"),
            vec![
                "dbh",
                "dbh^2",
                "ln(dbh)",
                "ln(bal+1)",
                "sqrt(dbh)",
                "dbh^-1",
                "treatment=b"
            ]
        );
        assert_eq!(
            labels("treatment=\"no release\":dbh, a:b"),
            vec!["treatment=\"no release\":dbh", "a:b"]
        );
    }

    #[test]
    fn refuses_log_and_negative_powers_of_covariates_that_can_be_zero() {
        for bad in ["ln(bal)", "bal^-1", "ln(ba)", "stems^-2"] {
            let e = Term::parse(bad).unwrap_err().to_string();
            assert!(e.contains("+1)"), "{bad}: {e}");
        }
        assert!(Term::parse("ln(bal+1)").is_ok());
    }

    #[test]
    fn refuses_malformed_terms() {
        for bad in [
            "dbh^0",
            "dbh^x",
            "exp(dbh)",
            "ln(dbh+-1)",
            "1dbh",
            "a=",
            "=b",
        ] {
            assert!(Term::parse(bad).is_err(), "{bad}");
        }
        assert!(parse_predictors("dbh, dbh").is_err());
    }

    #[test]
    fn transforms_evaluate_their_formulas() {
        // Derived analytically.
        assert_eq!(Transform::Power(-1).apply(4.0), 0.25);
        assert_eq!(Transform::Power(2).apply(3.0), 9.0);
        assert_eq!(Transform::Sqrt.apply(16.0), 4.0);
        assert!((Transform::LnPlus(1.0).apply(0.0)).abs() < 1e-15);
        assert!(!Transform::Ln.defined_at(0.0));
    }
}
