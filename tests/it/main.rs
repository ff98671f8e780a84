//! The integration tests: one binary, one module per topic.
#[path = "../common/mod.rs"]
mod common;
mod mixed_cli;
mod mixed_glmm;
mod mixed_lmm;
mod mixed_options;
mod mixed_properties;
mod mixed_support;
