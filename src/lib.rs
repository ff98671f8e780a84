//! stemcast: fit periodic tree survival and diameter-growth models from remeasured plots, and
//! chain them into Monte Carlo and expected-value stand projections.
//!
//! The library never prints and never exits; the `stemcast` binary is a thin layer over it.
//! Layers point one way (docs/architecture.md): [`data`] reads CSV files into validated
//! columns and tree lists, [`model`] fits, stores and compiles models, [`scenario`] reads
//! projection scenarios, [`project`] runs them, [`report`] writes results; [`fit`] holds the
//! fitting pipelines behind the `fit` commands.
//!
//! # Example
//!
//! Fit a survival and a growth model from a remeasurement CSV, build a scenario in code (no
//! files), project it by Monte Carlo and read the 90 % band of stems per hectare at year 20:
//!
//! ```
//! use stemcast::{fit_growth, fit_survival, run_scenario, GrowthSpec, Metric, Model, RunOptions,
//!                Scenario, SurvivalSpec};
//!
//! // The invented planting trial bundled with the demo (scenarios/README.md).
//! let survival = fit_survival(&SurvivalSpec::new("scenarios/trial.csv", "dbh, bal, treatment"))?;
//! let growth = fit_growth(&GrowthSpec::new("scenarios/trial.csv", "ln(dbh), bal, treatment"))?;
//! assert!(survival.glm.converged);
//!
//! let survival = Model::from_file(survival.model, "survival")?;
//! let growth = Model::from_file(growth.model, "growth")?;
//! let scenario = Scenario::with_models(
//!     r#"
//!     name = "released"
//!     horizon_years = 20
//!     step_years = 5
//!     replicates = 200
//!     seed = 7
//!     [models]
//!     survival = "s"
//!     growth = "g"
//!     [cohort]
//!     stems_per_ha = 1600
//!     records = 200
//!     dbh = { distribution = "lognormal", median = 8.0, gsd = 1.4 }
//!     attributes = { treatment = "released" }
//!     "#,
//!     &[("s", &survival), ("g", &growth)],
//! )?;
//! let result = run_scenario(&scenario, &RunOptions::default())?;
//! let year20 = result.years.iter().find(|y| y.year == 20.0).expect("year 20 is an output");
//! let band = year20.get(Metric::StemsPerHa);
//! let (low, high) = (band.p05.unwrap_or(0.0), band.p95.unwrap_or(0.0));
//! assert!(0.0 < low && low <= high && high <= 1600.0);
//! # Ok::<(), stemcast::Error>(())
//! ```

#![warn(missing_docs)]

pub mod atomic;
pub mod data;
pub mod demo;
pub mod error;
pub mod fit;
pub mod model;
pub mod project;
pub mod report;
pub mod scenario;
pub mod tolerance;

pub use data::{
    read_table, read_tree_lists, ColumnNames, Outcome, TreeList, TreeListSpec, TreeListStream,
    Units,
};
pub use error::Error;
pub use fit::growth::{fit_growth, GrowthFit, GrowthSpec, GrowthTarget};
pub use fit::survival::{
    fit_survival, fit_survival_with, FitOptions, SurvivalFit, SurvivalResponse, SurvivalSpec,
};
pub use fit::{DataOptions, Years};
pub use model::file::{GrowthResponse, IntervalKind, ModelFile};
pub use model::link::Link;
pub use model::stored::Model;
pub use project::{
    check, run_batch, run_scenario, BatchOptions, Driver, Metric, ProjectionResult, RunOptions,
    Summary,
};
pub use scenario::Scenario;
