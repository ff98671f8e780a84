//! `validation.html` of `stemcast validate` (docs/validation.md): observed against predicted
//! with the 1:1 line, residuals against QMD at t1, coverage with its bootstrap interval, and
//! what coverage means.

use plotters::prelude::*;

use super::charts::{colour, draw_error, tick, GRID, INK, SIZE};
use super::html::{render, Block, Page, Section};
use super::validate::VALIDATION_NOTE;
use crate::project::{CaseResult, SummaryRow, METRICS};

/// Scatter of (x, y) points with a reference line through `line` (two points).
fn scatter_svg(
    title: &str,
    labels: [&str; 2],
    points: &[(f64, f64)],
    line: [(f64, f64); 2],
    ranges: [(f64, f64); 2],
) -> Result<String, crate::Error> {
    let fail = |e: &dyn std::fmt::Display| draw_error(title, e);
    let mut svg = String::new();
    {
        let root = SVGBackend::with_string(&mut svg, SIZE).into_drawing_area();
        root.fill(&WHITE).map_err(|e| fail(&e))?;
        let mut c = ChartBuilder::on(&root)
            .caption(title, ("sans-serif", 19).into_font().color(&INK))
            .margin(16)
            .x_label_area_size(46)
            .y_label_area_size(78)
            .build_cartesian_2d(ranges[0].0..ranges[0].1, ranges[1].0..ranges[1].1)
            .map_err(|e| fail(&e))?;
        c.configure_mesh()
            .x_desc(labels[0])
            .y_desc(labels[1])
            .axis_desc_style(("sans-serif", 15).into_font().color(&INK))
            .label_style(("sans-serif", 13).into_font().color(&INK))
            .light_line_style(TRANSPARENT)
            .bold_line_style(GRID)
            .x_label_formatter(&|v| tick(*v))
            .y_label_formatter(&|v| tick(*v))
            .draw()
            .map_err(|e| fail(&e))?;
        c.draw_series(LineSeries::new(line, INK.stroke_width(1)))
            .map_err(|e| fail(&e))?;
        c.draw_series(
            points
                .iter()
                .map(|&p| Circle::new(p, 3, colour(0).mix(0.7).filled())),
        )
        .map_err(|e| fail(&e))?;
        root.present().map_err(|e| fail(&e))?;
    }
    Ok(svg)
}

/// A padded range of `v`.
fn range(v: impl Iterator<Item = f64>) -> (f64, f64) {
    let (lo, hi) = v.fold((f64::INFINITY, f64::NEG_INFINITY), |a, x| {
        (a.0.min(x), a.1.max(x))
    });
    if !lo.is_finite() {
        return (0.0, 1.0);
    }
    let pad = ((hi - lo) * 0.05).max(1e-6);
    (lo - pad, hi + pad)
}

/// The page.
///
/// # Errors
/// [`crate::Error::Io`] if a chart cannot be drawn.
pub fn validation_report(
    results: &[CaseResult],
    summary: &[SummaryRow],
    subtitle: &str,
) -> Result<Vec<u8>, crate::Error> {
    let mut sections = vec![Section {
        heading: "What is compared".into(),
        blocks: vec![
            Block::Paragraph(format!("Every plot was projected from one measurement to the next with the scenario's models and uncertainty settings, and the projection set beside the remeasurement. Note: {VALIDATION_NOTE}.")),
            Block::Paragraph("Coverage is the share of plot-intervals whose observed value lies inside the projected 90 % band (a value on an edge counts ½). When the bands are honest it is about 0.90 and its 95 % bootstrap interval (resampling plots with all their intervals) contains 0.90; clearly below means the bands are too narrow, clearly above too wide. Bands only reflect the sources of uncertainty switched on in the scenario.".into()),
        ],
    }];
    let mut rows = Vec::new();
    let mut coverage = Vec::new();
    for r in summary.iter().filter(|r| r.group == "all") {
        rows.push(vec![
            r.metric.to_string(),
            r.n.to_string(),
            format!("{:.4}", r.bias),
            format!("{:.4}", r.se_bias),
            format!("{:.2} %", 100.0 * r.relative_bias),
            format!("{:.4}", r.rmse),
            match (r.coverage, r.coverage_interval) {
                (Some(c), Some([lo, hi])) => format!("{c:.3} [{lo:.3}, {hi:.3}]"),
                _ => "no bands".into(),
            },
        ]);
        if let (Some(c), Some(ci)) = (r.coverage, r.coverage_interval) {
            coverage.push((r.metric, c, ci));
        }
    }
    let mut blocks = vec![Block::Table {
        header: [
            "metric",
            "intervals",
            "bias (obs − pred)",
            "SE",
            "relative bias",
            "RMSE",
            "coverage [95 % interval]",
        ]
        .map(String::from)
        .to_vec(),
        rows,
    }];
    for (k, (name, _)) in METRICS.iter().enumerate() {
        let pts: Vec<(f64, f64)> = results
            .iter()
            .filter_map(|r| {
                let c = r.metrics[k];
                c.mean
                    .filter(|_| c.observed.is_finite())
                    .map(|m| (m, c.observed))
            })
            .collect();
        let (lo, hi) = range(pts.iter().flat_map(|p| [p.0, p.1]));
        let svg = scatter_svg(
            &format!("Observed against predicted: {name}"),
            ["Predicted mean", "Observed"],
            &pts,
            [(lo, lo), (hi, hi)],
            [(lo, hi), (lo, hi)],
        )?;
        blocks.push(Block::Chart {
            svg,
            caption: format!("{name}: one point per plot-interval; the line is 1:1."),
        });
        let res: Vec<(f64, f64)> = results
            .iter()
            .filter(|r| r.qmd_t1_cm.is_finite())
            .filter_map(|r| {
                let c = r.metrics[k];
                c.mean
                    .filter(|_| c.observed.is_finite())
                    .map(|m| (r.qmd_t1_cm, c.observed - m))
            })
            .collect();
        let xr = range(res.iter().map(|p| p.0));
        let yr = range(res.iter().map(|p| p.1).chain([0.0]));
        let svg = scatter_svg(
            &format!("Residuals by size: {name}"),
            ["QMD at t1 (cm)", "Observed − predicted"],
            &res,
            [(xr.0, 0.0), (xr.1, 0.0)],
            [xr, yr],
        )?;
        blocks.push(Block::Chart {
            svg,
            caption: format!("{name}: residuals against the plot's QMD at the start; validation.csv summarises them by QMD class."),
        });
    }
    if !coverage.is_empty() {
        // Coverage as points with their intervals drawn as vertical segments of points.
        let mut pts = Vec::new();
        for (i, (_, c, ci)) in coverage.iter().enumerate() {
            let x = i as f64 + 1.0;
            pts.push((x, *c));
            for j in 0..=20 {
                pts.push((x, ci[0] + (ci[1] - ci[0]) * j as f64 / 20.0));
            }
        }
        let svg = scatter_svg(
            "Band coverage (0.90 line)",
            ["Metric (1 stems, 2 basal area, 3 QMD)", "Coverage"],
            &pts,
            [(0.5, 0.9), (coverage.len() as f64 + 0.5, 0.9)],
            [(0.5, coverage.len() as f64 + 0.5), (0.0, 1.0)],
        )?;
        blocks.push(Block::Chart {
            svg,
            caption: "Coverage of the 90 % bands per metric with its 95 % bootstrap interval over plots; honest bands put the interval across the 0.90 line.".into(),
        });
    }
    sections.push(Section {
        heading: "Results".into(),
        blocks,
    });
    let page = Page {
        title: "Validation against remeasured plots".into(),
        subtitle: subtitle.to_string(),
        caution: super::CAUTION.into(),
        sections,
    };
    Ok(render(&page).into_bytes())
}
