//! The tables of `stemcast validate` (docs/validation.md): `validation_plots.csv`,
//! `validation.csv` and `validation_survival.csv`. Numbers use Rust's shortest round-trip
//! form, so the bytes depend only on the values.

use crate::project::{CaseResult, SummaryRow, SurvivalClass, METRICS};

/// What every validation table says about ingrowth and volume.
pub const VALIDATION_NOTE: &str = "observed values are the survivors of the trees alive at t1 and not cut (ingrowth excluded: the scenario has no ingrowth model); cut trees are removed at the start and counted; volume is not compared (scenarios have no volume model)";

fn opt(x: Option<f64>) -> String {
    x.map_or(String::new(), |v| v.to_string())
}

fn finite(x: f64) -> String {
    if x.is_finite() {
        x.to_string()
    } else {
        String::new()
    }
}

fn csv_bytes(header: &[&str], rows: impl Iterator<Item = Vec<String>>) -> Vec<u8> {
    let mut w = csv::Writer::from_writer(Vec::new());
    // Writing to memory cannot fail; an error here would be a bug in csv.
    let _ = w.write_record(header);
    for r in rows {
        let _ = w.write_record(&r);
    }
    w.into_inner().unwrap_or_default()
}

/// Header of `validation_plots.csv`.
pub const PLOT_COLUMNS: [&str; 13] = [
    "plot",
    "t1",
    "t2",
    "years",
    "sub_steps",
    "qmd_t1_cm",
    "cut_stems_per_ha",
    "metric",
    "observed",
    "predicted_mean",
    "p05",
    "p95",
    "inside_band",
];

/// `validation_plots.csv`: one row per plot-interval and metric.
pub fn validation_plots_csv(results: &[CaseResult]) -> Vec<u8> {
    let rows = results.iter().flat_map(|r| {
        METRICS.iter().zip(&r.metrics).map(move |((name, _), c)| {
            vec![
                r.plot.clone(),
                r.t1.to_string(),
                r.t2.to_string(),
                (r.t2 - r.t1).to_string(),
                r.sub_steps.to_string(),
                finite(r.qmd_t1_cm),
                r.cut_stems_per_ha.to_string(),
                (*name).to_string(),
                finite(c.observed),
                opt(c.mean),
                opt(c.p05),
                opt(c.p95),
                opt(c.inside),
            ]
        })
    });
    csv_bytes(&PLOT_COLUMNS, rows)
}

/// `validation.csv`: the summary rows.
pub fn validation_csv(rows: &[SummaryRow]) -> Vec<u8> {
    let body = rows.iter().map(|r| {
        vec![
            r.metric.to_string(),
            r.group.clone(),
            r.level.clone(),
            r.n.to_string(),
            r.plots.to_string(),
            r.mean_observed.to_string(),
            r.mean_predicted.to_string(),
            r.bias.to_string(),
            r.se_bias.to_string(),
            finite(r.relative_bias),
            r.rmse.to_string(),
            opt(r.coverage),
            opt(r.coverage_interval.map(|c| c[0])),
            opt(r.coverage_interval.map(|c| c[1])),
        ]
    });
    csv_bytes(
        &[
            "metric",
            "group",
            "level",
            "intervals",
            "plots",
            "mean_observed",
            "mean_predicted",
            "bias",
            "se_bias",
            "relative_bias",
            "rmse",
            "coverage",
            "coverage_lo",
            "coverage_hi",
        ],
        body,
    )
}

/// `validation_survival.csv`: tree-level survival calibration by DBH class at t1.
pub fn validation_survival_csv(classes: &[SurvivalClass]) -> Vec<u8> {
    let body = classes.iter().map(|c| {
        vec![
            c.lower_cm.to_string(),
            opt(c.upper_cm),
            c.trees.to_string(),
            c.observed.to_string(),
            c.predicted.to_string(),
        ]
    });
    csv_bytes(
        &[
            "dbh_lower_cm",
            "dbh_upper_cm",
            "trees",
            "observed_survival",
            "predicted_survival",
        ],
        body,
    )
}
