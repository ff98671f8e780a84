//! CSV tables and the run record, rendered to bytes. Numbers use Rust's shortest round-trip
//! form, so the bytes depend only on the values.

use serde_json::json;

use crate::project::{Driver, Metric, ProjectionResult};

fn opt(x: Option<f64>) -> String {
    x.map_or(String::new(), |v| v.to_string())
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

/// The rows of `summary.csv` (without the header), also the tail of each `batch.csv` row.
pub(crate) fn summary_rows(r: &ProjectionResult) -> impl Iterator<Item = Vec<String>> + '_ {
    let driver = r.driver.name();
    r.years.iter().flat_map(move |y| {
        Metric::ALL.iter().zip(&y.metrics).map(move |(m, s)| {
            vec![
                r.scenario.clone(),
                driver.to_string(),
                y.year.to_string(),
                opt(y.age),
                m.name().to_string(),
                opt(s.mean),
                opt(s.sd),
                opt(s.p05),
                opt(s.p50),
                opt(s.p95),
            ]
        })
    })
}

/// `summary.csv`: `scenario,driver,year,age,metric,mean,sd,p05,p50,p95`.
pub fn summary_csv(r: &ProjectionResult) -> Vec<u8> {
    csv_bytes(
        &[
            "scenario", "driver", "year", "age", "metric", "mean", "sd", "p05", "p50", "p95",
        ],
        summary_rows(r),
    )
}

/// `classes.csv`: `scenario,driver,year,dbh_class_cm,stems_per_ha_mean,p05,p95`.
pub fn classes_csv(r: &ProjectionResult) -> Vec<u8> {
    let rows = r.classes.iter().map(|c| {
        vec![
            r.scenario.clone(),
            r.driver.name().to_string(),
            c.year.to_string(),
            c.lower_cm.to_string(),
            c.mean.to_string(),
            opt(c.p05),
            opt(c.p95),
        ]
    });
    csv_bytes(
        &[
            "scenario",
            "driver",
            "year",
            "dbh_class_cm",
            "stems_per_ha_mean",
            "p05",
            "p95",
        ],
        rows,
    )
}

/// `trees.csv` (expected driver): `stand,tree,year,dbh_cm,cumulative_survival,stems_per_ha`.
pub fn trees_csv(r: &ProjectionResult) -> Vec<u8> {
    let rows = r.trees.iter().map(|t| {
        vec![
            r.stand.clone(),
            t.tree.clone(),
            t.year.to_string(),
            t.dbh_cm.to_string(),
            t.cumulative_survival.to_string(),
            t.stems_per_ha.to_string(),
        ]
    });
    csv_bytes(
        &[
            "stand",
            "tree",
            "year",
            "dbh_cm",
            "cumulative_survival",
            "stems_per_ha",
        ],
        rows,
    )
}

/// `harvest.csv`: `scenario,driver,year,action,stems_per_ha_mean,stems_per_ha_p05,
/// stems_per_ha_p95,basal_area_m2_ha_mean,basal_area_m2_ha_p05,basal_area_m2_ha_p95`, one row
/// per action event (see [`crate::project::HarvestRow`]); percentiles are type 7 over
/// replicates and empty for the expected driver.
pub fn harvest_csv(r: &ProjectionResult) -> Vec<u8> {
    let rows = r.harvest.iter().map(|h| {
        let (n, g) = (&h.stems_per_ha, &h.basal_area_m2_ha);
        vec![
            r.scenario.clone(),
            r.driver.name().to_string(),
            h.year.to_string(),
            h.action.name().to_string(),
            opt(n.mean),
            opt(n.p05),
            opt(n.p95),
            opt(g.mean),
            opt(g.p05),
            opt(g.p95),
        ]
    });
    csv_bytes(
        &[
            "scenario",
            "driver",
            "year",
            "action",
            "stems_per_ha_mean",
            "stems_per_ha_p05",
            "stems_per_ha_p95",
            "basal_area_m2_ha_mean",
            "basal_area_m2_ha_p05",
            "basal_area_m2_ha_p95",
        ],
        rows,
    )
}

/// `run.json`: version, seed, input file hashes, settings, warnings. Thread count is left out
/// on purpose: results do not depend on it.
pub fn run_json(r: &ProjectionResult) -> Vec<u8> {
    let s = &r.settings;
    let value = json!({
        "version": env!("CARGO_PKG_VERSION"),
        "scenario": r.scenario,
        "stand": r.stand,
        "driver": r.driver.name(),
        "seed": r.seed,
        "inputs": r.inputs.iter().map(|f| json!({
            "role": f.role,
            "path": f.path.display().to_string(),
            "sha256": f.sha256,
        })).collect::<Vec<_>>(),
        "settings": {
            "replicates": if r.driver == Driver::Expected { 1 } else { s.replicates },
            "horizon_years": s.horizon_years,
            "step_years": s.step_years,
            "sub_step_years": s.sub_step_years,
            "uncertainty": {
                "process": s.process,
                "parameters": s.parameters,
                "growth_residual": s.growth_residual,
            },
            "area_ha": s.area_ha,
            "start_age_years": s.start_age_years,
            "dbh_class_width_cm": s.class_width_cm,
            "actions": s.actions,
            "percentiles": "type 7 (linear interpolation between order statistics)",
            "sd": "n - 1",
        },
        "warnings": r.warnings,
    });
    let mut out = serde_json::to_vec_pretty(&value).unwrap_or_default();
    out.push(b'\n');
    out
}
