//! Binding trees to a scenario: the cohort attributes, the stand area, the actions and the
//! compiled model terms all depend on the trees, so they are validated again for every stand
//! that [`Scenario::with_trees`] puts in place of the scenario's own `[cohort]`.

use std::collections::BTreeMap;
use std::path::Path;

use super::actions::{self, Action};
use super::schema::ActionEntry;
use super::{Scenario, ScenarioError};
use crate::data::{Constant, TreeList};
use crate::model::predictor::{CompileError, CompiledPredictor};
use crate::model::stored::ModelCommon;
use crate::tolerance::WHOLE_STEMS_ATOL;

/// The parts of a scenario file that are checked against the trees.
#[derive(Debug, Clone, PartialEq)]
pub(crate) struct Binding {
    /// `cohort.attributes`: values given to every tree.
    pub attributes: BTreeMap<String, toml::Value>,
    /// `cohort.area_ha`.
    pub area_ha: Option<f64>,
    /// `[[actions]]` as written.
    pub actions: Vec<ActionEntry>,
    /// `[models] species_column` (default `species`).
    pub species_column: String,
}

/// Trees with their validated actions and compiled models.
pub(crate) struct Bound {
    pub trees: TreeList,
    pub actions: Vec<Action>,
    pub survival_eval: CompiledPredictor,
    pub growth_eval: CompiledPredictor,
}

impl Binding {
    /// Add the cohort attributes to `trees`, check the area, validate the actions and compile
    /// both models (`models`: survival then growth; `years`: horizon, step, sub-step).
    pub fn bind(
        &self,
        mut trees: TreeList,
        file: &str,
        models: [(&Path, &ModelCommon); 2],
        years: [f64; 3],
    ) -> Result<Bound, ScenarioError> {
        let err = |key: &str, message: String| ScenarioError::Key {
            file: file.to_string(),
            key: key.to_string(),
            message,
        };
        for (name, value) in &self.attributes {
            let key = format!("cohort.attributes.{name}");
            if matches!(name.as_str(), "dbh" | "stand" | "tree" | "expansion")
                || crate::model::terms::DERIVED.contains(&name.as_str())
            {
                return Err(err(&key, format!("`{name}` is a reserved name")));
            }
            // A column of the tree list wins: cohort attributes fill in what the trees lack, so
            // that one scenario can serve as the template of a batch whose stands carry their
            // own treatment column.
            if trees.attribute(name).is_some() {
                continue;
            }
            let c = match value {
                toml::Value::String(s) => Constant::Level(s.clone()),
                toml::Value::Integer(i) => Constant::Number(*i as f64),
                toml::Value::Float(x) if x.is_finite() => Constant::Number(*x),
                other => {
                    return Err(err(
                        &key,
                        format!("{other} is neither a level (text) nor a number"),
                    ))
                }
            };
            trees.set_constant(name, c);
        }
        if let Some(area) = self.area_ha {
            if !(area > 0.0 && area.is_finite()) {
                return Err(err(
                    "cohort.area_ha",
                    format!("{area} is not a positive area"),
                ));
            }
            for (i, e) in trees.stems_per_ha.iter().enumerate() {
                let n = e * area;
                if (n - n.round()).abs() > WHOLE_STEMS_ATOL || n.round() < 1.0 {
                    return Err(err("cohort.area_ha", format!("tree {} represents {e} stems/ha × {area} ha = {n} stems, not a whole number", trees.tree_ids[i])));
                }
            }
        }
        let [horizon, step, sub_step] = years;
        let commons = [models[0].1, models[1].1];
        let actions = actions::validate(
            &self.actions,
            &self.species_column,
            &mut trees,
            &commons,
            horizon,
            step,
            sub_step,
            file,
        )?;
        let compile = |key: &str, (path, c): (&Path, &ModelCommon)| {
            CompiledPredictor::compile(
                &c.predictor,
                &c.categorical,
                c.units,
                c.fit.as_ref().map(|f| &f.ranges),
                &trees,
            )
            .map_err(|e| {
                let key = match &e {
                    CompileError::UnknownLevel { var, .. } if self.attributes.contains_key(var) => {
                        format!("cohort.attributes.{var}")
                    }
                    CompileError::UnknownLevel { .. } => "cohort.trees".to_string(),
                    _ => key.to_string(),
                };
                let part = match e {
                    CompileError::UnknownLevel { .. } => "levels",
                    _ => "terms",
                };
                err(&key, format!("{} ({part}): {e}", path.display()))
            })
        };
        let survival_eval = compile("models.survival", models[0])?;
        let growth_eval = compile("models.growth", models[1])?;
        Ok(Bound {
            trees,
            actions,
            survival_eval,
            growth_eval,
        })
    }
}

impl Scenario {
    /// This scenario with `trees` in place of its own `[cohort]` trees (the cohort's
    /// `attributes` and `area_ha` still apply). The actions and model terms are validated
    /// again against the new trees.
    ///
    /// # Errors
    /// [`ScenarioError::Key`] naming the scenario file, the key and the stand, for an
    /// attribute or level the models or actions need but the stand lacks, or an `area_ha`
    /// that does not give whole stems.
    pub fn with_trees(&self, trees: TreeList) -> Result<Scenario, ScenarioError> {
        let stand = trees.stand.clone();
        let bound = self
            .binding
            .bind(
                trees,
                &self.file,
                [
                    (&self.survival.path, &self.survival.model.common),
                    (&self.growth.path, &self.growth.model.common),
                ],
                [self.horizon_years, self.step_years, self.sub_step_years],
            )
            .map_err(|e| match e {
                ScenarioError::Key { file, key, message } => ScenarioError::Key {
                    file,
                    key,
                    message: format!("stand \"{stand}\": {message}"),
                },
                other => other,
            })?;
        Ok(Scenario {
            trees: bound.trees,
            actions: bound.actions,
            survival_eval: bound.survival_eval,
            growth_eval: bound.growth_eval,
            ..self.clone()
        })
    }
}
