//! Validating `[[actions]]`: the sub-step each action falls on, attributes that exist, levels
//! the models know. Levels introduced by `set` are added to the trees' level lists so that the
//! compiled models resolve them to codes.

use super::schema::{ActionEntry, ThinFrom};
use super::trees::{AttributeValues, TreeList};
use super::ScenarioError;
use crate::model::stored::ModelCommon;

/// A validated management action.
#[derive(Debug, Clone, PartialEq)]
pub struct Action {
    /// The year given in the scenario.
    pub year: f64,
    /// Applied before the first sub-step (0) or at the end of sub-step `at` (1-based): the
    /// first sub-step whose end reaches `year`.
    pub at: u64,
    /// What it does.
    pub kind: ActionKind,
}

impl Action {
    /// A one-line description (`year 20: thin from below to 700 stems/ha`).
    pub fn describe(&self) -> String {
        let what = match &self.kind {
            ActionKind::Thin {
                from,
                to_stems_per_ha,
            } => format!(
                "thin from {} to {to_stems_per_ha} stems/ha",
                match from {
                    ThinFrom::Below => "below",
                    ThinFrom::Above => "above",
                }
            ),
            ActionKind::Set(v) => format!("set {} attribute(s) of every tree", v.len()),
        };
        format!("year {}: {what}", self.year)
    }
}

/// What an action does.
#[derive(Debug, Clone, PartialEq)]
pub enum ActionKind {
    /// Remove trees from one end of the diameter distribution down to a density.
    Thin {
        /// Which end goes first.
        from: ThinFrom,
        /// Target stems per hectare.
        to_stems_per_ha: f64,
    },
    /// Give every tree these attribute values.
    Set(Vec<SetValue>),
}

/// One attribute assignment of a `set` action.
#[derive(Debug, Clone, Copy, PartialEq)]
pub enum SetValue {
    /// Numeric attribute column `column` (among the numeric ones) gets `value`.
    Number {
        /// Index among the numeric attributes.
        column: usize,
        /// The value.
        value: f64,
    },
    /// Categorical attribute column `column` (among the categorical ones) gets level `code`.
    Level {
        /// Index among the categorical attributes.
        column: usize,
        /// Index into the attribute's levels.
        code: u32,
    },
}

/// Validate the actions against the trees and models; extends `trees`' level lists.
pub(crate) fn validate(
    entries: &[ActionEntry],
    trees: &mut TreeList,
    models: &[&ModelCommon],
    horizon_years: f64,
    sub_step_years: f64,
    file: &str,
) -> Result<Vec<Action>, ScenarioError> {
    let err = |key: String, message: String| ScenarioError::Key {
        file: file.to_string(),
        key,
        message,
    };
    let mut out = Vec::with_capacity(entries.len());
    for (i, a) in entries.iter().enumerate() {
        let key = format!("actions[{i}]");
        if !(a.year >= 0.0 && a.year <= horizon_years) {
            return Err(err(
                format!("{key}.year"),
                format!(
                    "{} is outside the projection (0 to {horizon_years} years)",
                    a.year
                ),
            ));
        }
        let at = (a.year / sub_step_years - 1e-9).ceil().max(0.0) as u64;
        let kind = match (&a.thin, &a.set) {
            (Some(t), None) => {
                if !(t.to_stems_per_ha >= 0.0 && t.to_stems_per_ha.is_finite()) {
                    return Err(err(
                        format!("{key}.thin.to_stems_per_ha"),
                        format!("{} is not a density", t.to_stems_per_ha),
                    ));
                }
                ActionKind::Thin {
                    from: t.from,
                    to_stems_per_ha: t.to_stems_per_ha,
                }
            }
            (None, Some(set)) => {
                let mut values = Vec::with_capacity(set.len());
                for (name, value) in set {
                    let k = format!("{key}.set.{name}");
                    values.push(set_value(trees, models, name, value).map_err(|m| err(k, m))?);
                }
                ActionKind::Set(values)
            }
            _ => {
                return Err(err(
                    key,
                    "give exactly one of `thin` or `set` per action".into(),
                ))
            }
        };
        out.push(Action {
            year: a.year,
            at,
            kind,
        });
    }
    Ok(out)
}

fn set_value(
    trees: &mut TreeList,
    models: &[&ModelCommon],
    name: &str,
    value: &toml::Value,
) -> Result<SetValue, String> {
    let (mut num, mut cat) = (0, 0);
    for a in trees.attributes.iter_mut() {
        let is_it = a.name == name;
        match &mut a.values {
            AttributeValues::Numeric(_) if is_it => {
                let v = match value {
                    toml::Value::Integer(i) => *i as f64,
                    toml::Value::Float(x) if x.is_finite() => *x,
                    other => {
                        return Err(format!("`{name}` is numeric, but {other} is not a number"))
                    }
                };
                return Ok(SetValue::Number {
                    column: num,
                    value: v,
                });
            }
            AttributeValues::Categorical { levels, .. } if is_it => {
                let toml::Value::String(level) = value else {
                    return Err(format!(
                        "`{name}` is categorical, but {value} is not a level (text)"
                    ));
                };
                for m in models {
                    if let Some(c) = m.categorical.get(name) {
                        if !c.levels.contains(level) {
                            return Err(format!(
                                "\"{level}\" is not a level the models know ({})",
                                c.levels.join(", ")
                            ));
                        }
                    }
                }
                let code = match levels.iter().position(|l| l == level) {
                    Some(c) => c,
                    None => {
                        levels.push(level.clone());
                        levels.len() - 1
                    }
                };
                return Ok(SetValue::Level {
                    column: cat,
                    code: code as u32,
                });
            }
            AttributeValues::Numeric(_) => num += 1,
            AttributeValues::Categorical { .. } => cat += 1,
        }
    }
    Err(format!(
        "the trees have no attribute `{name}` (give it in [cohort] attributes or as a tree-list column)"
    ))
}
