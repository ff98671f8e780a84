//! The calibration chart of `fit survival --calibration-svg`: observed against mean predicted
//! survival by diameter class (left), and the fitted survival probability against diameter,
//! one curve per level of a categorical predictor (right). Rendered to an SVG string; the
//! command-line layer writes it atomically.

use plotters::prelude::*;

use super::survival::SurvivalFit;
use crate::report::PALETTE;
use crate::Error;

fn chart_error(e: impl std::fmt::Display) -> Error {
    Error::Usage(format!("--calibration-svg: cannot draw the chart: {e}"))
}

/// Render the calibration chart of `fit` as SVG.
///
/// # Errors
/// No calibration table or curves (the data has no diameter column, or weighted or
/// successes/trials data), or a drawing failure.
pub fn calibration_svg(fit: &SurvivalFit) -> Result<String, Error> {
    let cal = fit.diagnostics.calibration.as_ref().map_err(|u| {
        Error::Usage(format!(
            "--calibration-svg: the calibration table is not available: {u}"
        ))
    })?;
    let curves = fit.curves.as_ref().ok_or_else(|| {
        Error::Usage("--calibration-svg: the fitted curves were not computed".into())
    })?;
    let lowest = cal
        .classes
        .iter()
        .filter(|r| r.records > 0)
        .flat_map(|r| [r.observed, r.mean_predicted])
        .fold(1.0f64, f64::min);
    // Zoom to the probabilities that occur, in steps of 0.1.
    let axis_lo = ((lowest * 10.0).floor() / 10.0).clamp(0.0, 0.9);
    let mut svg = String::new();
    {
        let root = SVGBackend::with_string(&mut svg, (1000, 460)).into_drawing_area();
        root.fill(&WHITE).map_err(chart_error)?;
        let (left, right) = root.split_horizontally(480);
        let mut c = ChartBuilder::on(&left)
            .caption(
                format!("Observed vs predicted survival by {} class", cal.column),
                ("sans-serif", 17),
            )
            .margin(12)
            .x_label_area_size(40)
            .y_label_area_size(50)
            .build_cartesian_2d(axis_lo..1f64, axis_lo..1f64)
            .map_err(chart_error)?;
        c.configure_mesh()
            .x_desc("mean predicted survival")
            .y_desc("observed survival")
            .draw()
            .map_err(chart_error)?;
        c.draw_series(LineSeries::new(
            [(axis_lo, axis_lo), (1.0, 1.0)],
            RGBColor(0xb0, 0xb0, 0xb0).stroke_width(1),
        ))
        .map_err(chart_error)?
        .label("perfect calibration")
        .legend(|(x, y)| PathElement::new([(x, y), (x + 16, y)], RGBColor(0xb0, 0xb0, 0xb0)));
        let points: Vec<(f64, f64, String)> = cal
            .classes
            .iter()
            .filter(|r| r.records > 0)
            .map(|r| (r.mean_predicted, r.observed, format!("{}", r.lower)))
            .collect();
        c.draw_series(
            points
                .iter()
                .map(|(x, y, _)| Circle::new((*x, *y), 5, PALETTE[0].filled())),
        )
        .map_err(chart_error)?
        .label("diameter class (label: lower bound)")
        .legend(|(x, y)| Circle::new((x + 8, y), 4, PALETTE[0].filled()));
        c.draw_series(
            points
                .iter()
                .map(|(x, y, l)| Text::new(l.clone(), (*x, *y), ("sans-serif", 11).into_font())),
        )
        .map_err(chart_error)?;
        c.configure_series_labels()
            .position(SeriesLabelPosition::LowerRight)
            .background_style(WHITE.mix(0.8))
            .border_style(BLACK)
            .draw()
            .map_err(chart_error)?;

        let (lo, hi) = curves
            .curves
            .iter()
            .flat_map(|(_, p)| p.iter().map(|(d, _)| *d))
            .fold((f64::INFINITY, f64::NEG_INFINITY), |(a, b), d| {
                (a.min(d), b.max(d))
            });
        let (lo, hi) = if lo < hi {
            (lo, hi)
        } else {
            (lo - 1.0, lo + 1.0)
        };
        let title = match &curves.by {
            Some(by) => format!("Fitted survival {} by {by}", curves.period),
            None => format!("Fitted survival {}", curves.period),
        };
        let mut c = ChartBuilder::on(&right)
            .caption(title, ("sans-serif", 17))
            .margin(12)
            .x_label_area_size(40)
            .y_label_area_size(50)
            .build_cartesian_2d(lo..hi, 0f64..1f64)
            .map_err(chart_error)?;
        c.configure_mesh()
            .x_desc(curves.dbh_column.clone())
            .y_desc("survival probability")
            .draw()
            .map_err(chart_error)?;
        for (i, (level, pts)) in curves.curves.iter().enumerate() {
            let colour = PALETTE[i % PALETTE.len()];
            c.draw_series(LineSeries::new(pts.iter().copied(), colour.stroke_width(2)))
                .map_err(chart_error)?
                .label(level.clone())
                .legend(move |(x, y)| {
                    PathElement::new([(x, y), (x + 16, y)], colour.stroke_width(2))
                });
        }
        c.configure_series_labels()
            .position(SeriesLabelPosition::LowerRight)
            .background_style(WHITE.mix(0.8))
            .border_style(BLACK)
            .draw()
            .map_err(chart_error)?;
        root.present().map_err(chart_error)?;
    }
    Ok(svg)
}
