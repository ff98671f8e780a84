//! The outputs of `compare`: every scenario's summaries in one long table, the paired
//! differences from the baseline, the run record, the charts and the report page.

use std::path::{Path, PathBuf};

use super::charts::{band_chart_svg, metric_label, metrics_chart_svg, Axes, BandPoint, Series};
use super::charts_classes::{distribution_chart_svg, distribution_years};
use super::html::{render, Block, Page, Section};
use super::page::{
    caution, facts_of, mean_band, models_of, models_section, settings_section, steps_section,
    warnings_block, TABLE_METRICS, YEARS,
};
use super::{classes_csv, harvest_csv, run_json, summary_csv, write_files_atomically};
use crate::project::{Comparison, Metric, ProjectionResult};
use crate::scenario::Scenario;

/// Concatenate per-scenario CSV tables that share a header.
fn concat_csv(tables: impl Iterator<Item = Vec<u8>>) -> Vec<u8> {
    let mut out = Vec::new();
    for (i, t) in tables.enumerate() {
        let body = if i == 0 {
            &t[..]
        } else {
            t.iter()
                .position(|&b| b == b'\n')
                .map_or(&t[t.len()..], |n| &t[n + 1..])
        };
        out.extend_from_slice(body);
    }
    out
}

fn opt(x: Option<f64>) -> String {
    x.map_or(String::new(), |v| v.to_string())
}

/// `differences.csv`: `year,metric,scenario,baseline,mean_difference,p05,p95`.
pub fn differences_csv(c: &Comparison) -> Vec<u8> {
    let mut w = csv::Writer::from_writer(Vec::new());
    // Writing to memory cannot fail; an error here would be a bug in csv.
    let _ = w.write_record([
        "year",
        "metric",
        "scenario",
        "baseline",
        "mean_difference",
        "p05",
        "p95",
    ]);
    for d in &c.differences {
        let _ = w.write_record([
            d.year.to_string(),
            d.metric.name().to_string(),
            d.scenario.clone(),
            d.baseline.clone(),
            opt(d.mean),
            opt(d.p05),
            opt(d.p95),
        ]);
    }
    w.into_inner().unwrap_or_default()
}

/// `run.json` of a comparison: seed, replicates, baseline, each scenario's own run record.
fn comparison_json(c: &Comparison) -> Vec<u8> {
    let runs: Vec<serde_json::Value> = c
        .results
        .iter()
        .map(|r| serde_json::from_slice(&run_json(r)).unwrap_or(serde_json::Value::Null))
        .collect();
    let value = serde_json::json!({
        "version": env!("CARGO_PKG_VERSION"),
        "command": "compare",
        "seed": c.seed,
        "replicates": c.replicates,
        "baseline": c.results.first().map(|r| r.scenario.clone()),
        "pairing": "common random numbers: one seed; replicate r of every scenario draws the same numbers for the same record, sub-step and purpose; differences are scenario minus baseline per replicate",
        "scenarios": runs,
        "warnings": c.warnings,
    });
    let mut out = serde_json::to_vec_pretty(&value).unwrap_or_default();
    out.push(b'\n');
    out
}

/// Scenario − baseline of one metric over time with its 90 % band, one colour per compared
/// scenario (the colours the scenarios have on the other charts).
///
/// # Errors
/// [`crate::Error::Io`] if plotters fails to draw.
pub fn difference_chart_svg(c: &Comparison, metric: Metric) -> Result<String, crate::Error> {
    let baseline = c.results.first().map_or("", |r| r.scenario.as_str());
    let series: Vec<Series> = c
        .results
        .iter()
        .enumerate()
        .skip(1)
        .map(|(i, r)| Series {
            label: format!("{} − {baseline}", r.scenario),
            colour: i,
            points: c
                .differences
                .iter()
                .filter(|d| d.metric == metric && d.scenario == r.scenario)
                .filter_map(|d| {
                    Some(BandPoint {
                        x: d.year,
                        mean: d.mean?,
                        lo: d.p05,
                        hi: d.p95,
                    })
                })
                .collect(),
        })
        .collect();
    band_chart_svg(
        &Axes {
            title: format!("Difference from \"{baseline}\" (paired replicates)"),
            x_label: YEARS.into(),
            y_label: format!("Difference, {}", metric_label(metric)),
        },
        &series,
    )
}

/// Every output file of a comparison: `summary.csv`, `classes.csv`, `harvest.csv`,
/// `differences.csv`,
/// `run.json`, `survival.svg`, `stems.svg`, `difference_stems.svg`,
/// `difference_survival.svg`, `distributions.svg` and `report.html`. `scenarios` are the
/// compared scenarios in the comparison's order (for the report's settings and models).
///
/// # Errors
/// [`crate::Error::Io`] if a chart cannot be drawn.
pub fn render_comparison(
    c: &Comparison,
    scenarios: &[Scenario],
) -> Result<Vec<(String, Vec<u8>)>, crate::Error> {
    let rs = &c.results;
    let charts = [
        (
            "survival.svg",
            metrics_chart_svg(rs, Metric::CumulativeSurvival, "Cumulative survival")?,
            "Cumulative survival of every scenario with its 90 % band (model mortality only).",
        ),
        (
            "stems.svg",
            metrics_chart_svg(rs, Metric::StemsPerHa, "Stems per hectare")?,
            "Stems per hectare after each step's actions, with 90 % bands.",
        ),
        (
            "difference_stems.svg",
            difference_chart_svg(c, Metric::StemsPerHa)?,
            "Stems per hectare, scenario minus baseline, from paired replicates: mean and 90 % band of the differences.",
        ),
        (
            "difference_survival.svg",
            difference_chart_svg(c, Metric::CumulativeSurvival)?,
            "Cumulative survival, scenario minus baseline, from paired replicates.",
        ),
        (
            "distributions.svg",
            distribution_chart_svg(rs, &rs.first().map(distribution_years).unwrap_or_default())?,
            "Diameter distributions at the start, middle and end of the projection.",
        ),
    ];
    let mut files = vec![
        (
            "summary.csv".to_string(),
            concat_csv(rs.iter().map(summary_csv)),
        ),
        (
            "classes.csv".to_string(),
            concat_csv(rs.iter().map(classes_csv)),
        ),
        (
            "harvest.csv".to_string(),
            concat_csv(rs.iter().map(harvest_csv)),
        ),
        ("differences.csv".to_string(), differences_csv(c)),
        ("run.json".to_string(), comparison_json(c)),
    ];
    let blocks = charts
        .iter()
        .map(|(_, svg, caption)| Block::Chart {
            svg: svg.clone(),
            caption: caption.to_string(),
        })
        .collect();
    files.extend(
        charts
            .into_iter()
            .map(|(name, svg, _)| (name.to_string(), svg.into_bytes())),
    );
    files.push(("report.html".to_string(), report(c, scenarios, blocks)));
    Ok(files)
}

/// Write the outputs of a comparison into `dir` (created if missing); nothing is left behind
/// on failure. Returns the paths written.
///
/// # Errors
/// [`crate::Error::Io`] naming the path that could not be written or the chart that could not
/// be drawn.
pub fn write_comparison(
    dir: &Path,
    c: &Comparison,
    scenarios: &[Scenario],
) -> Result<Vec<PathBuf>, crate::Error> {
    let files = render_comparison(c, scenarios)?;
    write_files_atomically(dir, &files)
}

fn differences_section(c: &Comparison) -> Section {
    let mut header = vec!["year".to_string(), "scenario".to_string()];
    header.extend(TABLE_METRICS.iter().map(|(_, h)| format!("Δ {h}")));
    let rows = c
        .results
        .iter()
        .skip(1)
        .flat_map(|r| {
            r.years.iter().map(|y| {
                let mut row = vec![y.year.to_string(), r.scenario.clone()];
                row.extend(TABLE_METRICS.iter().map(|(m, _)| {
                    c.differences
                        .iter()
                        .find(|d| d.scenario == r.scenario && d.year == y.year && d.metric == *m)
                        .map_or("–".into(), |d| mean_band(d.mean, d.p05, d.p95))
                }));
                row
            })
        })
        .collect();
    Section {
        heading: format!(
            "Differences from the baseline \"{}\"",
            c.results.first().map_or("", |r| r.scenario.as_str())
        ),
        blocks: vec![
            Block::Paragraph("Each cell: mean of the paired differences (scenario − baseline, replicate by replicate) [5th, 95th percentile]. A band that excludes 0 means the scenarios differ in nearly every replicate.".into()),
            Block::Table { header, rows },
        ],
    }
}

fn report(c: &Comparison, scenarios: &[Scenario], charts: Vec<Block>) -> Vec<u8> {
    let rs: &[ProjectionResult] = &c.results;
    let facts: Vec<_> = scenarios.iter().map(|s| Some(facts_of(s))).collect();
    let models: Vec<_> = scenarios.iter().flat_map(models_of).collect();
    let names: Vec<String> = rs.iter().map(|r| format!("\"{}\"", r.scenario)).collect();
    let any_warning = !c.warnings.is_empty() || rs.iter().any(|r| !r.warnings.is_empty());
    let page = Page {
        title: format!("stemcast comparison: {}", names.join(" vs ")),
        subtitle: format!(
            "{} scenarios, {} paired replicates each, seed {}, baseline {}",
            rs.len(),
            c.replicates,
            c.seed,
            names.first().map_or("", String::as_str)
        ),
        caution: caution(),
        sections: vec![
            Section {
                heading: "How to read this comparison".into(),
                blocks: vec![
                    Block::Paragraph(format!(
                        "Every scenario ran {} Monte Carlo replicates with seed {}. Replicate r of every scenario uses the same random numbers for the same tree, sub-step and purpose (common random numbers), so the differences below are taken replicate by replicate and their bands show how sure the comparison is, not how variable each stand is.",
                        c.replicates, c.seed
                    )),
                    Block::Paragraph(if any_warning {
                        "Some projections carry trees outside the covariate ranges the models were fitted on, or raise other warnings: read the Warnings section at the end before relying on those years.".into()
                    } else {
                        "No warnings: every projection stayed within the covariate ranges of the fitting data.".into()
                    }),
                ],
            },
            settings_section(rs, &facts),
            Section { heading: "Charts".into(), blocks: charts },
            differences_section(c),
            steps_section(rs),
            models_section(&models),
            Section {
                heading: "Warnings".into(),
                blocks: vec![if any_warning {
                    warnings_block(rs, &c.warnings)
                } else {
                    Block::Paragraph("None.".into())
                }],
            },
        ],
    };
    render(&page).into_bytes()
}
