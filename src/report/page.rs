//! Sections of `report.html` shared by `project` (one scenario) and `compare` (several): the
//! scenarios' settings, the model summaries, the per-step tables and the warnings.

use std::path::PathBuf;

pub(crate) use super::charts::YEARS_LABEL as YEARS;
use super::charts::{metrics_chart_svg, survival_chart_svg};
use super::charts_classes::{distribution_chart_svg, distribution_years};
use super::html::{render, Block, Page, Section};
pub(crate) use super::page_models::models_section;
use crate::model::stored::Model;
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

/// A number with about four significant digits and no trailing zeros, no exponent for
/// everyday magnitudes.
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
    let s = if s.contains('.') {
        s.trim_end_matches('0').trim_end_matches('.')
    } else {
        &s
    };
    if s == "-0" {
        "0".into()
    } else {
        s.into()
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

/// The settings of each projection: the numbers in one table, then one paragraph per
/// scenario with its file, trees, uncertainty and actions (text reads better left-aligned).
pub(crate) fn settings_section(results: &[ProjectionResult], facts: &[Option<Facts>]) -> Section {
    let header = [
        "scenario",
        "horizon (years)",
        "step (years)",
        "replicates",
        "seed",
        "actions",
    ];
    let rows = results
        .iter()
        .map(|r| {
            let s = &r.settings;
            vec![
                r.scenario.clone(),
                s.horizon_years.to_string(),
                s.step_years.to_string(),
                s.replicates.to_string(),
                r.seed.to_string(),
                s.actions.len().to_string(),
            ]
        })
        .collect();
    let mut blocks = vec![Block::Table {
        header: header.iter().map(|h| h.to_string()).collect(),
        rows,
    }];
    for (i, r) in results.iter().enumerate() {
        let s = &r.settings;
        let on = |b: bool| if b { "on" } else { "off" };
        let mut text = format!("\"{}\"", r.scenario);
        if let Some(f) = facts.get(i).and_then(Option::as_ref) {
            text.push_str(&format!(" ({}). Trees: {}.", f.file, f.trees));
        } else {
            text.push('.');
        }
        text.push_str(&format!(
            " Uncertainty: random mortality {}, parameter draws {}, growth residuals {}{}.",
            on(s.process),
            on(s.parameters),
            on(s.growth_residual),
            s.area_ha
                .map_or(String::new(), |a| format!(", whole stems on {a} ha"))
        ));
        text.push_str(&if s.actions.is_empty() {
            " Actions: none.".to_string()
        } else {
            format!(" Actions: {}.", s.actions.join("; "))
        });
        blocks.push(Block::Paragraph(text));
    }
    Section {
        heading: "Scenarios".into(),
        blocks,
    }
}

/// The caution without its own "Caution:" lead (the page adds one).
pub(crate) fn caution() -> String {
    let c = super::CAUTION;
    let rest = c.strip_prefix("Caution: ").unwrap_or(c);
    let mut chars = rest.chars();
    let text: String = chars
        .next()
        .map_or(String::new(), |f| f.to_uppercase().chain(chars).collect());
    format!("{text} No ingrowth or regeneration is modelled: a projection follows the trees present at its start.")
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

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn numbers_keep_four_significant_digits_without_trailing_zeros() {
        // Derived by hand from the rule: decimals = 3 − ⌊log10 |v|⌋, then trailing zeros cut.
        assert_eq!(num(1543.26), "1543");
        assert_eq!(num(-80.0), "-80");
        assert_eq!(num(0.081764), "0.08176");
        assert_eq!(num(-0.00001), "-0.00001");
        // At most 6 decimals: −1e-9 rounds to −0.000000, shown as 0.
        assert_eq!(num(-1e-9), "0");
        assert_eq!(mean_band(Some(1.0), Some(0.5), Some(2.25)), "1 [0.5, 2.25]");
        assert!(caution().starts_with("Model estimates"));
    }
}
