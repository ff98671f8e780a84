//! `stemcast fit height` and `stemcast fit volume` (docs/height-volume.md).

use std::path::PathBuf;

use clap::{Args, ValueEnum};
use stemcast::data::Units;
use stemcast::fit::hd_summary;
use stemcast::fit::height::{fit_height, HeightSpec};
use stemcast::fit::measured::RowFilter;
use stemcast::fit::volume::{fit_volume, VolumeSpec};
use stemcast::model::height::HeightForm;
use stemcast::model::volume::VolumeForm;
use stemcast::Error;

use super::fit_args::{Format, UnitsArg};

#[derive(Debug, Clone, Copy, PartialEq, Eq, ValueEnum)]
pub(crate) enum HeightFormArg {
    #[value(alias = "chapman_richards")]
    ChapmanRichards,
    Naslund,
    #[value(alias = "log_reciprocal")]
    LogReciprocal,
}

#[derive(Debug, Clone, Copy, PartialEq, Eq, ValueEnum)]
pub(crate) enum VolumeFormArg {
    Combined,
    Logarithmic,
}

/// `fit height` options.
#[derive(Debug, Args)]
#[command(after_long_help = HEIGHT_HELP)]
pub struct HeightArgs {
    /// CSV of measured trees: one row per tree with a diameter and a total height.
    data: PathBuf,
    /// Curve form.
    #[arg(long, value_enum)]
    form: HeightFormArg,
    /// Diameter column (cm, or inches with --units imperial).
    #[arg(long, default_value = "dbh")]
    dbh: String,
    /// Total-height column (m, or ft with --units imperial).
    #[arg(long, default_value = "height")]
    height: String,
    /// Fit one curve per level of this column (e.g. species).
    #[arg(long, value_name = "COL")]
    by: Option<String>,
    /// Use only the rows where COL has this value.
    #[arg(long = "where", value_name = "COL=VALUE")]
    filter: Option<String>,
    /// Start values a,b (and c for chapman-richards) instead of the automatic ones.
    #[arg(
        long,
        value_name = "A,B[,C]",
        value_delimiter = ',',
        allow_hyphen_values = true
    )]
    start: Option<Vec<f64>>,
    /// metric: D cm, H m, breast height 1.3 m; imperial: D in, H ft, breast height 4.5 ft.
    #[arg(long, value_enum, default_value = "metric")]
    units: UnitsArg,
    /// Summary format on standard output.
    #[arg(long, value_enum, default_value = "text")]
    format: Format,
    /// Write the model file (TOML, kind = "height") here.
    #[arg(long, value_name = "MODEL.toml")]
    out: Option<PathBuf>,
}

const HEIGHT_HELP: &str = "Forms (bh = breast height, D diameter, H total height):
  chapman-richards  H = bh + a(1 - exp(-b D))^c
  naslund           H = bh + D^2 / (a + b D)^2
  log-reciprocal    H = bh + exp(a + b / (D + 1))
Automatic start values come from linearisations of each form (docs/height-volume.md).
Standard errors are sqrt(diag(s^2 (J'J)^-1)) with s^2 = RSS/(n - p); the log-likelihood is
-n/2 (ln 2 pi + ln(RSS/n) + 1) and AIC = -2 logLik + 2(p + 1), as R's nls. A fit that does not
converge exits with code 1.";

/// `fit volume` options.
#[derive(Debug, Args)]
pub struct VolumeArgs {
    /// CSV of measured trees: one row per tree with diameter, total height and volume.
    data: PathBuf,
    /// combined: V = b0 + b1 D^2 H; logarithmic: ln V = b0 + b1 ln D + b2 ln H.
    #[arg(long, value_enum)]
    form: VolumeFormArg,
    /// Diameter column (cm, or inches with --units imperial).
    #[arg(long, default_value = "dbh")]
    dbh: String,
    /// Total-height column (m, or ft).
    #[arg(long, default_value = "height")]
    height: String,
    /// Volume column (m³, or ft³).
    #[arg(long, default_value = "volume")]
    volume: String,
    /// metric: cm, m, m³; imperial: in, ft, ft³.
    #[arg(long, value_enum, default_value = "metric")]
    units: UnitsArg,
    /// Summary format on standard output.
    #[arg(long, value_enum, default_value = "text")]
    format: Format,
    /// Write the model file (TOML, kind = "volume") here.
    #[arg(long, value_name = "MODEL.toml")]
    out: Option<PathBuf>,
}

fn units(u: UnitsArg) -> Units {
    match u {
        UnitsArg::Metric => Units::Metric,
        UnitsArg::Imperial => Units::Imperial,
    }
}

fn print(format: Format, text: String, json: serde_json::Value) -> Result<(), Error> {
    match format {
        Format::Text => out!("{text}"),
        Format::Json => outln!("{json:#}"),
    }
    Ok(())
}

/// Run `fit height`.
pub fn run_height(a: HeightArgs) -> Result<(), Error> {
    let spec = HeightSpec {
        path: a.data.clone(),
        form: match a.form {
            HeightFormArg::ChapmanRichards => HeightForm::ChapmanRichards,
            HeightFormArg::Naslund => HeightForm::Naslund,
            HeightFormArg::LogReciprocal => HeightForm::LogReciprocal,
        },
        dbh: a.dbh,
        height: a.height,
        by: a.by,
        filter: a
            .filter
            .as_deref()
            .map(str::parse::<RowFilter>)
            .transpose()?,
        start: a.start,
        units: units(a.units),
    };
    let fit = fit_height(&spec)?;
    if let Some(p) = &a.out {
        super::out::distinct(p, &[&a.data])?;
        stemcast::atomic::write_atomic(p, fit.model.to_toml()?.as_bytes())?;
    }
    let source = a.data.display().to_string();
    print(
        a.format,
        hd_summary::height_text(&fit, &source),
        hd_summary::height_json(&fit),
    )?;
    Ok(())
}

/// Run `fit volume`.
pub fn run_volume(a: VolumeArgs) -> Result<(), Error> {
    let spec = VolumeSpec {
        path: a.data.clone(),
        form: match a.form {
            VolumeFormArg::Combined => VolumeForm::Combined,
            VolumeFormArg::Logarithmic => VolumeForm::Logarithmic,
        },
        dbh: a.dbh,
        height: a.height,
        volume: a.volume,
        units: units(a.units),
    };
    let fit = fit_volume(&spec)?;
    if let Some(p) = &a.out {
        super::out::distinct(p, &[&a.data])?;
        stemcast::atomic::write_atomic(p, fit.model.to_toml()?.as_bytes())?;
    }
    let source = a.data.display().to_string();
    print(
        a.format,
        hd_summary::volume_text(&fit, &source),
        hd_summary::volume_json(&fit),
    )?;
    Ok(())
}
