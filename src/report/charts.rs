//! SVG charts (plotters, SVG backend). One building block, [`band_chart_svg`], draws any number
//! of series, each a mean line with an optional 90 % band (5th–95th percentile across
//! replicates); `project` uses it with one series and `compare` with one per scenario.
//! Colours follow the Okabe–Ito palette, which stays distinguishable under the common
//! colour-vision deficiencies; bands are light tints of their line's colour.

use plotters::prelude::*;

use crate::project::{Metric, ProjectionResult, Summary};

/// Okabe–Ito colours in the order series use them: blue, vermillion, bluish green, reddish
/// purple, orange, sky blue, black, yellow.
pub(crate) const PALETTE: [RGBColor; 8] = [
    RGBColor(0, 114, 178),
    RGBColor(213, 94, 0),
    RGBColor(0, 158, 115),
    RGBColor(204, 121, 167),
    RGBColor(230, 159, 0),
    RGBColor(86, 180, 233),
    RGBColor(0, 0, 0),
    RGBColor(240, 228, 66),
];
pub(crate) const GRID: RGBColor = RGBColor(228, 228, 228);
pub(crate) const INK: RGBColor = RGBColor(40, 40, 40);
/// Chart size in pixels (the HTML page scales it down on narrow screens).
pub(crate) const SIZE: (u32, u32) = (760, 420);

/// A tick label without trailing zeros (`5`, `0.25`, `1000`).
pub(crate) fn tick(v: f64) -> String {
    let s = format!("{v:.3}");
    let s = s.trim_end_matches('0').trim_end_matches('.');
    if s == "-0" {
        "0".into()
    } else {
        s.into()
    }
}

/// The colour of series `i`.
pub(crate) fn colour(i: usize) -> RGBColor {
    PALETTE[i % PALETTE.len()]
}

/// One point of a series: x, mean and the optional band.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct BandPoint {
    /// x value (years).
    pub x: f64,
    /// The mean.
    pub mean: f64,
    /// Lower edge of the band (5th percentile).
    pub lo: Option<f64>,
    /// Upper edge of the band (95th percentile).
    pub hi: Option<f64>,
}

/// A named line with its band.
#[derive(Debug, Clone, PartialEq)]
pub struct Series {
    /// Legend label.
    pub label: String,
    /// Index into the palette, so a scenario keeps its colour on every chart.
    pub colour: usize,
    /// Points in x order.
    pub points: Vec<BandPoint>,
}

/// Titles of a chart; the axis labels carry their units.
#[derive(Debug, Clone, PartialEq)]
pub struct Axes {
    /// Caption above the plot.
    pub title: String,
    /// x-axis label, e.g. `Years since start`.
    pub x_label: String,
    /// y-axis label with units, e.g. `Stems per hectare (stems/ha)`.
    pub y_label: String,
}

/// The y-axis label (with units) of a metric.
pub fn metric_label(metric: Metric) -> &'static str {
    match metric {
        Metric::StemsPerHa => "Stems per hectare (stems/ha)",
        Metric::CumulativeSurvival => "Cumulative survival (proportion)",
        Metric::BasalArea => "Basal area (m²/ha)",
        Metric::Qmd => "Quadratic mean diameter (cm)",
        Metric::Sdi => "Stand density index (stems/ha)",
        Metric::Removed => "Removed by actions (stems/ha)",
        Metric::DensityLimit => "Removed by density limit (stems/ha)",
    }
}

/// The x-axis label of every chart over time.
pub const YEARS_LABEL: &str = "Years since start (years)";

/// A series of one metric of a projection: mean and (Monte Carlo) 90 % band per year.
pub fn metric_series(r: &ProjectionResult, metric: Metric) -> Series {
    Series {
        label: r.scenario.clone(),
        colour: 0,
        points: r
            .years
            .iter()
            .filter_map(|y| point(y.year, y.get(metric)))
            .collect(),
    }
}

fn point(x: f64, s: &Summary) -> Option<BandPoint> {
    s.mean.map(|mean| BandPoint {
        x,
        mean,
        lo: s.p05,
        hi: s.p95,
    })
}

/// One metric of several projections on one chart, one colour per scenario.
///
/// # Errors
/// [`crate::Error::Io`] if plotters fails to draw.
pub fn metrics_chart_svg(
    results: &[ProjectionResult],
    metric: Metric,
    title: &str,
) -> Result<String, crate::Error> {
    let series: Vec<Series> = results
        .iter()
        .enumerate()
        .map(|(i, r)| Series {
            colour: i,
            ..metric_series(r, metric)
        })
        .collect();
    band_chart_svg(
        &Axes {
            title: title.into(),
            x_label: YEARS_LABEL.into(),
            y_label: metric_label(metric).into(),
        },
        &series,
    )
}

/// Cumulative survival over time with its 90 % band (`survival.svg`).
///
/// # Errors
/// [`crate::Error::Io`] if plotters fails to draw.
pub fn survival_chart_svg(r: &ProjectionResult) -> Result<String, crate::Error> {
    let title = format!("Cumulative survival: {}", r.scenario);
    metrics_chart_svg(std::slice::from_ref(r), Metric::CumulativeSurvival, &title)
}

/// Stems per hectare over time with its 90 % band (`stems.svg`).
///
/// # Errors
/// [`crate::Error::Io`] if plotters fails to draw.
pub fn stems_chart_svg(r: &ProjectionResult) -> Result<String, crate::Error> {
    let title = format!("Stems per hectare: {}", r.scenario);
    metrics_chart_svg(std::slice::from_ref(r), Metric::StemsPerHa, &title)
}

/// A plotters failure as this crate's error, naming the chart.
pub(crate) fn draw_error(chart: &str, e: impl std::fmt::Display) -> crate::Error {
    crate::Error::io(chart, std::io::Error::other(e.to_string()))
}

/// Padded y range covering every mean and band edge; includes 0 when the data reach it or
/// straddle it, so differences show their sign.
fn y_range(series: &[Series]) -> (f64, f64) {
    let values = series
        .iter()
        .flat_map(|s| s.points.iter())
        .flat_map(|p| [Some(p.mean), p.lo, p.hi])
        .flatten()
        .filter(|v| v.is_finite());
    let (lo, hi) = values.fold((0.0f64, 0.0f64), |(a, b), v| (a.min(v), b.max(v)));
    let pad = ((hi - lo) * 0.06).max(1e-9);
    (if lo < 0.0 { lo - pad } else { 0.0 }, hi + pad)
}

/// Where the legend covers the least: lines that fall leave the upper right empty, lines that
/// rise leave the lower right empty.
fn legend_corner(series: &[Series]) -> SeriesLabelPosition {
    let (mut first, mut last) = (0.0, 0.0);
    for s in series {
        if let (Some(a), Some(b)) = (s.points.first(), s.points.last()) {
            first += a.mean;
            last += b.mean;
        }
    }
    if last > first {
        SeriesLabelPosition::LowerRight
    } else {
        SeriesLabelPosition::UpperRight
    }
}

/// Mean lines with 90 % bands, one colour per series, a legend and labelled axes.
///
/// # Errors
/// [`crate::Error::Io`] if plotters fails to draw.
pub fn band_chart_svg(axes: &Axes, series: &[Series]) -> Result<String, crate::Error> {
    let fail = |e: &dyn std::fmt::Display| draw_error(&axes.title, e);
    let x_max = series
        .iter()
        .flat_map(|s| s.points.iter().map(|p| p.x))
        .fold(1.0f64, f64::max);
    let (y_lo, y_hi) = y_range(series);
    let mut svg = String::new();
    {
        let root = SVGBackend::with_string(&mut svg, SIZE).into_drawing_area();
        root.fill(&WHITE).map_err(|e| fail(&e))?;
        let mut c = ChartBuilder::on(&root)
            .caption(&axes.title, ("sans-serif", 19).into_font().color(&INK))
            .margin(16)
            .x_label_area_size(46)
            .y_label_area_size(78)
            .build_cartesian_2d(0.0..x_max, y_lo..y_hi)
            .map_err(|e| fail(&e))?;
        c.configure_mesh()
            .x_desc(&axes.x_label)
            .y_desc(&axes.y_label)
            .axis_desc_style(("sans-serif", 15).into_font().color(&INK))
            .label_style(("sans-serif", 13).into_font().color(&INK))
            .light_line_style(TRANSPARENT)
            .bold_line_style(GRID)
            .x_label_formatter(&|v| tick(*v))
            .y_label_formatter(&|v| tick(*v))
            .draw()
            .map_err(|e| fail(&e))?;
        if y_lo < 0.0 {
            c.draw_series(LineSeries::new(
                [(0.0, 0.0), (x_max, 0.0)],
                INK.stroke_width(1),
            ))
            .map_err(|e| fail(&e))?;
        }
        for s in series {
            let band: Vec<(f64, f64, f64)> = s
                .points
                .iter()
                .filter_map(|p| Some((p.x, p.lo?, p.hi?)))
                .collect();
            if band.len() > 1 {
                let polygon: Vec<(f64, f64)> = band
                    .iter()
                    .map(|b| (b.0, b.1))
                    .chain(band.iter().rev().map(|b| (b.0, b.2)))
                    .collect();
                c.draw_series(std::iter::once(Polygon::new(
                    polygon,
                    colour(s.colour).mix(0.16).filled(),
                )))
                .map_err(|e| fail(&e))?;
            }
        }
        for s in series {
            let col = colour(s.colour);
            let line = s.points.iter().map(|p| (p.x, p.mean));
            let banded = s.points.iter().any(|p| p.lo.is_some());
            let label = if banded {
                format!("{} (mean, 90 % band)", s.label)
            } else {
                s.label.clone()
            };
            c.draw_series(LineSeries::new(line, col.stroke_width(2)))
                .map_err(|e| fail(&e))?
                .label(label)
                .legend(move |(x, y)| {
                    EmptyElement::at((x, y))
                        + Rectangle::new([(0, -6), (18, 6)], col.mix(0.16).filled())
                        + PathElement::new([(0, 0), (18, 0)], col.stroke_width(2))
                });
            c.draw_series(
                s.points
                    .iter()
                    .map(|p| Circle::new((p.x, p.mean), 2, col.filled())),
            )
            .map_err(|e| fail(&e))?;
        }
        c.configure_series_labels()
            .background_style(WHITE.mix(0.9))
            .border_style(GRID)
            .label_font(("sans-serif", 13).into_font().color(&INK))
            .position(legend_corner(series))
            .draw()
            .map_err(|e| fail(&e))?;
        root.present().map_err(|e| fail(&e))?;
    }
    Ok(svg)
}
