//! The validated ingrowth model: what an `ingrowth` model file means once checked, and the
//! expected ingrowth it gives for a plot or stand of given covariates, area and period
//! (`docs/ingrowth.md`, "Expected ingrowth").

use std::collections::BTreeMap;
use std::path::Path;

use super::design::CategoricalLevels;
use super::hurdle::{hurdle_expectation, HurdleExpectation};
use super::ingrowth_file::{IngrowthFitInfo, IngrowthModelFile};
use super::ingrowth_trees::IngrowthTrees;
use super::stored::{covariance_from, predictor_from, Covariance, LinearPredictor};
use super::terms::{Factor, Term};
use super::truncated::CountFamily;
use super::ModelError;
use crate::data::Units;

/// The term variable that reads the plot (or stand) area.
pub const AREA_VAR: &str = "area";
/// The term variable that reads the period length L in years.
pub const YEARS_VAR: &str = "years";

/// The value of a covariate for evaluating terms.
#[derive(Debug, Clone, Copy, PartialEq)]
pub enum CovariateValue<'a> {
    /// A numeric covariate.
    Number(f64),
    /// The level of a categorical attribute.
    Level(&'a str),
}

/// A validated ingrowth hurdle model.
#[derive(Debug, Clone, PartialEq)]
pub struct IngrowthModel {
    /// The count distribution given any ingrowth.
    pub family: CountFamily,
    /// NB2 dispersion α (0 for the Poisson).
    pub alpha: f64,
    /// logit P(any ingrowth in L years).
    pub any: LinearPredictor,
    /// Covariance of the any part's coefficients.
    pub any_covariance: Option<Covariance>,
    /// ln of new trees per unit area per year before truncation (the offset ln(area·L) is
    /// added when evaluated).
    pub count: LinearPredictor,
    /// Covariance of the count part in (β, α), α last for NB2.
    pub count_covariance: Option<Covariance>,
    /// Categorical variables of both parts.
    pub categorical: BTreeMap<String, CategoricalLevels>,
    /// Units of the area and the covariates.
    pub units: Units,
    /// Species shares and diameter quantiles of new trees.
    pub trees: Option<IngrowthTrees>,
    /// Facts about the fit.
    pub fit: Option<IngrowthFitInfo>,
}

impl IngrowthModel {
    /// Read and validate an ingrowth model file.
    ///
    /// # Errors
    /// [`ModelError::File`] naming the file and key of anything malformed or inconsistent.
    pub fn read(path: &Path) -> Result<IngrowthModel, ModelError> {
        let raw = IngrowthModelFile::read(path)?;
        IngrowthModel::from_file(raw, &path.display().to_string())
    }

    /// Validate a parsed ingrowth model file; `file` is used in messages.
    ///
    /// # Errors
    /// [`ModelError::File`] naming the key.
    pub fn from_file(raw: IngrowthModelFile, file: &str) -> Result<IngrowthModel, ModelError> {
        let err = |key: &str, message: String| ModelError::File {
            file: file.to_string(),
            key: key.to_string(),
            message,
        };
        let units = match &raw.units {
            None => Units::Metric,
            Some(u) => u
                .parse()
                .map_err(|m: crate::data::UnknownUnits| err("units", m.to_string()))?,
        };
        if raw.any.link.as_deref().is_some_and(|l| l != "logit") {
            return Err(err(
                "any.link",
                "the any-ingrowth part is a logistic regression: link = \"logit\"".into(),
            ));
        }
        let alpha = match (raw.counts, raw.count.alpha) {
            (CountFamily::NegativeBinomial, Some(a)) if a > 0.0 && a.is_finite() => a,
            (CountFamily::NegativeBinomial, Some(a)) => {
                return Err(err("count.alpha", format!("{a} is not a positive number")))
            }
            (CountFamily::NegativeBinomial, None) => {
                return Err(err(
                    "count.alpha",
                    "missing; counts = \"negative_binomial\" needs the dispersion α".into(),
                ))
            }
            (CountFamily::Poisson, None) if raw.count.alpha_std_error.is_none() => 0.0,
            (CountFamily::Poisson, _) => {
                return Err(err(
                    "count.alpha",
                    "belongs to counts = \"negative_binomial\", but counts = \"poisson\"".into(),
                ))
            }
        };
        let part = |prefix: &'static str| {
            move |key: &str, message: String| err(&format!("{prefix}.{key}"), message)
        };
        let any_err = part("any");
        let count_err = part("count");
        let any = predictor_from(&raw.any.coefficients, &raw.categorical, &any_err)?;
        let count = predictor_from(&raw.count.coefficients, &raw.categorical, &count_err)?;
        let any_covariance = match &raw.any.covariance {
            None => None,
            Some(c) => Some(covariance_from(c, &any.names(), &any_err)?),
        };
        let mut count_names = count.names();
        if raw.counts.has_alpha() {
            count_names.push("alpha".into());
        }
        let count_covariance = match &raw.count.covariance {
            None => None,
            Some(c) => Some(covariance_from(c, &count_names, &count_err)?),
        };
        if let Some(t) = &raw.trees {
            validate_trees(t).map_err(|(key, m)| err(&format!("trees.{key}"), m))?;
        }
        Ok(IngrowthModel {
            family: raw.counts,
            alpha,
            any,
            any_covariance,
            count,
            count_covariance,
            categorical: raw.categorical,
            units,
            trees: raw.trees,
            fit: raw.fit,
        })
    }

    /// The linear predictors (η_any, η_count without the offset) at the given covariates;
    /// the variables `area` and `years` take `area` and `years`.
    ///
    /// # Errors
    /// [`ModelError::Term`] naming a term whose variable `covariate` does not give, or gives
    /// with the wrong type, or where the transform is undefined.
    pub fn linear_predictors<'a>(
        &self,
        covariate: &dyn Fn(&str) -> Option<CovariateValue<'a>>,
        area: f64,
        years: f64,
    ) -> Result<(f64, f64), ModelError> {
        let lookup = |var: &str| match var {
            AREA_VAR => Some(CovariateValue::Number(area)),
            YEARS_VAR => Some(CovariateValue::Number(years)),
            _ => covariate(var),
        };
        Ok((
            evaluate(&self.any, &lookup)?,
            evaluate(&self.count, &lookup)?,
        ))
    }

    /// Expected ingrowth over one period of `years` on `area` (ha, or acres with imperial
    /// units): P(any), E\[N | N > 0\] and E\[N\] (see [`hurdle_expectation`]).
    ///
    /// # Errors
    /// As [`IngrowthModel::linear_predictors`]; [`ModelError::Invalid`] for a non-positive
    /// area or period.
    pub fn expectation<'a>(
        &self,
        covariate: &dyn Fn(&str) -> Option<CovariateValue<'a>>,
        area: f64,
        years: f64,
    ) -> Result<HurdleExpectation, ModelError> {
        if !(area > 0.0 && area.is_finite() && years > 0.0 && years.is_finite()) {
            return Err(ModelError::Invalid(format!(
                "expected ingrowth needs a positive area and period (got {area} and {years})"
            )));
        }
        let (eta_any, eta_count) = self.linear_predictors(covariate, area, years)?;
        Ok(hurdle_expectation(
            eta_any,
            eta_count,
            area,
            years,
            self.family,
            self.alpha,
        ))
    }
}

/// x(v)ᵀb of one linear predictor.
fn evaluate<'a>(
    lp: &LinearPredictor,
    lookup: &dyn Fn(&str) -> Option<CovariateValue<'a>>,
) -> Result<f64, ModelError> {
    let mut eta = lp.intercept.unwrap_or(0.0);
    for (term, b) in lp.terms.iter().zip(&lp.estimates) {
        eta += b * term_value(term, lookup)?;
    }
    Ok(eta)
}

fn term_value<'a>(
    term: &Term,
    lookup: &dyn Fn(&str) -> Option<CovariateValue<'a>>,
) -> Result<f64, ModelError> {
    let err = |message: String| ModelError::Term {
        term: term.label(),
        message,
    };
    let mut value = 1.0;
    for factor in &term.factors {
        let var = factor.var();
        match (factor, lookup(var)) {
            (Factor::Numeric { transform, .. }, Some(CovariateValue::Number(v))) => {
                let t = transform.apply(v);
                if !t.is_finite() {
                    return Err(err(format!("undefined at {var} = {v}")));
                }
                value *= t;
            }
            (Factor::Indicator { level, .. }, Some(CovariateValue::Level(l))) => {
                value *= f64::from(l == level.as_str());
            }
            (Factor::Numeric { .. }, Some(CovariateValue::Level(l))) => {
                return Err(err(format!("`{var}` is the level \"{l}\", not a number")))
            }
            (Factor::Indicator { .. }, Some(CovariateValue::Number(_))) => {
                return Err(err(format!("`{var}` is a number, not a level")))
            }
            (_, None) => return Err(err(format!("no value for `{var}`"))),
        }
    }
    Ok(value)
}

/// Check the stored new-tree summaries; errors are (key below `trees`, message).
fn validate_trees(t: &IngrowthTrees) -> Result<(), (String, String)> {
    let m = t.probabilities.len();
    if m == 0 || t.probabilities.windows(2).any(|w| w[0] >= w[1]) {
        return Err((
            "probabilities".into(),
            "must be increasing and not empty".into(),
        ));
    }
    if t.probabilities.iter().any(|p| !(*p > 0.0 && *p < 1.0)) {
        return Err((
            "probabilities".into(),
            "must lie strictly between 0 and 1".into(),
        ));
    }
    let quantiles_ok = |q: &[f64]| {
        q.len() == m
            && q.iter().all(|d| *d > 0.0 && d.is_finite())
            && q.windows(2).all(|w| w[0] <= w[1])
    };
    if t.groups.is_empty() || t.groups[0].level.is_some() {
        return Err((
            "groups".into(),
            "the first group must be the one of every record (no level)".into(),
        ));
    }
    for (g, group) in t.groups.iter().enumerate() {
        if g > 0 && group.level.is_none() {
            return Err((format!("groups[{g}].level"), "missing".into()));
        }
        if !quantiles_ok(&group.dbh_quantiles) {
            return Err((
                format!("groups[{g}].dbh_quantiles"),
                format!("need {m} positive, non-decreasing diameters, one per probability"),
            ));
        }
        let mut total = 0.0;
        for (s, share) in group.species.iter().enumerate() {
            if !(share.share > 0.0 && share.share <= 1.0 && quantiles_ok(&share.dbh_quantiles)) {
                return Err((format!("groups[{g}].species[{s}]"), "needs a share in (0, 1] and one positive, non-decreasing diameter per probability".into()));
            }
            total += share.share;
        }
        if !group.species.is_empty() && (total - 1.0).abs() > 1e-6 {
            return Err((
                format!("groups[{g}].species"),
                format!("shares sum to {total}, not 1"),
            ));
        }
    }
    Ok(())
}
