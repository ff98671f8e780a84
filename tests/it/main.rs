//! The integration tests: one binary, one module per topic.
#[path = "../common/mod.rs"]
mod common;
mod ingrowth_cli;
mod ingrowth_model_file;
mod ingrowth_own;
mod ingrowth_recovery;
mod ingrowth_reference;
