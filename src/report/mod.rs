//! Writing results: CSV and JSON tables, SVG charts, the HTML page ([`html`]). Every file of a run is rendered in memory
//! first, then written to a temporary file in the target folder and renamed into place, so a
//! failure leaves no partial output.

mod batch;
mod batch_log;
mod charts;
pub(crate) use charts::PALETTE;
mod charts_classes;
mod compare;
pub mod html;
mod merge;
mod page;
mod page_models;
mod tables;
mod validate;
mod validate_page;

use std::path::{Path, PathBuf};

/// The caution printed under every summary and report.
pub const CAUTION: &str = "Caution: model estimates with stated uncertainty, valid only within the range of the fitting data. Defer to local regulations and to licensed professional foresters before acting on them.";

pub use crate::atomic::write_files_atomically;
pub use batch::{batch_rows, read_record, record_path, rows_per_stand, BatchOutput, BATCH_COLUMNS};
pub use batch_log::{failed_path, warnings_path, BatchLog};
pub use charts::{
    band_chart_svg, metric_label, metric_series, metrics_chart_svg, stems_chart_svg,
    survival_chart_svg, Axes, BandPoint, Series,
};
pub use charts_classes::{distribution_chart_svg, distribution_years};
pub use compare::{difference_chart_svg, differences_csv, render_comparison, write_comparison};
pub use merge::{merge_parts, Merged};
pub use page::projection_report;
pub use tables::{classes_csv, harvest_csv, run_json, summary_csv, trees_csv};
pub use validate::{
    validation_csv, validation_plots_csv, validation_survival_csv, PLOT_COLUMNS, VALIDATION_NOTE,
};
pub use validate_page::validation_report;

use crate::project::{Driver, ProjectionResult};

/// Render every output file of a projection: `summary.csv`, `classes.csv`, `harvest.csv`,
/// `run.json`, `survival.svg`, `stems.svg`, `report.html` and, for the expected driver,
/// `trees.csv`.
///
/// # Errors
/// [`crate::Error::Io`] if a chart cannot be drawn.
pub fn render_projection(r: &ProjectionResult) -> Result<Vec<(String, Vec<u8>)>, crate::Error> {
    let mut files = vec![
        ("summary.csv".to_string(), summary_csv(r)),
        ("classes.csv".to_string(), classes_csv(r)),
        ("harvest.csv".to_string(), harvest_csv(r)),
        ("run.json".to_string(), run_json(r)),
        (
            "survival.svg".to_string(),
            survival_chart_svg(r)?.into_bytes(),
        ),
        ("stems.svg".to_string(), stems_chart_svg(r)?.into_bytes()),
        ("report.html".to_string(), projection_report(r)?),
    ];
    if r.driver == Driver::Expected {
        files.push(("trees.csv".to_string(), trees_csv(r)));
    }
    Ok(files)
}

/// Write the outputs of a projection into `dir` (created if missing), atomically per file;
/// returns the paths written.
///
/// # Errors
/// [`crate::Error::Io`] naming the path that could not be written; files already renamed into
/// place by this call are removed again, and a folder this call created is removed.
pub fn write_projection(dir: &Path, r: &ProjectionResult) -> Result<Vec<PathBuf>, crate::Error> {
    let files = render_projection(r)?;
    let written = write_files_atomically(dir, &files)?;
    // A Monte Carlo run into a folder that holds an earlier expected run's trees.csv would
    // otherwise leave that file beside results it does not belong to.
    if !files.iter().any(|(name, _)| name == "trees.csv") {
        let stale = dir.join("trees.csv");
        if stale.exists() {
            std::fs::remove_file(&stale).map_err(|e| crate::Error::io(&stale, e))?;
        }
    }
    Ok(written)
}
