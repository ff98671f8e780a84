//! How the data file is read (pair file or history, status codes, plot column) and screened:
//! options shared by `fit survival`, `fit growth`, `rank` and `intervals` (docs/histories.md).

use std::path::PathBuf;

use clap::{Args, ValueEnum};
use stemcast::data::{MissingAs, StatusCodes};
use stemcast::fit::source::{HistoryOptions, InputOptions, ScreenOptions};
use stemcast::Error;

#[derive(Debug, Clone, Copy, PartialEq, Eq, ValueEnum)]
pub(crate) enum MissingAsArg {
    Error,
    Dead,
    Drop,
}

/// Reading a measurement history and mapping status codes.
#[derive(Debug, Args)]
pub struct HistoryArgs {
    /// Tree id column. In a pair file it is used to refuse a repeated (stand, tree).
    #[arg(long, value_name = "COL", default_value = "tree")]
    pub(crate) tree: String,
    /// History: the measurement-time column, a year (1998, 1998.5) or a YYYY-MM-DD date.
    /// Default `year`.
    #[arg(long, value_name = "COL")]
    pub(crate) time_col: Option<String>,
    /// Map status codes to their meaning, e.g. "1=alive,2=dead,3=cut" or "L=alive,D=dead,H=cut";
    /// with a map only the listed codes are accepted.
    #[arg(long, value_name = "CODE=MEANING,...")]
    pub(crate) status_codes: Option<String>,
    /// History: a tree alive at one measurement and absent from the plot's next is an error
    /// (default), is counted dead, or its interval is dropped from the fits.
    #[arg(long, value_enum, value_name = "error|dead|drop")]
    pub(crate) missing_as: Option<MissingAsArg>,
    /// History: new trees at or above this diameter count as ingrowth. Default: the smallest
    /// diameter in the file.
    #[arg(long, value_name = "DBH")]
    pub(crate) threshold_dbh: Option<f64>,
}

/// The plot column and data screening (fits and `rank`).
#[derive(Debug, Args)]
pub struct FitInputArgs {
    /// Read the data as a measurement history: one row per tree per measurement, paired into
    /// intervals by stemcast (see docs/histories.md). The stand column is the plot.
    #[arg(long)]
    pub(crate) history: bool,
    #[command(flatten)]
    pub(crate) reading: HistoryArgs,
    /// The plot column where the stand column is a stand-period id: cross-validation folds
    /// follow it. Default: the stand column.
    #[arg(long, value_name = "COL")]
    pub(crate) plot: Option<String>,
    /// Screening: judge diameter increments within the groups of this column (e.g. species).
    #[arg(long, value_name = "COL")]
    pub(crate) screen_by: Option<String>,
    /// Screening: how much a diameter may shrink before it is flagged (diameter units;
    /// default 0.25 cm or 0.1 in).
    #[arg(long, value_name = "D")]
    pub(crate) shrink_tolerance: Option<f64>,
    /// Screening: flag increments whose robust z-score within their group exceeds this
    /// (default 3.5).
    #[arg(long, value_name = "Z")]
    pub(crate) screen_z: Option<f64>,
    /// Leave the records flagged by screening out of the fit (stated in the summary and the
    /// model file).
    #[arg(long)]
    pub(crate) drop_flagged: bool,
    /// Write the records flagged by screening to this CSV (line, other_line, plot, tree,
    /// reason, value, detail).
    #[arg(long, value_name = "FILE")]
    pub(crate) screen: Option<PathBuf>,
    /// Leave the plots listed in this file (one id per line) out of the fit, e.g. to validate
    /// on them (docs/validation.md).
    #[arg(long, value_name = "FILE")]
    pub(crate) exclude_plots: Option<PathBuf>,
}

/// The status-code map of `--status-codes`.
pub(crate) fn status_codes(a: &HistoryArgs) -> Result<Option<StatusCodes>, Error> {
    a.status_codes
        .as_deref()
        .map(|s| s.parse::<StatusCodes>().map_err(Error::Usage))
        .transpose()
}

/// The history options when `history` (None otherwise); history-only flags without it are a
/// usage error.
pub(crate) fn history_options(
    a: &HistoryArgs,
    history: bool,
) -> Result<Option<HistoryOptions>, Error> {
    if !history {
        for (given, flag) in [
            (a.time_col.is_some(), "--time-col"),
            (a.missing_as.is_some(), "--missing-as"),
            (a.threshold_dbh.is_some(), "--threshold-dbh"),
        ] {
            if given {
                return Err(Error::Usage(format!(
                    "{flag} applies to a measurement history: add --history (see docs/histories.md)"
                )));
            }
        }
        return Ok(None);
    }
    if let Some(t) = a.threshold_dbh {
        if !(t.is_finite() && t > 0.0) {
            return Err(Error::Usage(format!(
                "--threshold-dbh {t}: must be a positive diameter"
            )));
        }
    }
    Ok(Some(HistoryOptions {
        time: a.time_col.clone().unwrap_or_else(|| "year".into()),
        missing_as: match a.missing_as {
            None | Some(MissingAsArg::Error) => MissingAs::Error,
            Some(MissingAsArg::Dead) => MissingAs::Dead,
            Some(MissingAsArg::Drop) => MissingAs::Drop,
        },
        threshold_dbh: a.threshold_dbh,
    }))
}

/// The library's input options of the fit flags.
pub(crate) fn input_options(a: &FitInputArgs) -> Result<InputOptions, Error> {
    if let Some(t) = a.shrink_tolerance {
        if !(t.is_finite() && t >= 0.0) {
            return Err(Error::Usage(format!(
                "--shrink-tolerance {t}: must be a diameter of 0 or more"
            )));
        }
    }
    if let Some(z) = a.screen_z {
        if !(z.is_finite() && z > 0.0) {
            return Err(Error::Usage(format!(
                "--screen-z {z}: must be a positive number"
            )));
        }
    }
    Ok(InputOptions {
        status_codes: status_codes(&a.reading)?,
        plot: a.plot.clone(),
        history: history_options(&a.reading, a.history)?,
        screen: ScreenOptions {
            by: a.screen_by.clone(),
            shrink_tolerance: a.shrink_tolerance,
            z_limit: a.screen_z,
            drop_flagged: a.drop_flagged,
        },
        exclude_plots: a
            .exclude_plots
            .as_deref()
            .map(stemcast::data::read_plot_list)
            .transpose()?,
    })
}
