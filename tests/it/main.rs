//! The integration tests: one binary, one module per topic.
#[path = "../common/mod.rs"]
mod common;
mod histories;
