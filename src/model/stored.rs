//! Validated models: what a model file means once checked. A [`Model`] that exists has parsed
//! terms, a coefficient per term, a covariance (if any) in coefficient order, and the settings
//! it needs for projection.

use std::collections::BTreeMap;
use std::path::Path;

use super::design::CategoricalLevels;
use super::file::{
    CoefficientEntry, CovarianceEntry, CovarianceKind, FitInfo, GrowthResponse, IntervalKind,
    ModelFile, ModelKind, Outcome,
};
use super::link::Link;
use super::mixed::entry::plot_effect_from;
pub use super::mixed::entry::PlotEffect;
use super::terms::{Factor, Term, INTERCEPT};
use super::ModelError;
use crate::data::Units;

/// A linear predictor: optional intercept plus coefficients on terms.
#[derive(Debug, Clone, PartialEq)]
pub struct LinearPredictor {
    /// The intercept, if the model has one.
    pub intercept: Option<f64>,
    /// The terms (not including the intercept).
    pub terms: Vec<Term>,
    /// One estimate per term.
    pub estimates: Vec<f64>,
    /// Standard errors in coefficient order (intercept first), when known.
    pub std_errors: Option<Vec<f64>>,
}

impl LinearPredictor {
    /// Coefficient names in order (intercept first when present).
    pub fn names(&self) -> Vec<String> {
        let mut v = Vec::with_capacity(self.terms.len() + 1);
        if self.intercept.is_some() {
            v.push(INTERCEPT.to_string());
        }
        v.extend(self.terms.iter().map(Term::label));
        v
    }

    /// All coefficients in order (intercept first when present).
    pub fn coefficients(&self) -> Vec<f64> {
        self.intercept
            .iter()
            .copied()
            .chain(self.estimates.iter().copied())
            .collect()
    }
}

/// A covariance matrix of the coefficients, in coefficient order.
#[derive(Debug, Clone, PartialEq)]
pub struct Covariance {
    /// Model or cluster-robust.
    pub kind: CovarianceKind,
    /// p×p, row by row.
    pub matrix: Vec<Vec<f64>>,
}

/// Settings shared by both model kinds.
#[derive(Debug, Clone, PartialEq)]
pub struct ModelCommon {
    /// The linear predictor.
    pub predictor: LinearPredictor,
    /// The interval the model describes (None: not projectable).
    pub period_years: Option<f64>,
    /// Units of diameters and per-area covariates.
    pub units: Units,
    /// Categorical variables.
    pub categorical: BTreeMap<String, CategoricalLevels>,
    /// Covariance of the coefficients.
    pub covariance: Option<Covariance>,
    /// Facts about the fit.
    pub fit: Option<FitInfo>,
    /// The random plot intercept of a mixed model (docs/mixed-models.md).
    pub plot_effect: Option<PlotEffect>,
}

/// A periodic survival model.
#[derive(Debug, Clone, PartialEq)]
pub struct SurvivalModel {
    /// Link function.
    pub link: Link,
    /// What the probability is about.
    pub outcome: Outcome,
    /// How the interval enters.
    pub interval: IntervalKind,
    /// Shared settings.
    pub common: ModelCommon,
}

/// A diameter-growth model.
#[derive(Debug, Clone, PartialEq)]
pub struct GrowthModel {
    /// Response.
    pub response: GrowthResponse,
    /// Residual SD on the response scale.
    pub residual_sd: f64,
    /// Shared settings.
    pub common: ModelCommon,
}

/// A validated model.
#[derive(Debug, Clone, PartialEq)]
pub enum Model {
    /// Survival.
    Survival(SurvivalModel),
    /// Growth.
    Growth(GrowthModel),
}

impl Model {
    /// Read and validate a model file.
    ///
    /// # Errors
    /// [`ModelError::File`] naming the file and key for anything malformed or inconsistent.
    pub fn read(path: &Path) -> Result<Model, ModelError> {
        let raw = ModelFile::read(path)?;
        Model::from_file(raw, &path.display().to_string())
    }

    /// Validate a parsed model file; `file` is used in messages.
    ///
    /// # Errors
    /// [`ModelError::File`] naming the key.
    pub fn from_file(raw: ModelFile, file: &str) -> Result<Model, ModelError> {
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
        if let Some(p) = raw.period_years {
            if !(p > 0.0 && p.is_finite()) {
                return Err(err(
                    "period_years",
                    format!("{p} is not a positive number of years"),
                ));
            }
        }
        let predictor = predictor_from(&raw.coefficients, &raw.categorical, &err)?;
        let covariance = match &raw.covariance {
            None => None,
            Some(c) => Some(covariance_from(c, &predictor.names(), &err)?),
        };
        let common = ModelCommon {
            predictor,
            period_years: raw.period_years,
            units,
            categorical: raw.categorical.clone(),
            covariance,
            fit: raw.fit.clone(),
            plot_effect: raw
                .plot_effect
                .as_ref()
                .map(|p| plot_effect_from(p, &err))
                .transpose()?,
        };
        match raw.kind {
            ModelKind::Height | ModelKind::Volume => Err(err(
                "kind",
                "height and volume models cannot serve as survival or growth models".into(),
            )),
            ModelKind::Survival => {
                for (key, present) in [
                    ("response", raw.response.is_some()),
                    ("residual_sd", raw.residual_sd.is_some()),
                ] {
                    if present {
                        return Err(err(
                            key,
                            "belongs to growth models, but kind = \"survival\"".into(),
                        ));
                    }
                }
                let link = match &raw.link {
                    None => return Err(err("link", "missing (logit, probit or cloglog)".into())),
                    Some(l) => l
                        .parse()
                        .map_err(|m: super::link::UnknownLink| err("link", m.to_string()))?,
                };
                let interval = raw.interval.unwrap_or_default();
                let outcome = raw.outcome.unwrap_or_default();
                if interval == IntervalKind::Exposure
                    && (link != Link::Cloglog || outcome != Outcome::Dead)
                {
                    return Err(err(
                        "interval",
                        "\"exposure\" models use link = \"cloglog\" and outcome = \"dead\"".into(),
                    ));
                }
                if interval == IntervalKind::Annualized
                    && common.period_years.is_some_and(|p| p != 1.0)
                {
                    return Err(err(
                        "period_years",
                        "annualized models describe one year: period_years = 1".into(),
                    ));
                }
                Ok(Model::Survival(SurvivalModel {
                    link,
                    outcome,
                    interval,
                    common,
                }))
            }
            ModelKind::Growth => {
                for (key, present) in [
                    ("link", raw.link.is_some()),
                    ("outcome", raw.outcome.is_some()),
                    ("interval", raw.interval.is_some()),
                ] {
                    if present {
                        return Err(err(
                            key,
                            "belongs to survival models, but kind = \"growth\"".into(),
                        ));
                    }
                }
                let response = raw.response.ok_or_else(|| {
                    err(
                        "response",
                        "missing (ln_bai, annual_increment or column)".into(),
                    )
                })?;
                let residual_sd = raw.residual_sd.unwrap_or(0.0);
                if !(residual_sd >= 0.0 && residual_sd.is_finite()) {
                    return Err(err(
                        "residual_sd",
                        format!("{residual_sd} is not a non-negative number"),
                    ));
                }
                if raw.residual_sd.is_none() && response == GrowthResponse::LnBai {
                    return Err(err(
                        "residual_sd",
                        "missing; ln_bai models need it for the log-bias correction".into(),
                    ));
                }
                Ok(Model::Growth(GrowthModel {
                    response,
                    residual_sd,
                    common,
                }))
            }
        }
    }

    /// The shared part.
    pub fn common(&self) -> &ModelCommon {
        match self {
            Model::Survival(m) => &m.common,
            Model::Growth(m) => &m.common,
        }
    }
}

pub(crate) fn predictor_from(
    entries: &[CoefficientEntry],
    categorical: &BTreeMap<String, CategoricalLevels>,
    err: &dyn Fn(&str, String) -> ModelError,
) -> Result<LinearPredictor, ModelError> {
    if entries.is_empty() {
        return Err(err("coefficients", "no coefficients".into()));
    }
    let mut intercept = None;
    let mut terms: Vec<Term> = Vec::new();
    let mut estimates = Vec::new();
    let mut ses = Vec::new();
    for (i, e) in entries.iter().enumerate() {
        let key = format!("coefficients[{i}]");
        if !e.estimate.is_finite() {
            return Err(err(
                &key,
                format!("estimate of `{}` is not a finite number", e.term),
            ));
        }
        if let Some(se) = e.std_error.filter(|se| !(*se >= 0.0 && se.is_finite())) {
            return Err(err(
                &format!("{key}.std_error"),
                format!(
                    "standard error {se} of `{}` is not a non-negative finite number",
                    e.term
                ),
            ));
        }
        ses.push(e.std_error);
        if e.term == INTERCEPT {
            if i != 0 {
                return Err(err(
                    &key,
                    "(intercept) must be the first coefficient".into(),
                ));
            }
            intercept = Some(e.estimate);
            continue;
        }
        let term = Term::parse(&e.term).map_err(|m| err(&key, m.to_string()))?;
        if terms.iter().any(|t| t.label() == term.label()) {
            return Err(err(&key, format!("term `{}` appears twice", e.term)));
        }
        for f in &term.factors {
            if let Factor::Indicator { var, level } = f {
                match categorical.get(var) {
                    None => {
                        return Err(err(
                            &key,
                            format!("`{var}` has no [categorical.{var}] table with its levels"),
                        ))
                    }
                    Some(c) if !c.levels.contains(level) => {
                        return Err(err(
                            &key,
                            format!(
                                "`{level}` is not among the levels of `{var}` ({})",
                                c.levels.join(", ")
                            ),
                        ))
                    }
                    Some(_) => {}
                }
            }
        }
        terms.push(term);
        estimates.push(e.estimate);
    }
    for (var, c) in categorical {
        if !c.levels.contains(&c.reference) {
            return Err(err(
                &format!("categorical.{var}.reference"),
                format!("`{}` is not among the levels", c.reference),
            ));
        }
    }
    let std_errors = ses.iter().copied().collect::<Option<Vec<f64>>>();
    Ok(LinearPredictor {
        intercept,
        terms,
        estimates,
        std_errors,
    })
}

pub(crate) fn covariance_from(
    c: &CovarianceEntry,
    names: &[String],
    err: &dyn Fn(&str, String) -> ModelError,
) -> Result<Covariance, ModelError> {
    let p = names.len();
    if c.terms.len() != p || c.matrix.len() != p {
        return Err(err("covariance", format!("expected {p} terms and {p} rows to match the coefficients, found {} terms and {} rows", c.terms.len(), c.matrix.len())));
    }
    let mut index = Vec::with_capacity(p);
    for name in names {
        let canonical =
            |t: &String| t == name || Term::parse(t).map(|x| x.label() == *name).unwrap_or(false);
        match c.terms.iter().position(canonical) {
            Some(k) => index.push(k),
            None => return Err(err("covariance.terms", format!("`{name}` is missing"))),
        }
    }
    let mut matrix = vec![vec![0.0; p]; p];
    for (i, row) in c.matrix.iter().enumerate() {
        if row.len() != p {
            return Err(err(
                &format!("covariance.matrix[{i}]"),
                format!("expected {p} values, found {}", row.len()),
            ));
        }
    }
    for (a, &i) in index.iter().enumerate() {
        for (b, &j) in index.iter().enumerate() {
            let v = c.matrix[i][j];
            if !v.is_finite()
                || (v - c.matrix[j][i]).abs() > 1e-9 * (v.abs().max(c.matrix[j][i].abs()) + 1e-300)
            {
                return Err(err(
                    "covariance.matrix",
                    format!("entry ({i}, {j}) is not finite or the matrix is not symmetric"),
                ));
            }
            matrix[a][b] = v;
        }
        if matrix[a][a] < 0.0 {
            return Err(err(
                "covariance.matrix",
                format!("negative variance for `{}`", names[a]),
            ));
        }
    }
    let lowest = super::linalg::min_correlation_eigenvalue(&matrix);
    if lowest.is_nan() || lowest < -super::linalg::PSD_RTOL {
        return Err(err(
            "covariance.matrix",
            format!("is not positive semi-definite (smallest eigenvalue of its correlation form {lowest:.3e}, beyond rounding)"),
        ));
    }
    Ok(Covariance {
        kind: c.kind,
        matrix,
    })
}
