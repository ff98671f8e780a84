//! `stemcast fit survival` and `stemcast fit growth`.

use std::path::PathBuf;

use clap::Subcommand;
use stemcast::fit::estimate::Estimator;
use stemcast::fit::growth::{fit_growth_with, GrowthSpec, GrowthTarget};
use stemcast::fit::growth_mixed::{GrowthOptions, GrowthPlotEffect};
use stemcast::fit::mixed::SurvivalPlotEffect;
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
}

fn write_model(path: &Option<PathBuf>, model: &ModelFile) -> Result<(), Error> {
    if let Some(p) = path {
        stemcast::atomic::write_atomic(p, model.to_toml()?.as_bytes())?;
    }
    Ok(())
}

fn print(format: Format, text: String, json: serde_json::Value) {
    match format {
        Format::Text => print!("{text}"),
        Format::Json => println!("{json:#}"),
    }
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
    write_model(&a.common.out, &fit.model)?;
    let source = a.common.data.data.display().to_string();
    print(
        a.common.format,
        summary::survival_text(&fit, &source),
        summary::survival_json(&fit),
    );
    Ok(())
}

/// Refuse `--calibration-svg` before fitting when the chart cannot be drawn.
fn check_svg_possible(spec: &SurvivalSpec) -> Result<(), Error> {
    if !stemcast::fit::file_has_column(&spec.data.path, &spec.data.names.dbh) {
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
        FitCommand::Growth(a) => {
            let target = match &a.response_col {
                Some(c) => GrowthTarget::Column(c.clone()),
                None => GrowthTarget::Increment(match a.response {
                    ResponseArg::LnBai => GrowthResponse::LnBai,
                    ResponseArg::AnnualIncrement => GrowthResponse::AnnualIncrement,
                }),
            };
            let spec = GrowthSpec {
                data: data_options(&a.common.data, Some(&a.status), Some(&a.dbh2))?,
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
            write_model(&a.common.out, &fit.model)?;
            let source = a.common.data.data.display().to_string();
            print(
                a.common.format,
                summary::growth_text(&fit, &source),
                summary::growth_json(&fit),
            );
        }
    }
    Ok(())
}
