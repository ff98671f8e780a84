//! The integration tests: one binary, one module per topic (rebuilds link the crate once).

#[path = "../common/browser.rs"]
mod browser;
#[path = "../common/mod.rs"]
mod common;
#[path = "../glm_common/fit1m.rs"]
mod fit1m;
#[path = "../glm_common/mod.rs"]
mod glm_common;
#[path = "../project_common/mod.rs"]
mod project_common;

mod batch_api;
mod batch_cli;
mod batch_safety;
mod cli_demo;
mod cli_fit_columns;
mod cli_fit_errors;
mod cli_fit_judge_errors;
mod compare_cli;
mod compare_pairing;
mod data_covariates;
mod data_remeasure;
mod data_status;
mod data_table;
mod data_trees;
mod demo_recovery;
mod glm_annualized;
mod glm_annualized_recovery;
mod glm_diagnostics;
mod glm_edge;
mod glm_firth;
mod glm_iterations;
mod glm_properties;
mod glm_reference;
mod glm_robust;
mod harden_limits;
mod harden_model;
mod harden_output;
mod hd_height;
mod hd_height_cli;
mod hd_volume;
mod histories;
mod imperial_trees;
mod ingrowth_cli;
mod ingrowth_history;
mod ingrowth_model_file;
mod ingrowth_own;
mod ingrowth_recovery;
mod ingrowth_reference;
mod judge_annualized;
mod judge_covariance;
mod judge_curves;
mod judge_diagnostics;
mod judge_firth;
mod layers;
mod mixed_cli;
mod mixed_glmm;
mod mixed_lmm;
mod mixed_options;
mod mixed_properties;
mod mixed_support;
mod model_file;
mod ols_reference;
mod project_actions;
mod project_actions_limit;
mod project_actions_targets;
mod project_bal;
mod project_outputs;
mod project_random;
mod project_statistics;
mod project_w2;
mod rank_cli;
mod report_browser;
mod scenario_cohort;
mod scenario_errors;
mod slurm;
mod species_actions;
mod species_cohort;
mod terms_design;
mod validate;
