//! The models section of `report.html`: what each model file is, its fit facts and its
//! coefficients with standard errors.

use std::path::{Path, PathBuf};

use super::html::{Block, Section};
use super::page::num;
use crate::model::stored::{Model, ModelCommon};

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
