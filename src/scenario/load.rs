//! The validated scenario: reading the TOML, resolving paths, reading and checking the models
//! against the trees, generating the cohort. A [`Scenario`] that exists can be projected.

use std::path::{Path, PathBuf};

use crate::data::sha256_hex;

use super::actions::Action;
use super::bind::Binding;
use super::schema::{key_path_at, ScenarioFile, UncertaintySection};
use super::{cohort, ScenarioError};
use crate::data::TreeList;
use crate::model::file::{GrowthResponse, ModelFile};
use crate::model::predictor::CompiledPredictor;
use crate::model::stored::{GrowthModel, Model, ModelCommon, SurvivalModel};

/// Which sources of uncertainty the Monte Carlo driver draws.
pub type Uncertainty = UncertaintySection;

/// An input file and its SHA-256, for `run.json`.
#[derive(Debug, Clone, PartialEq)]
pub struct InputFile {
    /// What the file is (`scenario`, `survival model`, `growth model`, `trees`).
    pub role: String,
    /// The path as resolved.
    pub path: PathBuf,
    /// Lower-case hex SHA-256 of the bytes read.
    pub sha256: String,
}

/// A model with the path it came from.
#[derive(Debug, Clone, PartialEq)]
pub struct LoadedModel<M> {
    /// The model file.
    pub path: PathBuf,
    /// The validated model.
    pub model: M,
    /// Its period in years.
    pub period_years: f64,
}

/// A validated scenario.
#[derive(Debug, Clone, PartialEq)]
pub struct Scenario {
    /// The scenario file (for messages).
    pub file: String,
    /// Scenario name.
    pub name: String,
    /// Projection length (years), a whole multiple of `step_years`.
    pub horizon_years: f64,
    /// Output interval (years), a whole multiple of every model period.
    pub step_years: f64,
    /// Engine sub-step: the shortest model period.
    pub sub_step_years: f64,
    /// Monte Carlo replicates (≥ 1).
    pub replicates: usize,
    /// Seed of the random draws.
    pub seed: u64,
    /// Stand age at year 0, if given.
    pub start_age_years: Option<f64>,
    /// The survival model.
    pub survival: LoadedModel<SurvivalModel>,
    /// The growth model.
    pub growth: LoadedModel<GrowthModel>,
    /// Sources of uncertainty.
    pub uncertainty: Uncertainty,
    /// The trees at year 0.
    pub trees: TreeList,
    /// Stand area for binomial survival of whole stems.
    pub area_ha: Option<f64>,
    /// Management actions in file order.
    pub actions: Vec<Action>,
    /// Input files and their hashes.
    pub inputs: Vec<InputFile>,
    pub(crate) survival_eval: CompiledPredictor,
    pub(crate) growth_eval: CompiledPredictor,
    /// What binds the trees to the models and actions, kept so that [`Scenario::with_trees`]
    /// can bind another stand.
    pub(crate) binding: Binding,
}

impl Scenario {
    /// Read and validate a scenario file; model and tree-list paths are relative to it.
    ///
    /// # Errors
    /// [`ScenarioError`] naming the file and key for anything invalid, including models that
    /// cannot be projected or evaluated on the trees.
    pub fn read(path: &Path) -> Result<Scenario, crate::Error> {
        let shown = path.display().to_string();
        let bytes = std::fs::read(path).map_err(|e| ScenarioError::Key {
            file: shown.clone(),
            key: "file".into(),
            message: format!("cannot be read: {e}"),
        })?;
        let text = String::from_utf8(bytes.clone()).map_err(|_| ScenarioError::Key {
            file: shown.clone(),
            key: "file".into(),
            message: "is not UTF-8 text".into(),
        })?;
        let base = path.parent().unwrap_or(Path::new("."));
        let mut s = Scenario::parse(&text, &shown, base)?;
        s.inputs.insert(
            0,
            InputFile {
                role: "scenario".into(),
                path: path.to_path_buf(),
                sha256: sha256_hex(&bytes),
            },
        );
        Ok(s)
    }

    /// Validate scenario text; `file` names it in messages and `base` resolves relative paths.
    ///
    /// # Errors
    /// As [`Scenario::read`].
    pub fn parse(text: &str, file: &str, base: &Path) -> Result<Scenario, crate::Error> {
        Scenario::parse_from(text, file, base, None)
    }

    /// A scenario from TOML text whose `[models]` names models held in memory instead of
    /// files: `survival = "s"` takes the model given as `("s", model)` in `models`. Tree-list
    /// paths are relative to the working folder. Nothing is read from disk for the models,
    /// and `run.json` records them as "in memory".
    ///
    /// # Errors
    /// As [`Scenario::read`], and [`ScenarioError::Key`] naming `models.survival` or
    /// `models.growth` when `models` has no model of that name.
    ///
    /// # Examples
    /// ```
    /// use stemcast::model::stored::Model;
    /// use stemcast::model::file::ModelFile;
    /// use stemcast::scenario::Scenario;
    ///
    /// let survival = Model::from_file(ModelFile::parse(
    ///     "kind = \"survival\"\nlink = \"logit\"\nperiod_years = 5\n\
    ///      [[coefficients]]\nterm = \"(intercept)\"\nestimate = 2.0\n", "s")?, "s")?;
    /// let growth = Model::from_file(ModelFile::parse(
    ///     "kind = \"growth\"\nresponse = \"ln_bai\"\nperiod_years = 5\nresidual_sd = 0.3\n\
    ///      [[coefficients]]\nterm = \"(intercept)\"\nestimate = 0.5\n\
    ///      [[coefficients]]\nterm = \"ln(dbh)\"\nestimate = 1.0\n", "g")?, "g")?;
    /// let scenario = Scenario::with_models(
    ///     r#"
    ///     name = "planted"
    ///     horizon_years = 20
    ///     step_years = 5
    ///     [models]
    ///     survival = "s"
    ///     growth = "g"
    ///     [cohort]
    ///     stems_per_ha = 1200
    ///     records = 100
    ///     dbh = { distribution = "lognormal", median = 12.0, gsd = 1.3 }
    ///     "#,
    ///     &[("s", &survival), ("g", &growth)],
    /// )?;
    /// assert_eq!(scenario.trees.len(), 100);
    /// # Ok::<(), stemcast::Error>(())
    /// ```
    pub fn with_models(text: &str, models: &[(&str, &Model)]) -> Result<Scenario, crate::Error> {
        Scenario::parse_from(text, "(scenario in memory)", Path::new("."), Some(models))
    }

    fn parse_from(
        text: &str,
        file: &str,
        base: &Path,
        given: Option<&[(&str, &Model)]>,
    ) -> Result<Scenario, crate::Error> {
        let err = |key: &str, message: String| ScenarioError::Key {
            file: file.to_string(),
            key: key.to_string(),
            message,
        };
        let raw: ScenarioFile = toml::from_str(text).map_err(|e| {
            let key = e
                .span()
                .map_or("file".to_string(), |s| key_path_at(text, s.start));
            err(&key, e.message().trim().to_string())
        })?;
        let whole = |key: &str, x: f64| -> Result<(), ScenarioError> {
            if x > 0.0 && x.is_finite() {
                Ok(())
            } else {
                Err(err(key, format!("{x} is not a positive number of years")))
            }
        };
        whole("horizon_years", raw.horizon_years)?;
        whole("step_years", raw.step_years)?;
        if raw.name.trim().is_empty() {
            return Err(err(
                "name",
                "is empty; give the scenario a name for the outputs".into(),
            )
            .into());
        }
        if let Some(age) = raw
            .start_age_years
            .filter(|a| !(*a >= 0.0 && a.is_finite()))
        {
            return Err(err(
                "start_age_years",
                format!("{age} is not a stand age in years"),
            )
            .into());
        }
        if !is_multiple(raw.horizon_years, raw.step_years) {
            return Err(err(
                "horizon_years",
                format!(
                    "{} is not a whole multiple of step_years = {}",
                    raw.horizon_years, raw.step_years
                ),
            )
            .into());
        }
        let replicates = match raw.replicates {
            None => 1000,
            Some(r) if r >= 1 => r as usize,
            Some(r) => {
                return Err(err("replicates", format!("{r} is not a positive whole number")).into())
            }
        };
        let mut inputs = Vec::new();
        let mut read_model =
            |key: &str, rel: &str, role: &str| -> Result<(PathBuf, Model), crate::Error> {
                if let Some(given) = given {
                    let (_, model) =
                        given.iter().find(|(name, _)| *name == rel).ok_or_else(|| {
                            let names: Vec<&str> = given.iter().map(|(n, _)| *n).collect();
                            err(
                                key,
                                format!(
                                    "no model called \"{rel}\" was given (given: {})",
                                    names.join(", ")
                                ),
                            )
                        })?;
                    inputs.push(InputFile {
                        role: role.into(),
                        path: PathBuf::from(rel),
                        sha256: "in memory".into(),
                    });
                    return Ok((PathBuf::from(rel), (*model).clone()));
                }
                let path = base.join(rel);
                let bytes = std::fs::read(&path).map_err(|e| {
                    err(
                        key,
                        format!("model file {} cannot be read: {e}", path.display()),
                    )
                })?;
                let shown = path.display().to_string();
                let text = String::from_utf8_lossy(&bytes);
                let model = Model::from_file(ModelFile::parse(&text, &shown)?, &shown)?;
                inputs.push(InputFile {
                    role: role.into(),
                    path: path.clone(),
                    sha256: sha256_hex(&bytes),
                });
                Ok((path, model))
            };
        let (spath, smodel) =
            read_model("models.survival", &raw.models.survival, "survival model")?;
        let (gpath, gmodel) = read_model("models.growth", &raw.models.growth, "growth model")?;
        let survival = match smodel {
            Model::Survival(m) => m,
            Model::Growth(_) => {
                return Err(err(
                    "models.survival",
                    format!("{} is a growth model", spath.display()),
                )
                .into())
            }
        };
        let growth = match gmodel {
            Model::Growth(m) => m,
            Model::Survival(_) => {
                return Err(err(
                    "models.growth",
                    format!("{} is a survival model", gpath.display()),
                )
                .into())
            }
        };
        if growth.response == GrowthResponse::Column {
            return Err(err("models.growth", format!("{} has response = \"column\" (a column regressed as it is), which cannot be projected; fit with --response ln_bai or annual_increment", gpath.display())).into());
        }
        let period = |key: &str, path: &Path, c: &ModelCommon| {
            c.period_years.ok_or_else(|| err(key, format!("{} has no period_years (the fit had no interval), so it cannot be projected; refit with --years or --years-col", path.display())))
        };
        let sp = period("models.survival", &spath, &survival.common)?;
        let gp = period("models.growth", &gpath, &growth.common)?;
        let sub_step_years = sp.min(gp);
        for (key, p) in [("models.survival", sp), ("models.growth", gp)] {
            if !is_multiple(raw.step_years, p) {
                return Err(err(
                    "step_years",
                    format!(
                        "{} is not a whole multiple of the {p}-year period of {key}",
                        raw.step_years
                    ),
                )
                .into());
            }
            if !is_multiple(p, sub_step_years) {
                return Err(err(key, format!("its {p}-year period is not a whole multiple of the shortest model period ({sub_step_years} years)")).into());
            }
        }
        super::limits::check(&raw, sub_step_years, replicates, &err)?;
        let uncertainty = raw.uncertainty;
        if uncertainty.parameters {
            for (key, path, c) in [
                ("models.survival", &spath, &survival.common),
                ("models.growth", &gpath, &growth.common),
            ] {
                if c.covariance.is_none() {
                    return Err(err(
                        "uncertainty.parameters",
                        format!(
                            "is true, but {} ({key}) has no [covariance]",
                            path.display()
                        ),
                    )
                    .into());
                }
            }
        }
        let species_column = raw
            .models
            .species_column
            .clone()
            .unwrap_or_else(|| super::DEFAULT_SPECIES_COLUMN.to_string());
        let mut categorical: Vec<String> = [&survival.common, &growth.common]
            .iter()
            .flat_map(|c| c.categorical.keys().cloned())
            .collect();
        // Species codes are text even when they look like numbers.
        if raw
            .actions
            .iter()
            .any(|a| a.remove.is_some() || a.thin.as_ref().is_some_and(|t| t.species.is_some()))
        {
            categorical.push(species_column.clone());
        }
        let trees = cohort::trees_of(&raw, base, file, &categorical, &species_column, &mut inputs)?;
        let binding = Binding {
            attributes: raw.cohort.attributes.clone(),
            area_ha: raw.cohort.area_ha,
            actions: raw.actions.clone(),
            species_column,
        };
        let bound = binding.bind(
            trees,
            file,
            [(&spath, &survival.common), (&gpath, &growth.common)],
            [raw.horizon_years, raw.step_years, sub_step_years],
        )?;
        Ok(Scenario {
            file: file.to_string(),
            name: raw.name,
            horizon_years: raw.horizon_years,
            step_years: raw.step_years,
            sub_step_years,
            replicates,
            seed: raw.seed.unwrap_or(1),
            start_age_years: raw.start_age_years,
            survival: LoadedModel {
                path: spath,
                model: survival,
                period_years: sp,
            },
            growth: LoadedModel {
                path: gpath,
                model: growth,
                period_years: gp,
            },
            uncertainty,
            trees: bound.trees,
            area_ha: raw.cohort.area_ha,
            actions: bound.actions,
            inputs,
            survival_eval: bound.survival_eval,
            growth_eval: bound.growth_eval,
            binding,
        })
    }

    /// True when some model term reads a stand-level covariate (so the Monte Carlo mean and
    /// the expected trajectory differ in general).
    pub fn depends_on_stand(&self) -> bool {
        self.survival_eval.depends_on_stand() || self.growth_eval.depends_on_stand()
    }
}

/// `a` is a whole multiple of `b` (relative tolerance 1e-9).
fn is_multiple(a: f64, b: f64) -> bool {
    let k = (a / b).round();
    k >= 1.0 && (a - k * b).abs() <= 1e-9 * a.abs().max(b.abs())
}
