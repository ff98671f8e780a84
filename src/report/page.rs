//! Sections of `report.html` shared by `project` (one scenario) and `compare` (several): the
//! scenarios' settings, the model summaries, the per-step tables and the warnings.

use std::path::{Path, PathBuf};

pub(crate) use super::charts::YEARS_LABEL as YEARS;
use super::charts::{metrics_chart_svg, survival_chart_svg};
use super::charts_classes::{distribution_chart_svg, distribution_years};
use super::html::{render, Block, Page, Section};
use crate::model::stored::{Model, ModelCommon};
use crate::project::{Metric, ProjectionResult, Summary};
use crate::scenario::{AttributeValues, Scenario, TreeList};

/// What the report says about a scenario beyond its result: its file and its trees.
#[derive(Debug, Clone, PartialEq)]
pub(crate) struct Facts {
    /// The scenario file.
    pub file: String,
    /// The trees in one line.
    pub trees: String,
}

/// Facts of a validated scenario.
pub(crate) fn facts_of(s: &Scenario) -> Facts {
    Facts {
        file: s.file.clone(),
        trees: describe_trees(&s.trees, &s.inputs),
    }
}

fn describe_trees(t: &TreeList, inputs: &[crate::scenario::InputFile]) -> String {
    let stems: f64 = t.stems_per_ha.iter().sum();
    let (lo, hi) = t
        .dbh_cm
        .iter()
        .fold((f64::INFINITY, f64::NEG_INFINITY), |(a, b), &d| {
            (a.min(d), b.max(d))
        });
    let source = inputs
        .iter()
        .find(|f| f.role == "trees")
        .map_or("generated cohort".to_string(), |f| {
            format!("tree list {}", f.path.display())
        });
    let attrs: Vec<String> = t
        .attributes
        .iter()
        .map(|a| match &a.values {
            AttributeValues::Numeric(_) => format!("{} (numeric)", a.name),
            AttributeValues::Categorical { levels, .. } => {
                format!("{} = {}", a.name, levels.join(" / "))
            }
        })
        .collect();
    let mut out = format!(
        "{source}: {} records, {stems:.0} stems/ha, DBH {lo:.1}–{hi:.1} cm",
        t.len()
    );
    if !attrs.is_empty() {
        out.push_str(&format!("; {}", attrs.join(", ")));
    }
    out
}

/// Models of a validated scenario, survival first.
pub(crate) fn models_of(s: &Scenario) -> Vec<(PathBuf, Model)> {
    vec![
        (
            s.survival.path.clone(),
            Model::Survival(s.survival.model.clone()),
        ),
        (s.growth.path.clone(), Model::Growth(s.growth.model.clone())),
    ]
}

/// A number with about four significant digits, no exponent for everyday magnitudes.
pub(crate) fn num(v: f64) -> String {
    if !v.is_finite() {
        return String::new();
    }
    let a = v.abs();
    let decimals = if a == 0.0 || a >= 1000.0 {
        0
    } else {
        (3 - a.log10().floor() as i32).clamp(0, 6) as usize
    };
    let s = format!("{v:.decimals$}");
    if s.starts_with('-') && s[1..].chars().all(|c| c == '0' || c == '.') {
        s[1..].to_string()
    } else {
        s
    }
}

/// `mean [p05, p95]`, or the mean alone without a band.
pub(crate) fn mean_band(mean: Option<f64>, p05: Option<f64>, p95: Option<f64>) -> String {
    match (mean, p05, p95) {
        (Some(m), Some(lo), Some(hi)) => format!("{} [{}, {}]", num(m), num(lo), num(hi)),
        (Some(m), _, _) => num(m),
        _ => "–".into(),
    }
}

fn cell(s: &Summary) -> String {
    mean_band(s.mean, s.p05, s.p95)
}

/// Metrics of the per-step tables, with their column headings.
pub(crate) const TABLE_METRICS: [(Metric, &str); 4] = [
    (Metric::StemsPerHa, "stems/ha"),
    (Metric::CumulativeSurvival, "cumulative survival"),
    (Metric::BasalArea, "basal area (m²/ha)"),
    (Metric::Qmd, "QMD (cm)"),
];

/// One table per projection: per output year, mean [5th, 95th percentile] of the main metrics.
pub(crate) fn steps_section(results: &[ProjectionResult]) -> Section {
    let mut blocks = vec![Block::Paragraph(
        "Each cell: mean across replicates [5th, 95th percentile], i.e. the 90 % band.".into(),
    )];
    for r in results {
        let ages = r.years.iter().any(|y| y.age.is_some());
        let mut header = vec!["year".to_string()];
        if ages {
            header.push("age".into());
        }
        header.extend(TABLE_METRICS.iter().map(|(_, h)| h.to_string()));
        let rows = r
            .years
            .iter()
            .map(|y| {
                let mut row = vec![y.year.to_string()];
                if ages {
                    row.push(y.age.map_or(String::new(), |a| a.to_string()));
                }
                row.extend(TABLE_METRICS.iter().map(|(m, _)| cell(y.get(*m))));
                row
            })
            .collect();
        blocks.push(Block::Paragraph(format!("Scenario \"{}\"", r.scenario)));
        blocks.push(Block::Table { header, rows });
    }
    Section {
        heading: "Per-step summaries".into(),
        blocks,
    }
}

/// The settings of each projection in one table.
pub(crate) fn settings_section(results: &[ProjectionResult], facts: &[Option<Facts>]) -> Section {
    let header = [
        "scenario",
        "file",
        "horizon (years)",
        "step (years)",
        "replicates",
        "seed",
        "trees",
        "uncertainty",
        "actions",
    ];
    let rows = results
        .iter()
        .enumerate()
        .map(|(i, r)| {
            let s = &r.settings;
            let f = facts.get(i).and_then(Option::as_ref);
            let on = |b: bool| if b { "on" } else { "off" };
            vec![
                r.scenario.clone(),
                f.map_or(String::new(), |f| f.file.clone()),
                s.horizon_years.to_string(),
                s.step_years.to_string(),
                s.replicates.to_string(),
                r.seed.to_string(),
                f.map_or(String::new(), |f| f.trees.clone()),
                format!(
                    "mortality {}, parameters {}, growth residuals {}{}",
                    on(s.process),
                    on(s.parameters),
                    on(s.growth_residual),
                    s.area_ha
                        .map_or(String::new(), |a| format!(", whole stems on {a} ha"))
                ),
                if s.actions.is_empty() {
                    "none".into()
                } else {
                    s.actions.join("; ")
                },
            ]
        })
        .collect();
    Section {
        heading: "Scenarios".into(),
        blocks: vec![Block::Table {
            header: header.iter().map(|h| h.to_string()).collect(),
            rows,
        }],
    }
}

/// One block pair per distinct model file: what it is and its coefficients.
pub(crate) fn models_section(models: &[(PathBuf, Model)]) -> Section {
    let mut blocks = Vec::new();
    let mut seen: Vec<&Path> = Vec::new();
    for (path, model) in models {
        if seen.contains(&path.as_path()) {
            continue;
        }
        seen.push(path);
        let (what, common) = match model {
            Model::Survival(m) => (
                format!(
                    "Survival model {}: {} link, outcome {}, interval {}",
                    path.display(),
                    m.link.name(),
                    serde_name(&m.outcome),
                    serde_name(&m.interval)
                ),
                &m.common,
            ),
            Model::Growth(m) => (
                format!(
                    "Growth model {}: response {}, residual SD {}",
                    path.display(),
                    serde_name(&m.response),
                    num(m.residual_sd)
                ),
                &m.common,
            ),
        };
        blocks.push(Block::Paragraph(format!("{what}{}", fit_facts(common))));
        blocks.push(coefficients(common));
    }
    Section {
        heading: "Models".into(),
        blocks,
    }
}

fn serde_name<T: serde::Serialize>(v: &T) -> String {
    match serde_json::to_value(v) {
        Ok(serde_json::Value::String(s)) => s,
        _ => "?".into(),
    }
}

fn fit_facts(c: &ModelCommon) -> String {
    let mut facts = vec![
        c.period_years
            .map_or("no period".into(), |p| format!("period {p} years")),
        format!("{} units", serde_name(&c.units)),
    ];
    if let Some(f) = &c.fit {
        let opt = |name: &str, v: Option<f64>| v.map(|v| format!("{name} {}", num(v)));
        facts.extend(f.records.map(|n| format!("{n} records")));
        facts.extend(f.source.as_ref().map(|s| format!("data {s}")));
        facts.extend(opt("deviance", f.deviance));
        facts.extend(opt("null deviance", f.null_deviance));
        facts.extend(opt("log-likelihood", f.log_likelihood));
        facts.extend(opt("AIC", f.aic));
        facts.extend(opt("BIC", f.bic));
        facts.extend(opt("R²", f.r_squared));
        facts.extend(f.iterations.map(|n| format!("{n} iterations")));
        facts.extend(
            f.converged
                .map(|c| (if c { "converged" } else { "NOT converged" }).into()),
        );
    } else {
        facts.push("no fit record (typed by hand)".into());
    }
    format!("; {}.", facts.join(", "))
}

fn coefficients(c: &ModelCommon) -> Block {
    let names = c.predictor.names();
    let est = c.predictor.coefficients();
    let se: Vec<Option<f64>> = match (&c.predictor.std_errors, &c.covariance) {
        (Some(se), _) => se.iter().map(|&v| Some(v)).collect(),
        (None, Some(v)) => (0..names.len())
            .map(|i| v.matrix.get(i).and_then(|r| r.get(i)).map(|d| d.sqrt()))
            .collect(),
        _ => vec![None; names.len()],
    };
    let rows = names
        .iter()
        .zip(&est)
        .enumerate()
        .map(|(i, (n, &b))| {
            let s = se.get(i).copied().flatten();
            vec![
                n.clone(),
                format!("{b:.6}"),
                s.map_or("–".into(), |s| format!("{s:.6}")),
                s.filter(|&s| s > 0.0)
                    .map_or("–".into(), |s| format!("{:.2}", b / s)),
            ]
        })
        .collect();
    Block::Table {
        header: ["term", "estimate", "std. error", "estimate / SE"]
            .iter()
            .map(|h| h.to_string())
            .collect(),
        rows,
    }
}

/// The caution without its own "Caution:" lead (the page adds one).
pub(crate) fn caution() -> String {
    let c = crate::fit::summary::CAUTION;
    c.strip_prefix("Caution: ").unwrap_or(c).to_string()
}

/// Every warning, prefixed with its scenario.
pub(crate) fn warnings_block(results: &[ProjectionResult], more: &[String]) -> Block {
    Block::Warnings(
        more.iter()
            .cloned()
            .chain(results.iter().flat_map(|r| {
                r.warnings
                    .iter()
                    .map(move |w| format!("\"{}\": {w}", r.scenario))
            }))
            .collect(),
    )
}

/// `report.html` of one projection. The models and the trees are read back from the files the
/// scenario named (recorded in the result's inputs); a file that no longer reads is left out
/// of the page with a note.
///
/// # Errors
/// [`crate::Error::Io`] if a chart cannot be drawn.
pub fn projection_report(r: &ProjectionResult) -> Result<Vec<u8>, crate::Error> {
    let scenario = r
        .inputs
        .iter()
        .find(|f| f.role == "scenario")
        .and_then(|f| Scenario::read(&f.path).ok());
    let mut notes = Vec::new();
    let (facts, models) = match &scenario {
        Some(s) => (Some(facts_of(s)), models_of(s)),
        None => {
            notes.push("the scenario file could not be read again, so its trees and models are not described here".into());
            (None, Vec::new())
        }
    };
    let results = std::slice::from_ref(r);
    let mut charts = vec![
        Block::Chart {
            svg: survival_chart_svg(r)?,
            caption: "Cumulative survival (model mortality only; removals are not deaths).".into(),
        },
        Block::Chart {
            svg: metrics_chart_svg(results, Metric::StemsPerHa, "Stems per hectare")?,
            caption: "Stems per hectare after each step's actions.".into(),
        },
        Block::Chart {
            svg: metrics_chart_svg(results, Metric::BasalArea, "Basal area")?,
            caption: "Basal area.".into(),
        },
    ];
    if !r.classes.is_empty() {
        charts.push(Block::Chart {
            svg: distribution_chart_svg(results, &distribution_years(r))?,
            caption: "Diameter distributions at the start, middle and end of the projection."
                .into(),
        });
    }
    let page = Page {
        title: format!("stemcast projection: {}", r.scenario),
        subtitle: format!(
            "{} driver, {} replicate(s), seed {}, stand {}",
            r.driver.name(),
            r.settings.replicates,
            r.seed,
            r.stand
        ),
        caution: caution(),
        sections: vec![
            Section {
                heading: "Warnings".into(),
                blocks: vec![
                    Block::Paragraph(if r.warnings.is_empty() && notes.is_empty() {
                        "None.".into()
                    } else {
                        "Read these before the results.".into()
                    }),
                    warnings_block(results, &notes),
                ],
            },
            settings_section(results, &[facts]),
            Section {
                heading: "Charts".into(),
                blocks: charts,
            },
            steps_section(results),
            models_section(&models),
        ],
    };
    Ok(render(&page).into_bytes())
}
