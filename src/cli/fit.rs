//! `stemcast fit survival` and `stemcast fit growth` (`fit height` and `fit volume` are in
//! `fit_height.rs`).

use std::path::{Path, PathBuf};

use clap::Subcommand;
use stemcast::data::flags_csv;
use stemcast::fit::estimate::Estimator;
use stemcast::fit::growth::{fit_growth_with, GrowthSpec, GrowthTarget};
use stemcast::fit::growth_mixed::{GrowthOptions, GrowthPlotEffect};
use stemcast::fit::mixed::SurvivalPlotEffect;
use stemcast::fit::source::Screening;
use stemcast::fit::summary;
use stemcast::fit::survival::{fit_survival_with, FitOptions, SurvivalResponse, SurvivalSpec};
use stemcast::model::file::{GrowthResponse, ModelFile};
use stemcast::model::mixed::LmmMethod;
use stemcast::Error;

use super::fit_args::{
    control, data_options, survival_spec, years, Format, GrowthArgs, LmmMethodArg, ResponseArg,
    SurvivalArgs,
};

/// Which model to fit.
#[derive(Debug, Subcommand)]
pub enum FitCommand {
    /// Fit a periodic survival model: binomial GLM of the tree status at the second
    /// measurement (or grouped successes/trials) on predictor terms.
    Survival(SurvivalArgs),
    /// Fit a diameter-growth model: least squares on ln(basal-area increment), the annual
    /// diameter increment, or a given column.
    Growth(GrowthArgs),
    /// Fit a height–diameter curve (Chapman–Richards, Näslund or log-reciprocal) by
    /// nonlinear least squares, for all trees or per level of a column such as species.
    Height(super::fit_height::HeightArgs),
    /// Fit a volume equation (combined variable on D²H, or logarithmic) by least squares.
    Volume(super::fit_height::VolumeArgs),
    /// Fit an ingrowth model from a plot-period table: logistic regression for any new tree
    /// in the period and a zero-truncated negative binomial (or Poisson) count given any.
    Ingrowth(Box<super::fit_ingrowth::IngrowthArgs>),
}

fn write_model(path: &Option<PathBuf>, model: &ModelFile, input: &Path) -> Result<(), Error> {
    if let Some(p) = path {
        super::out::distinct(p, &[input])?;
        stemcast::atomic::write_atomic(p, model.to_toml()?.as_bytes())?;
    }
    Ok(())
}

/// Write the screening flags to `--screen FILE`, when given.
pub(crate) fn write_screen(path: &Option<PathBuf>, screening: &Screening) -> Result<(), Error> {
    if let Some(p) = path {
        stemcast::atomic::write_atomic(p, flags_csv(&screening.flags).as_bytes())?;
    }
    Ok(())
}

fn print(format: Format, text: String, json: serde_json::Value) -> Result<(), Error> {
    match format {
        Format::Text => out!("{text}"),
        Format::Json => outln!("{json:#}"),
    }
    Ok(())
}

fn survival(a: SurvivalArgs) -> Result<(), Error> {
    let spec = survival_spec(&a.common.data, &a.model, a.common.predictors.clone())?;
    let opts = FitOptions {
        estimator: if a.firth {
            Estimator::Firth
        } else {
            Estimator::MaximumLikelihood
        },
        cluster: a.cluster.clone(),
        dbh_classes: a.dbh_classes.clone(),
        curves: a.calibration_svg.is_some(),
        control: control(&a.model),
        plot_effect: a
            .plot_effect
            .column(&a.common.data)
            .map(|plot| SurvivalPlotEffect {
                plot,
                nodes: a.quadrature as usize,
            }),
    };
    if a.calibration_svg.is_some() {
        check_svg_possible(&spec)?;
    }
    let fit = fit_survival_with(&spec, &opts)?;
    let svg = match &a.calibration_svg {
        Some(_) => Some(stemcast::fit::chart::calibration_svg(&fit)?),
        None => None,
    };
    if let (Some(path), Some(svg)) = (&a.calibration_svg, svg) {
        stemcast::atomic::write_atomic(path, svg.as_bytes())?;
    }
    write_model(&a.common.out, &fit.model, &a.common.data.data)?;
    write_screen(&a.common.data.input.screen, &fit.screening)?;
    let source = a.common.data.data.display().to_string();
    print(
        a.common.format,
        summary::survival_text(&fit, &source),
        summary::survival_json(&fit),
    )?;
    Ok(())
}

/// Refuse `--calibration-svg` before fitting when the chart cannot be drawn.
fn check_svg_possible(spec: &SurvivalSpec) -> Result<(), Error> {
    if !stemcast::fit::source::has_column(&spec.data, &spec.data.names.dbh) {
        return Err(Error::Usage(format!(
            "--calibration-svg: {} has no diameter column `{}` (name it with --dbh COL)",
            spec.data.path.display(),
            spec.data.names.dbh
        )));
    }
    if matches!(spec.response, SurvivalResponse::Counts { .. }) || spec.weights.is_some() {
        return Err(Error::Usage(
            "--calibration-svg needs one 0/1 outcome per record with unit weight (not --successes/--trials or --weights)".into(),
        ));
    }
    Ok(())
}

/// Run `fit survival` or `fit growth`.
pub fn run(cmd: FitCommand) -> Result<(), Error> {
    match cmd {
        FitCommand::Survival(a) => survival(a)?,
        FitCommand::Height(a) => super::fit_height::run_height(a)?,
        FitCommand::Volume(a) => super::fit_height::run_volume(a)?,
        FitCommand::Ingrowth(a) => super::fit_ingrowth::run(&a)?,
        FitCommand::Growth(a) => {
            let target = match &a.response_col {
                Some(c) => GrowthTarget::Column(c.clone()),
                None => GrowthTarget::Increment(match a.response {
                    ResponseArg::LnBai => GrowthResponse::LnBai,
                    ResponseArg::AnnualIncrement => GrowthResponse::AnnualIncrement,
                }),
            };
            let spec = GrowthSpec {
                data: data_options(&a.common.data, a.status.as_deref(), a.dbh2.as_deref())?,
                predictors: a.common.predictors.clone(),
                target,
                years: years(&a.common.data),
            };
            let opts = GrowthOptions {
                cluster: a.cluster.clone(),
                plot_effect: a
                    .plot_effect
                    .column(&a.common.data)
                    .map(|plot| GrowthPlotEffect {
                        plot,
                        method: match a.method {
                            LmmMethodArg::Reml => LmmMethod::Reml,
                            LmmMethodArg::Ml => LmmMethod::Ml,
                        },
                    }),
            };
            let fit = fit_growth_with(&spec, &opts)?;
            write_model(&a.common.out, &fit.model, &a.common.data.data)?;
            write_screen(&a.common.data.input.screen, &fit.screening)?;
            let source = a.common.data.data.display().to_string();
            print(
                a.common.format,
                summary::growth_text(&fit, &source),
                summary::growth_json(&fit),
            )?;
        }
    }
    Ok(())
}
