//! Validating `[[actions]]` (`docs/scenario.md#actions`): the sub-step each action falls on,
//! thinning targets, density limits, attributes that exist and levels the models know. Levels
//! introduced by `set` are added to the trees' level lists so that the compiled models resolve them
//! to codes.

use super::schema::{ActionEntry, ThinEntry, ThinFrom};
use super::species::{self, SpeciesSet};
use super::ScenarioError;
use crate::data::{AttributeValues, TreeList};
use crate::model::stored::ModelCommon;

/// A validated management action.
#[derive(Debug, Clone, PartialEq)]
pub struct Action {
    /// The year given in the scenario: 0 or a step boundary within the horizon.
    pub year: f64,
    /// Applied before the first sub-step (0) or at the end of sub-step `at` (1-based), the
    /// sub-step that ends at `year`.
    pub at: u64,
    /// What it does.
    pub kind: ActionKind,
    /// The assignments of a `set` action as written (`treatment = "unreleased"`), for
    /// descriptions; empty for other actions.
    pub assignments: Vec<String>,
}

impl Action {
    /// A one-line description (`year 20: thin from below to 700 stems/ha`).
    pub fn describe(&self) -> String {
        let what = match &self.kind {
            ActionKind::Thin {
                from,
                target,
                species,
            } => {
                let only = species
                    .as_ref()
                    .map_or(String::new(), |s| format!(" (species {} only)", s.joined()));
                let from = match from {
                    ThinFrom::Below => "thin from below",
                    ThinFrom::Above => "thin from above",
                    ThinFrom::Proportional => "thin proportionally",
                };
                let what = match target {
                    ThinTarget::StemsPerHa(n) => format!("{from} to {n} stems/ha"),
                    ThinTarget::BasalAreaM2Ha(g) => format!("{from} to {g} m²/ha basal area"),
                    ThinTarget::RemoveFraction(f) => format!("{from}, removing {f} of the stems"),
                };
                format!("{what}{only}")
            }
            ActionKind::Remove(s) => format!("remove every tree of species {}", s.joined()),
            ActionKind::Set(_) => format!("set {} for every tree", self.assignments.join(", ")),
            ActionKind::DensityLimit { max_sdi } => format!(
                "density limit SDI {max_sdi}, in force from then on: the smallest trees die at the end of every sub-step until the stand is at the limit"
            ),
        };
        format!("year {}: {what}", self.year)
    }
}

/// What an action does.
#[derive(Debug, Clone, PartialEq)]
pub enum ActionKind {
    /// Remove trees in diameter order (or evenly across diameters) down to a target.
    Thin {
        /// Which trees go first.
        from: ThinFrom,
        /// What the thinning aims at.
        target: ThinTarget,
        /// When given, only these species are thinned and the target counts them alone.
        species: Option<SpeciesSet>,
    },
    /// Remove every tree of these species.
    Remove(SpeciesSet),
    /// Give every tree these attribute values.
    Set(Vec<SetValue>),
    /// From this year on, at the end of every sub-step, the smallest trees die until
    /// Reineke's SDI is at most `max_sdi`. A later density limit replaces this one.
    DensityLimit {
        /// Largest stand density index allowed (metric, reference QMD 25.4 cm).
        max_sdi: f64,
    },
}

/// The target of a thinning (exactly one per `thin`).
#[derive(Debug, Clone, Copy, PartialEq)]
pub enum ThinTarget {
    /// Keep at most this many stems per hectare (`to_stems_per_ha`, ≥ 0).
    StemsPerHa(f64),
    /// Keep at most this basal area, m²/ha (`to_basal_area_m2_ha`, ≥ 0).
    BasalAreaM2Ha(f64),
    /// Remove this fraction of the stems (`remove_fraction`, in (0, 1)).
    RemoveFraction(f64),
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
/// `species_column` names the column species-restricted actions read.
#[allow(clippy::too_many_arguments)]
pub(crate) fn validate(
    entries: &[ActionEntry],
    species_column: &str,
    trees: &mut TreeList,
    models: &[&ModelCommon],
    horizon_years: f64,
    step_years: f64,
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
        if !(a.year >= 0.0 && a.year <= horizon_years * (1.0 + 1e-12)) {
            return Err(err(
                format!("{key}.year"),
                format!(
                    "{} is outside the projection (0 to {horizon_years} years)",
                    a.year
                ),
            ));
        }
        let steps = (a.year / step_years).round();
        if (a.year - steps * step_years).abs() > 1e-9 * step_years {
            return Err(err(
                format!("{key}.year"),
                format!(
                    "{} is not on a step boundary (0 or a whole multiple of step_years = {step_years})",
                    a.year
                ),
            ));
        }
        let at = (steps * step_years / sub_step_years).round() as u64;
        let assignments: Vec<String> = a
            .set
            .iter()
            .flatten()
            .map(|(name, value)| format!("{name} = {value}"))
            .collect();
        let species_of = |k: String, names: &[String], trees: &TreeList| {
            species::resolve(trees, species_column, names).map_err(|m| err(k, m))
        };
        let kind = match (&a.thin, &a.set, &a.density_limit, &a.remove) {
            (Some(t), None, None, None) => ActionKind::Thin {
                from: t.from,
                target: thin_target(t).map_err(|(k, m)| err(format!("{key}.thin{k}"), m))?,
                species: match &t.species {
                    Some(names) => Some(species_of(format!("{key}.thin.species"), names, trees)?),
                    None => None,
                },
            },
            (None, None, None, Some(r)) => ActionKind::Remove(species_of(
                format!("{key}.remove.species"),
                &r.species,
                trees,
            )?),
            (None, Some(set), None, None) => {
                let mut values = Vec::with_capacity(set.len());
                for (name, value) in set {
                    let k = format!("{key}.set.{name}");
                    values.push(set_value(trees, models, name, value).map_err(|m| err(k, m))?);
                }
                ActionKind::Set(values)
            }
            (None, None, Some(limit), None) => {
                if !(limit.max_sdi > 0.0 && limit.max_sdi.is_finite()) {
                    return Err(err(
                        format!("{key}.density_limit.max_sdi"),
                        format!("{} is not a positive stand density index", limit.max_sdi),
                    ));
                }
                ActionKind::DensityLimit {
                    max_sdi: limit.max_sdi,
                }
            }
            _ => {
                return Err(err(
                    key,
                    "give exactly one of `thin`, `remove`, `set` or `density_limit` per action"
                        .into(),
                ))
            }
        };
        out.push(Action {
            year: a.year,
            at,
            kind,
            assignments,
        });
    }
    Ok(out)
}

/// The one target of a `thin`; on error, the key suffix (`.remove_fraction`) and a message.
fn thin_target(t: &ThinEntry) -> Result<ThinTarget, (String, String)> {
    let given: Vec<(&str, f64)> = [
        ("to_stems_per_ha", t.to_stems_per_ha),
        ("to_basal_area_m2_ha", t.to_basal_area_m2_ha),
        ("remove_fraction", t.remove_fraction),
    ]
    .into_iter()
    .filter_map(|(k, v)| v.map(|v| (k, v)))
    .collect();
    let (name, value) = match given.as_slice() {
        [one] => *one,
        [] => {
            return Err((
                String::new(),
                "give one target: to_stems_per_ha, to_basal_area_m2_ha or remove_fraction".into(),
            ))
        }
        more => {
            let names: Vec<&str> = more.iter().map(|(k, _)| *k).collect();
            return Err((
                String::new(),
                format!("give only one target, not {}", names.join(" and ")),
            ));
        }
    };
    let bad = |why: &str| Err((format!(".{name}"), format!("{value} {why}")));
    match name {
        "remove_fraction" if !(value > 0.0 && value < 1.0) => {
            bad("is not a fraction strictly between 0 and 1")
        }
        "remove_fraction" => Ok(ThinTarget::RemoveFraction(value)),
        _ if !(value >= 0.0 && value.is_finite()) => bad("is not a density (a number ≥ 0)"),
        "to_stems_per_ha" => Ok(ThinTarget::StemsPerHa(value)),
        _ => Ok(ThinTarget::BasalAreaM2Ha(value)),
    }
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
