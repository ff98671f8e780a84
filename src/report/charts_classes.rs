//! Diameter distributions (`classes.csv` data) at a few years, one panel per year side by side,
//! one line per scenario through the class means with its 90 % band shaded.

use plotters::prelude::*;

use super::charts::{colour, draw_error, tick, GRID, INK};
use crate::project::ProjectionResult;

/// Output years to show: the first, the one nearest the middle and the last (fewer when the
/// projection has fewer output years).
pub fn distribution_years(r: &ProjectionResult) -> Vec<f64> {
    let years: Vec<f64> = r.years.iter().map(|y| y.year).collect();
    let (Some(&first), Some(&last)) = (years.first(), years.last()) else {
        return Vec::new();
    };
    let middle = years
        .iter()
        .copied()
        .min_by(|a, b| (a - last / 2.0).abs().total_cmp(&(b - last / 2.0).abs()))
        .unwrap_or(first);
    let mut out = vec![first, middle, last];
    out.dedup();
    out
}

/// Stems per hectare by DBH class at each of `years`, panels side by side, one colour per
/// projection (same order as the other charts).
///
/// # Errors
/// [`crate::Error::Io`] if plotters fails to draw.
pub fn distribution_chart_svg(
    results: &[ProjectionResult],
    years: &[f64],
) -> Result<String, crate::Error> {
    let title = "Diameter distributions";
    let fail = |e: &dyn std::fmt::Display| draw_error(title, e);
    let rows = || {
        results.iter().flat_map(|r| {
            r.classes
                .iter()
                .filter(|c| years.contains(&c.year))
                .map(move |c| (r, c))
        })
    };
    let width_cm = results
        .first()
        .map_or(5.0, |r| r.settings.class_width_cm)
        .max(1e-9);
    let x_max = rows()
        .map(|(_, c)| c.lower_cm + width_cm)
        .fold(width_cm, f64::max);
    let y_max = rows()
        .map(|(_, c)| c.p95.unwrap_or(c.mean).max(c.mean))
        .fold(1.0f64, f64::max)
        * 1.08;
    let panel_width = 330u32.max(980 / years.len().max(1) as u32);
    let size = (panel_width * years.len().max(1) as u32, 440);
    let mut svg = String::new();
    {
        let root = SVGBackend::with_string(&mut svg, size).into_drawing_area();
        root.fill(&WHITE).map_err(|e| fail(&e))?;
        let root = root
            .titled(title, ("sans-serif", 19).into_font().color(&INK))
            .map_err(|e| fail(&e))?;
        let (body, legend) = root.split_vertically(size.1 - 72);
        let panels = body.split_evenly((1, years.len().max(1)));
        for (panel, &year) in panels.iter().zip(years) {
            let mut c = ChartBuilder::on(panel)
                .caption(
                    format!("year {year}"),
                    ("sans-serif", 15).into_font().color(&INK),
                )
                .margin(10)
                .x_label_area_size(44)
                .y_label_area_size(70)
                .build_cartesian_2d(0.0..x_max, 0.0..y_max)
                .map_err(|e| fail(&e))?;
            c.configure_mesh()
                .x_desc("DBH (cm); points at class midpoints")
                .y_desc("Stems per hectare (stems/ha)")
                .axis_desc_style(("sans-serif", 13).into_font().color(&INK))
                .label_style(("sans-serif", 12).into_font().color(&INK))
                .light_line_style(TRANSPARENT)
                .bold_line_style(GRID)
                .x_label_formatter(&|v| tick(*v))
                .y_label_formatter(&|v| tick(*v))
                .draw()
                .map_err(|e| fail(&e))?;
            for (i, r) in results.iter().enumerate() {
                let col = colour(i);
                let mut classes: Vec<_> = r.classes.iter().filter(|c| c.year == year).collect();
                classes.sort_by(|a, b| a.lower_cm.total_cmp(&b.lower_cm));
                let mid = |lower: f64| lower + width_cm / 2.0;
                // The 90 % band as a light area behind the line of means (a frequency polygon
                // per scenario stays readable where side-by-side bars do not).
                let band: Vec<(f64, f64)> = classes
                    .iter()
                    .map(|c| (mid(c.lower_cm), c.p95.unwrap_or(c.mean)))
                    .chain(
                        classes
                            .iter()
                            .rev()
                            .map(|c| (mid(c.lower_cm), c.p05.unwrap_or(c.mean))),
                    )
                    .collect();
                c.draw_series(std::iter::once(Polygon::new(band, col.mix(0.14).filled())))
                    .map_err(|e| fail(&e))?;
                let means: Vec<(f64, f64)> =
                    classes.iter().map(|c| (mid(c.lower_cm), c.mean)).collect();
                c.draw_series(LineSeries::new(means.clone(), col.stroke_width(2)))
                    .map_err(|e| fail(&e))?;
                c.draw_series(means.iter().map(|&p| Circle::new(p, 3, col.filled())))
                    .map_err(|e| fail(&e))?;
            }
        }
        draw_legend(&legend, results).map_err(|e| fail(&e))?;
        root.present().map_err(|e| fail(&e))?;
    }
    Ok(svg)
}

/// A one-line legend below the panels: a swatch and name per projection, and what the whisker
/// means.
fn draw_legend<DB: DrawingBackend>(
    area: &DrawingArea<DB, plotters::coord::Shift>,
    results: &[ProjectionResult],
) -> Result<(), DrawingAreaErrorKind<DB::ErrorType>> {
    let font = ("sans-serif", 13).into_font().color(&INK);
    let mut x = 24i32;
    for (i, r) in results.iter().enumerate() {
        area.draw(&PathElement::new(
            [(x, 10), (x + 18, 10)],
            colour(i).stroke_width(3),
        ))?;
        area.draw(&Text::new(r.scenario.clone(), (x + 24, 3), font.clone()))?;
        x += 40 + 8 * r.scenario.chars().count() as i32;
    }
    area.draw(&Text::new(
        "line: mean stems/ha per DBH class; shaded: 90 % band across replicates",
        (24, 26),
        font,
    ))?;
    Ok(())
}
