//! SVG charts (plotters, SVG backend): a metric's mean over time with its 90 % band
//! (5th–95th percentile across replicates). Colours from the Okabe–Ito palette, which stays
//! distinguishable under the common colour-vision deficiencies.

use plotters::prelude::*;

use crate::project::{Driver, Metric, ProjectionResult};

/// Okabe–Ito blue: the mean line.
const MEAN: RGBColor = RGBColor(0, 114, 178);
/// Okabe–Ito sky blue: the 90 % band.
const BAND: RGBColor = RGBColor(86, 180, 233);
/// Okabe–Ito vermillion: the median line.
const MEDIAN: RGBColor = RGBColor(213, 94, 0);
const GRID: RGBColor = RGBColor(232, 232, 232);

/// Cumulative survival over time with its 90 % band (`survival.svg`).
///
/// # Errors
/// [`crate::Error::Io`] if plotters fails to draw.
pub fn survival_chart_svg(r: &ProjectionResult) -> Result<String, crate::Error> {
    chart(
        r,
        Metric::CumulativeSurvival,
        "Cumulative survival",
        "survival.svg",
    )
}

/// Stems per hectare over time with its 90 % band (`stems.svg`).
///
/// # Errors
/// [`crate::Error::Io`] if plotters fails to draw.
pub fn stems_chart_svg(r: &ProjectionResult) -> Result<String, crate::Error> {
    chart(r, Metric::StemsPerHa, "Stems per hectare", "stems.svg")
}

fn chart(
    r: &ProjectionResult,
    metric: Metric,
    title: &str,
    name: &str,
) -> Result<String, crate::Error> {
    let fail = |e: String| crate::Error::io(name, std::io::Error::other(e));
    let pts = |f: fn(&crate::project::Summary) -> Option<f64>| -> Vec<(f64, f64)> {
        r.years
            .iter()
            .filter_map(|y| f(y.get(metric)).map(|v| (y.year, v)))
            .collect()
    };
    let mean = pts(|s| s.mean);
    let (lo, hi) = (pts(|s| s.p05), pts(|s| s.p95));
    let median = pts(|s| s.p50);
    let x_max = r.years.last().map_or(1.0, |y| y.year).max(1.0);
    let y_max = mean
        .iter()
        .chain(&hi)
        .map(|p| p.1)
        .fold(0.0f64, f64::max)
        .max(1e-9)
        * 1.05;
    let mut svg = String::new();
    {
        let root = SVGBackend::with_string(&mut svg, (720, 420)).into_drawing_area();
        root.fill(&WHITE).map_err(|e| fail(e.to_string()))?;
        let caption = format!("{title}: {} ({})", r.scenario, r.driver.name());
        let mut c = ChartBuilder::on(&root)
            .caption(caption, ("sans-serif", 18))
            .margin(14)
            .x_label_area_size(40)
            .y_label_area_size(64)
            .build_cartesian_2d(0.0..x_max, 0.0..y_max)
            .map_err(|e| fail(e.to_string()))?;
        c.configure_mesh()
            .x_desc("Year")
            .y_desc(title)
            .light_line_style(GRID)
            .draw()
            .map_err(|e| fail(e.to_string()))?;
        if r.driver == Driver::MonteCarlo && lo.len() == hi.len() && !lo.is_empty() {
            let polygon: Vec<(f64, f64)> = lo.iter().chain(hi.iter().rev()).copied().collect();
            c.draw_series(std::iter::once(Polygon::new(
                polygon,
                BAND.mix(0.35).filled(),
            )))
            .map_err(|e| fail(e.to_string()))?
            .label("90 % band (5th–95th percentile)")
            .legend(|(x, y)| Rectangle::new([(x, y - 5), (x + 16, y + 5)], BAND.filled()));
            c.draw_series(LineSeries::new(median, MEDIAN.stroke_width(1)))
                .map_err(|e| fail(e.to_string()))?
                .label("median")
                .legend(|(x, y)| PathElement::new([(x, y), (x + 16, y)], MEDIAN));
        }
        c.draw_series(LineSeries::new(mean, MEAN.stroke_width(2)))
            .map_err(|e| fail(e.to_string()))?
            .label("mean")
            .legend(|(x, y)| PathElement::new([(x, y), (x + 16, y)], MEAN.stroke_width(2)));
        c.configure_series_labels()
            .background_style(WHITE.mix(0.85))
            .border_style(GRID)
            .draw()
            .map_err(|e| fail(e.to_string()))?;
        root.present().map_err(|e| fail(e.to_string()))?;
    }
    Ok(svg)
}
